"""Gallery step, third part: run a validated config in parallel processes, with progress and the cache.

A run has two phases.  First every distinct surface and level that the outputs
need is made once (or loaded from the cache) — in parallel, one task per cache
key.  Then every output is drawn, in parallel, from what the cache now holds,
and written with its report beside it; last, the index page.  So outputs that
share a surface share its computation, and a second run after a change of style
(colour map, view, size) only draws.

Before any work, each output is checked: one whose record says it was made from
the same inputs and whose files are intact is left alone
(:mod:`orbitalrender.gallery.records`); for the others the memory of every step is
estimated as the commands do, and an output that would not fit fails at once.

Workers are separate processes started by ``forkserver`` (``spawn`` where that
is not available), never by ``fork``, so no state of the caller leaks into them.
With ``jobs=1`` everything runs in the calling process.  A worker that dies
(killed, out of memory) costs only its tasks: the unfinished tasks run again in
new workers, and after a second loss one at a time, each in a worker of its own,
so that a task that ends its worker every time fails alone and is reported.  An
interrupt (Ctrl-C, SIGINT) or any other exception stops the workers at once
(SIGTERM, then SIGKILL after :data:`_STOP_SECONDS`) and removes their temporary
files before it is passed on.

Progress goes to a text stream (stderr from the command line): on a terminal one
line redrawn in place, ``[#####-----] 5/10 drawing shell3``; elsewhere one line
per finished item, so logs stay readable.
"""

from __future__ import annotations

import contextlib
import json
import multiprocessing
import os
import signal
import time
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO

from ..atomic import check_outputs_inside, check_writable
from ..lattice.memory import MemoryLimitError
from .cache import DEFAULT_LIMIT_BYTES, CacheStats, DiskCache, file_sha256
from .config import GalleryConfig, OutputSpec, load_config
from .options import CACHE_FOLDER, default_jobs
from .produce import (
    INDEX_FOLDER,
    Caps,
    OutputRecord,
    Request,
    check_memory,
    make_output,
    make_request,
    requests_for,
)
from .records import output_key, read_record, record_path, write_record
from .store import evict, open_folder, output_folder, scratch_folder

__all__ = ["OutputRecord", "GalleryResult", "run_gallery", "default_jobs", "CACHE_FOLDER"]

#: Width of the progress bar, characters.
_BAR_WIDTH = 24
#: How long stopped workers get to end on SIGTERM before SIGKILL, s (our choice: well
#: inside the 2 s in which an interrupted command should be back at the prompt).
_STOP_SECONDS = 0.5
#: Pool losses after which the unfinished tasks run one at a time in workers of their own.
_SHARED_ATTEMPTS = 2
_LOST = ("the worker process making it ended unexpectedly (killed by a signal or out of memory), "
         "also when run again alone")


@dataclass(frozen=True)
class GalleryResult:
    """The outcome of :func:`run_gallery`: records, cache counts, the index page, time.

    ``stats.notes`` holds one line for each thing worth a warning (a damaged cache entry
    discarded, a worker process lost and its tasks run again).
    """

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
    """Headless drawing; import the drawing code once per worker, not once per task.  The
    main process alone answers an interrupt (it stops the workers), so workers ignore SIGINT.

    A worker's own default start method is set to ``spawn``: numba guards the start of its
    threading layer with a lock shared between processes whenever that method contains
    "fork", which "forkserver" does, and that lock is a named semaphore; a worker stopped
    by a signal leaves it behind, and multiprocessing's resource tracker then prints a
    two-line warning about leaked semaphores after the user's one line.  A worker starts
    no processes, and its threads are started after it was forked, so it needs no such lock.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    multiprocessing.set_start_method("spawn", force=True)
    os.environ.setdefault("MPLBACKEND", "Agg")
    from . import produce  # noqa: F401


def _context():
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


@dataclass
class _Workers:
    """The worker processes of a run: a pool made on first use and again after a loss."""

    count: int
    pool: ProcessPoolExecutor | None = None
    losses: int = 0

    def get(self) -> ProcessPoolExecutor:
        if self.pool is None:
            self.pool = ProcessPoolExecutor(max_workers=self.count, mp_context=_context(),
                                            initializer=_init_worker)
        return self.pool

    def lost(self) -> None:
        """The pool broke (a worker died): drop it; the next `get` makes a new one."""
        self.losses += 1
        self.stop()

    def close(self) -> None:
        if self.pool is not None:
            self.pool.shutdown(wait=True)
            self.pool = None

    def stop(self) -> None:
        """End the workers now: SIGTERM, then SIGKILL after _STOP_SECONDS."""
        pool, self.pool = self.pool, None
        if pool is None:
            return
        # ProcessPoolExecutor has no public way to end its workers before Python 3.14
        # (terminate_workers); its process table is the only handle on them
        procs = list((getattr(pool, "_processes", None) or {}).values())
        for proc in procs:
            with contextlib.suppress(OSError, ValueError, AttributeError):
                proc.terminate()
        pool.shutdown(wait=False, cancel_futures=True)
        deadline = time.monotonic() + _STOP_SECONDS
        for proc in procs:
            with contextlib.suppress(OSError, ValueError, AttributeError, AssertionError):
                proc.join(max(0.0, deadline - time.monotonic()))
                if proc.is_alive():
                    proc.kill()
                    proc.join(_STOP_SECONDS)


@dataclass
class _Tasks:
    """Tasks of one phase: (label, args) for `fn`, and what stands for a result lost with its worker."""

    items: list[tuple[str, tuple]]
    fn: object
    describe: object
    lost_result: object
    results: list = field(default_factory=list)


def _round(tasks: _Tasks, indices: list[int], pool: ProcessPoolExecutor, progress: _Progress) -> list[int]:
    """Run tasks `indices` in `pool`; returns those left unfinished because the pool broke."""
    pending: dict[Future, int] = {}
    unsent = list(indices)
    try:
        while unsent:
            pending[pool.submit(tasks.fn, *tasks.items[unsent[0]][1])] = unsent[0]
            unsent.pop(0)
    except BrokenProcessPool:
        pass
    if pending:
        progress.start(tasks.items[indices[0]][0])
    lost: list[int] = []
    while pending:
        done, _ = wait(pending, return_when=FIRST_COMPLETED)
        for fut in done:
            i = pending.pop(fut)
            try:
                tasks.results[i] = fut.result()
            except BrokenProcessPool:
                lost.append(i)
                continue
            progress.finish(tasks.describe(tasks.results[i], tasks.items[i][0]))
    return sorted(lost + unsent)


def _run_all(tasks: _Tasks, workers: _Workers | None, progress: _Progress, stats: CacheStats) -> list:
    """fn(*args) for every task, in the workers (or inline when None); results in task order."""
    tasks.results = [None] * len(tasks.items)
    if workers is None:
        for i, (label, args) in enumerate(tasks.items):
            progress.start(label)
            tasks.results[i] = tasks.fn(*args)
            progress.finish(tasks.describe(tasks.results[i], label))
        return tasks.results
    todo = list(range(len(tasks.items)))
    attempts = 0
    while todo and attempts < _SHARED_ATTEMPTS:
        todo = _round(tasks, todo, workers.get(), progress)
        attempts += 1
        if todo:
            workers.lost()
            stats.note(f"a worker process ended unexpectedly (killed by a signal or out of memory); "
                       f"{len(todo)} unfinished task(s) of the {progress.phase} phase were run again")
    for i in todo:  # one at a time, each in a worker of its own, so a task that kills it fails alone
        alone = _Workers(1)
        try:
            if _round(tasks, [i], alone.get(), progress):
                tasks.results[i] = tasks.lost_result(tasks.items[i])
                progress.finish(tasks.describe(tasks.results[i], tasks.items[i][0]))
        finally:
            alone.stop()
    return tasks.results


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


def _output_label(spec: OutputSpec) -> str:
    """The file, and the output's name too where the file is not simply named after it."""
    return spec.file if Path(spec.file).stem == spec.name else f"{spec.name} ({spec.file})"


def _describe_output(result: tuple[OutputRecord, CacheStats], label: str) -> str:
    record = result[0]
    if record.error:
        return f"{label} FAILED: {record.error}"
    return f"{label} ({record.seconds:.1f} s)"


def _lost_request(item: tuple[str, tuple]) -> tuple[CacheStats, float, str]:
    return CacheStats(), 0.0, "failed: " + _LOST


def _lost_output(item: tuple[str, tuple]) -> tuple[OutputRecord, CacheStats]:
    spec, out = item[1][0], item[1][1]
    return OutputRecord(spec, out / spec.file, out / spec.report_file, None, 0.0, _LOST), CacheStats()


def _written_files(spec: OutputSpec) -> list[str]:
    """Every file a run may write for `spec`, relative to the output folder."""
    thumb = f"{INDEX_FOLDER}/{spec.file}"
    return [spec.file, spec.report_file, thumb + ".png", thumb + ".record.json"]


def _field_sha256(spec: OutputSpec) -> str | None:
    return file_sha256(spec.options["field"]) if "field" in spec.options else None


def _kept(spec: OutputSpec, out: Path, key: str) -> OutputRecord | None:
    """The record of `spec` if its files were made before with `key` and are intact."""
    found = read_record(record_path(out, INDEX_FOLDER, spec), key, out)
    if found is None:
        return None
    thumb = out / INDEX_FOLDER / (spec.file + ".png")
    try:
        report = json.loads((out / spec.report_file).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return OutputRecord(spec, out / spec.file, out / spec.report_file,
                        thumb if f"{INDEX_FOLDER}/{spec.file}.png" in found["files"] else None, 0.0,
                        report=report)


def _plan(config: GalleryConfig, out: Path, caps: Caps, reuse: bool,
          stats: CacheStats) -> tuple[dict[int, OutputRecord], list[OutputSpec], dict[str, str]]:
    """Before any work: outputs kept as they are, those refused by the memory estimate
    (both by config position), the outputs to make, and the output keys."""
    settled: dict[int, OutputRecord] = {}
    todo: list[OutputSpec] = []
    keys: dict[str, str] = {}
    for i, spec in enumerate(config.outputs):
        keys[spec.name] = output_key(spec, (caps.resolution, caps.size_px), _field_sha256(spec))
        kept = _kept(spec, out, keys[spec.name]) if reuse else None
        if kept is not None:
            settled[i] = kept
            stats.kept += 1
            continue
        try:
            check_memory(spec, caps)
        except MemoryLimitError as exc:
            settled[i] = OutputRecord(spec, out / spec.file, out / spec.report_file, None, 0.0,
                                      str(exc), True)
            continue
        todo.append(spec)
    return settled, todo, keys


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
    files = [f for spec in config.outputs for f in _written_files(spec)] + ["index.html"]
    with contextlib.ExitStack() as stack:
        clean_outputs = stack.enter_context(output_folder(out, INDEX_FOLDER, files))
        if use_cache:
            folder = open_folder(cache_dir if cache_dir is not None else out / CACHE_FOLDER)
            stack.callback(folder.close)
            cache = DiskCache(folder.folder, cache_limit_bytes)
        else:
            folder = None
            cache = DiskCache(stack.enter_context(scratch_folder()), cache_limit_bytes)
        settled, todo, keys = _plan(config, out, caps, use_cache, stats)
        if settled and progress is not None:
            kept = sum(1 for r in settled.values() if r.error is None)
            if kept:
                progress.write(f"{kept} of {len(config.outputs)} outputs unchanged since they were "
                               "made (same inputs, files intact): kept\n")
        requests: dict[str, tuple[str, Request]] = {}
        for spec in todo:
            for req in requests_for(spec, caps):
                requests.setdefault(req.key, (f"{req.what} for {spec.name}", req))
        # the costliest first, so that a long one does not start last and run alone
        ordered = sorted(requests.values(), key=lambda item: -_cost(item[1]))
        count = min(jobs, max(len(requests), len(todo)))
        workers = _Workers(count) if count > 1 else None
        try:
            prep = _Progress(progress, len(requests), "preparing")
            for result in _run_all(_Tasks([(label, (req, cache)) for label, req in ordered],
                                          make_request, _describe_request, _lost_request),
                                   workers, prep, stats):
                stats.merge(result[0])
            draw = _Progress(progress, len(todo), "drawing")
            made = _run_all(_Tasks([(_output_label(spec), (spec, out, cache, caps)) for spec in todo],
                                   make_output, _describe_output, _lost_output), workers, draw, stats)
        except BaseException:
            # an interrupt or a fault: no worker may go on writing, and none of their files stay
            if workers is not None:
                workers.stop()
            if _Progress(progress, 0, "").tty:
                progress.write("\n")  # end the progress bar's line before the message that follows
            clean_outputs()
            if folder is not None:
                folder.clean_if_alone()
            raise
        if workers is not None:
            workers.close()
            if workers.losses:  # a killed worker's temporaries: no worker of this run is left
                clean_outputs()
                if folder is not None:
                    folder.clean_if_alone()
        for record, counts in made:
            stats.merge(counts)
            if record.error is None:
                written = [record.path, record.report_path] + ([record.thumbnail] if record.thumbnail else [])
                write_record(record_path(out, INDEX_FOLDER, record.spec), keys[record.spec.name], out,
                             written)
        settled.update(zip((spec.index for spec in todo), (r for r, _ in made)))
        records = tuple(settled[i] for i in sorted(settled))
        if use_cache:
            evict(cache.folder, cache.limit_bytes)
        from .index import write_index
        index = write_index(config, out, records, stats)
    return GalleryResult(config, out, records, stats, index, time.perf_counter() - t0)
