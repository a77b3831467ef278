"""Gallery step, third part: run a validated config in parallel processes, with progress and the cache.

A run has two phases.  First every distinct surface and level that the outputs
need is made once (or loaded from the cache) — in parallel, one task per cache
key.  Then every output is drawn, in parallel, from what the cache now holds,
and written with its report beside it; last, the index page.  So outputs that
share a surface share its computation, and a second run after a change of style
(colour map, view, size) only draws.

Workers are separate processes started by ``forkserver`` (``spawn`` where that
is not available), never by ``fork``, so no state of the caller leaks into them.
With ``jobs=1`` everything runs in the calling process.

Progress goes to a text stream (stderr from the command line): on a terminal one
line redrawn in place, ``[#####-----] 5/10 drawing shell3``; elsewhere one line
per finished item, so logs stay readable.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import tempfile
import time
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from dataclasses import dataclass
from pathlib import Path
from typing import IO

from ..atomic import check_outputs_inside, check_writable
from .cache import DEFAULT_LIMIT_BYTES, CacheStats, DiskCache, evict
from .config import GalleryConfig, load_config
from .options import CACHE_FOLDER, default_jobs
from .produce import Caps, OutputRecord, Request, make_output, make_request, requests_for

__all__ = ["OutputRecord", "GalleryResult", "run_gallery", "default_jobs", "CACHE_FOLDER"]

#: Width of the progress bar, characters.
_BAR_WIDTH = 24


@dataclass(frozen=True)
class GalleryResult:
    """The outcome of :func:`run_gallery`: records, cache counts, the index page, time."""

    config: GalleryConfig
    out_dir: Path
    records: tuple[OutputRecord, ...]
    stats: CacheStats
    index_path: Path
    seconds: float

    @property
    def failed(self) -> tuple[OutputRecord, ...]:
        return tuple(r for r in self.records if r.error is not None)


@dataclass
class _Progress:
    stream: IO[str] | None
    total: int
    phase: str
    done: int = 0

    @property
    def tty(self) -> bool:
        return bool(self.stream is not None and getattr(self.stream, "isatty", lambda: False)())

    def start(self, text: str) -> None:
        if self.tty:
            self._bar(text)

    def finish(self, text: str) -> None:
        self.done += 1
        if self.stream is None:
            return
        if self.tty:
            self._bar(text)
            if self.done == self.total:
                self.stream.write("\n")
        else:
            self.stream.write(f"[{self.done}/{self.total}] {self.phase}: {text}\n")
        self.stream.flush()

    def _bar(self, text: str) -> None:
        filled = round(_BAR_WIDTH * self.done / max(self.total, 1))
        line = f"[{'#' * filled}{'-' * (_BAR_WIDTH - filled)}] {self.done}/{self.total} {self.phase} {text}"
        self.stream.write("\r" + line[:119].ljust(119))
        self.stream.flush()


def _init_worker() -> None:
    """Headless drawing; import the drawing code once per worker, not once per task."""
    os.environ.setdefault("MPLBACKEND", "Agg")
    from . import produce  # noqa: F401


def _context():
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


def _run_all(tasks: list[tuple[str, tuple]], fn, pool: ProcessPoolExecutor | None,
             progress: _Progress, describe) -> list:
    """fn(*args) for every task, in `pool` (or inline when it is None); results in task order."""
    results: list = [None] * len(tasks)
    if pool is None:
        for i, (label, args) in enumerate(tasks):
            progress.start(label)
            results[i] = fn(*args)
            progress.finish(describe(results[i], label))
        return results
    pending: dict[Future, int] = {pool.submit(fn, *args): i for i, (_, args) in enumerate(tasks)}
    if tasks:
        progress.start(tasks[0][0])
    while pending:
        done, _ = wait(pending, return_when=FIRST_COMPLETED)
        for fut in done:
            i = pending.pop(fut)
            results[i] = fut.result()
            progress.finish(describe(results[i], tasks[i][0]))
    return results


def _cost(req: Request) -> int:
    """Rough rank of the work a request needs: several centres need the 3D quadrature for
    the level (the slowest step), mixed m a 2D one, the rest a 1D one; a user field first."""
    state = req.state
    if state is None:
        return 4
    if not state.is_single_centre:
        return 3
    return 2 if len({t.m for t in state.terms}) > 1 else 1


def _describe_request(result, label: str) -> str:
    _, seconds, how = result
    return f"{label} ({how}, {seconds:.1f} s)"


def _describe_output(result: tuple[OutputRecord, CacheStats], label: str) -> str:
    record = result[0]
    if record.error:
        return f"{label} FAILED: {record.error}"
    return f"{label} -> {record.spec.file} ({record.seconds:.1f} s)"


def run_gallery(config: GalleryConfig | str | os.PathLike, out_dir: str | os.PathLike,
                jobs: int | None = None, use_cache: bool = True,
                cache_dir: str | os.PathLike | None = None,
                cache_limit_bytes: int = DEFAULT_LIMIT_BYTES,
                resolution_cap: int | None = None, size_cap_px: int | None = None,
                progress: IO[str] | None = None) -> GalleryResult:
    """Make every output of a gallery config, with reports, thumbnails and ``index.html``.

    Parameters
    ----------
    config : GalleryConfig or path
        A validated config, or the path of a TOML file (validated first; nothing is
        written if it is invalid).
    out_dir : path
        Output folder, created if missing.  Outputs go to their ``file`` names in it,
        reports beside them (``FILE.json``), the index page to ``index.html``.
    jobs : int, optional
        Worker processes; default min(2, cores).  1 runs everything in this process.
    use_cache : bool
        False: use a temporary cache for this run only (shared work is still done once).
    cache_dir : path, optional
        Cache folder; default ``OUT_DIR/.cache``.
    cache_limit_bytes : int
        Size bound of the cache folder (least recently used entries are removed).
    resolution_cap, size_cap_px : int, optional
        Upper bounds on every lattice resolution (and section pixel count) and on every
        picture side in pixels, for quick drafts; the reports record the values used.
    progress : text stream, optional
        Where progress lines go (None: silent).

    Returns
    -------
    GalleryResult
        Failed outputs are listed in ``result.failed`` (the others are complete).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> cfg = pathlib.Path(tempfile.mkdtemp()) / "g.toml"
    >>> _ = cfg.write_text('[[outputs]]\\nname = "p2"\\nkind = "radial"\\nstates = ["2pz"]\\n')
    >>> res = run_gallery(cfg, cfg.parent / "out", jobs=1)
    >>> [r.spec.file for r in res.records], res.failed, res.index_path.name
    (['p2.png'], (), 'index.html')
    """
    t0 = time.perf_counter()
    if not isinstance(config, GalleryConfig):
        config = load_config(config)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise NotADirectoryError(f"the output folder {out} is a file, not a folder")
    out.mkdir(parents=True, exist_ok=True)
    check_writable(out / "index.html")
    check_outputs_inside(out, ["index.html"] + [name for spec in config.outputs
                                                for name in (spec.file, spec.report_file)])
    jobs = default_jobs() if jobs is None else int(jobs)
    if jobs < 1:
        raise ValueError(f"jobs must be at least 1, got {jobs}")
    caps = Caps(resolution=resolution_cap, size_px=size_cap_px)
    stats = CacheStats()
    with contextlib.ExitStack() as stack:
        scratch = stack.enter_context(tempfile.TemporaryDirectory(prefix="orbitalrender-cache-"))
        folder = Path(cache_dir) if cache_dir is not None else out / CACHE_FOLDER
        cache = DiskCache(folder if use_cache else Path(scratch), cache_limit_bytes)
        cache.folder.mkdir(parents=True, exist_ok=True)

        requests: dict[str, tuple[str, Request]] = {}
        for spec in config.outputs:
            for req in requests_for(spec, caps):
                requests.setdefault(req.key, (f"{req.what} for {spec.name}", req))
        # the costliest first, so that a long one does not start last and run alone
        ordered = sorted(requests.values(), key=lambda item: -_cost(item[1]))
        workers = min(jobs, max(len(requests), len(config.outputs)))
        pool = None if workers <= 1 else stack.enter_context(
            ProcessPoolExecutor(max_workers=workers, mp_context=_context(), initializer=_init_worker))
        prep = _Progress(progress, len(requests), "preparing")
        for result in _run_all([(label, (req, cache)) for label, req in ordered],
                               make_request, pool, prep, _describe_request):
            stats.merge(result[0])

        draw = _Progress(progress, len(config.outputs), "drawing")
        records = _run_all([(spec.name, (spec, out, cache, caps)) for spec in config.outputs],
                           make_output, pool, draw, _describe_output)
        for _, counts in records:
            stats.merge(counts)
        if use_cache:
            evict(cache)
    from .index import write_index
    records = tuple(r for r, _ in records)
    index = write_index(config, out, records, stats)
    return GalleryResult(config, out, records, stats, index, time.perf_counter() - t0)

