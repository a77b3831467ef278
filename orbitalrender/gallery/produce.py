"""Gallery step, the work itself: what each output kind needs from the cache, and how it is drawn and written.

:func:`requests_for` lists the surfaces and levels an output needs (each a
:class:`Request` named by its cache key); :func:`make_request` makes one of them
in a worker; :func:`make_output` draws and writes one output, its JSON report
and its thumbnail, taking surfaces and levels from the cache.  Every kind calls
the same job as its command (:mod:`orbitalrender.jobs`: ``figure`` and ``layout``
-> ``figure_job``, ``section_job``, ``radial_job``, ``mesh_job``) with the options
dataclass built from its keys, so a gallery output and the command's output agree.
"""

from __future__ import annotations

import contextlib
import time
import traceback
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ..errors import UserInputError
from ..jobs.shared import box_of
from ..lattice.grid import Box, Lattice
from ..lattice.memory import MemoryLimitError
from ..lattice.sampler import PRECISIONS
from ..state.model import State
from ..surface.level import LevelResult
from ..surface.model import Surface
from .cache import (
    CacheStats,
    DiskCache,
    cached_lattice,
    cached_level,
    cached_surface,
    file_sha256,
    level_key,
    surface_key,
)
from .config import OutputSpec, job_options

__all__ = ["Caps", "Request", "OutputRecord", "requests_for", "make_request", "make_output",
           "THUMBNAIL_PX", "INDEX_FOLDER", "check_memory", "failure_text"]

#: Longer side of the thumbnails on the index page, px.
THUMBNAIL_PX = 320
#: Folder (inside the output folder) for the index page's thumbnails.
INDEX_FOLDER = ".index"
_USER_ERRORS = (UserInputError, ValueError, MemoryLimitError, FileNotFoundError, PermissionError)


@dataclass(frozen=True)
class Caps:
    """Upper bounds for quick drafts: lattice resolution (and section pixels), picture side (px)."""

    resolution: int | None = None
    size_px: int | None = None

    def lattice(self, n: int) -> int:
        return min(n, self.resolution) if self.resolution else n

    def size(self, width_px: int, height_px: int) -> tuple[int, int]:
        """(width, height) scaled down together, keeping the aspect, so neither exceeds the cap."""
        if not self.size_px or max(width_px, height_px) <= self.size_px:
            return int(width_px), int(height_px)
        k = self.size_px / max(width_px, height_px)
        return max(1, round(width_px * k)), max(1, round(height_px * k))


@dataclass(frozen=True)
class Request:
    """A surface (``what == "surface"``) or a level (``"level"``) that an output needs."""

    what: str
    key: str
    state: State | None
    fraction: float
    resolution: int = 0
    box: Box | None = None
    precision: str = "single"
    field: tuple | None = None  # (path, spacing_a0, origin_a0, sha256) of a user field
    level_rule: str = "quadrature"  # "lattice" in drafts: the level from the lattice's own sum




def _field_description(spec: OutputSpec) -> tuple:
    path = spec.options["field"]
    return (path, spec.options.get("field_spacing_a0"), spec.options.get("field_origin_a0"),
            file_sha256(path))


def _field_parts(field_desc: tuple) -> dict:
    path, spacing, origin, sha = field_desc
    return {"sha256": sha, "spacing_a0": spacing, "origin_a0": origin}


def _surface_request(spec: OutputSpec, state: State | None, caps: Caps) -> Request:
    options = job_options(spec.kind, spec.options)
    fraction = options.fraction
    resolution = caps.lattice(options.resolution)
    box = box_of(options, state)
    precision = options.precision
    if state is None:
        desc = _field_description(spec)
        key = surface_key(_field_parts(desc), fraction, resolution, box, PRECISIONS[precision])
        return Request("surface", key, None, fraction, resolution, box, precision, desc)
    rule = "lattice" if caps.resolution else "quadrature"
    key = surface_key(state, fraction, resolution, box, PRECISIONS[precision], rule)
    return Request("surface", key, state, fraction, resolution, box, precision, level_rule=rule)


def _level_request(spec: OutputSpec, state: State | None) -> Request:
    fraction = job_options(spec.kind, spec.options).fraction
    if state is None:
        desc = _field_description(spec)
        return Request("level", level_key(_field_parts(desc), fraction), None, fraction, field=desc)
    return Request("level", level_key(state, fraction), state, fraction)


def requests_for(spec: OutputSpec, caps: Caps = Caps()) -> list[Request]:
    """The surfaces and levels `spec` needs, in order (duplicates possible across outputs)."""
    states = spec.states or (None,)
    if spec.kind in ("figure", "layout", "mesh"):
        return [_surface_request(spec, s, caps) for s in states]
    if spec.kind == "section":
        return [_level_request(spec, states[0])] if spec.options.get("contour", True) else []
    if spec.kind == "cloud" and spec.options.get("surface", False):
        return [_surface_request(spec, states[0], caps)]
    return []


def _load_user_field(desc: tuple) -> Lattice:
    from ..lattice.userfield import load_field

    path, spacing, origin, _ = desc
    return load_field(path, spacing, origin)


def _level(req: Request, cache: DiskCache, stats: CacheStats, lattice: Lattice | None = None) -> LevelResult:
    """The level of `req`; for a user field from `lattice` if it is loaded already."""
    from ..surface.level import level_for_fraction

    if req.state is not None:
        return cached_level(cache, stats, req.state, req.fraction)
    return cached_level(cache, stats, _field_parts(req.field), req.fraction,
                        compute=lambda: level_for_fraction(lattice or _load_user_field(req.field),
                                                           req.fraction))


def _surface(req: Request, cache: DiskCache, stats: CacheStats) -> Surface:
    from ..surface.extract import surface_at_level, surface_box

    dtype = PRECISIONS[req.precision]
    if req.state is None:
        def compute() -> Surface:
            lattice = _load_user_field(req.field)
            return surface_at_level(lattice, _level(req, cache, stats, lattice))
        return cached_surface(cache, stats, _field_parts(req.field), req.fraction, req.resolution,
                              req.box, dtype, compute)

    def compute() -> Surface:
        if req.level_rule == "lattice":
            lattice = cached_lattice(cache, stats, req.state, req.resolution, req.box, dtype)
            return surface_at_level(lattice, _draft_level(lattice, req.fraction, stats))
        # as extract_surface does: the level first, then the lattice in the cube that
        # is sure to hold the surface
        level = _level(req, cache, stats)
        box = req.box or surface_box(req.state, level.level, req.resolution)
        lattice = cached_lattice(cache, stats, req.state, req.resolution, box, dtype)
        return surface_at_level(lattice, level)
    return cached_surface(cache, stats, req.state, req.fraction, req.resolution, req.box, dtype,
                          compute, req.level_rule)


def _draft_level(lattice: Lattice, fraction: float, stats: CacheStats) -> LevelResult:
    """The level from the sum over the (draft) lattice itself, as for a user field: in
    drafts the quadrature of a state with several centres would take longer than all the
    rest (the surface keeps its exact vertex psi; its report says ``lattice``)."""
    from ..surface.level import level_for_fraction

    stats.count("level", computed=True)
    as_field = Lattice(lattice.values, lattice.origin_a0, lattice.spacing_a0, None)
    return level_for_fraction(as_field, fraction)


@contextlib.contextmanager
def _warnings_as_notes(stats: CacheStats, subject: str):
    """The package's warnings raised inside (a lattice too coarse for the nodes) become one
    note each in `stats`, which the gallery shows as one line, whichever process drew;
    other warnings are shown as they would be without this."""
    from ..surface.resolution import LatticeResolutionWarning

    with warnings.catch_warnings():
        warnings.simplefilter("always", LatticeResolutionWarning)  # each output says it
        shown = warnings.showwarning

        def show(message, category, filename, lineno, file=None, line=None) -> None:
            if issubclass(category, LatticeResolutionWarning):
                stats.note(f"{subject}: {message}")
            else:
                shown(message, category, filename, lineno, file, line)

        warnings.showwarning = show
        yield


def make_request(req: Request, cache: DiskCache) -> tuple[CacheStats, float, str]:
    """Make (or find) one surface or level in the cache; returns (counts, seconds, what was done).

    A failure is not raised here: the output that needs it fails when it is drawn, with
    the same message, and the others go on.  An entry already on disk is not read here:
    the drawing reads (and verifies) it, and makes it again if it is damaged.
    """
    t0 = time.perf_counter()
    stats = CacheStats()
    stored = cache.entry(req.what, req.key)
    if stored is not None and stored.is_file():
        return stats, time.perf_counter() - t0, "cached"
    try:
        with _warnings_as_notes(stats, req.state.label if req.state is not None else "user field"):
            (_surface if req.what == "surface" else _level)(req, cache, stats)
    except Exception as exc:  # noqa: BLE001 - reported by the output that needs it
        return stats, time.perf_counter() - t0, f"failed: {exc}"
    how = "computed" if stats.computed[req.what] else "cached"
    return stats, time.perf_counter() - t0, how


@dataclass(frozen=True)
class OutputRecord:
    """What became of one output.

    Attributes
    ----------
    spec : OutputSpec
    path, report_path : Path
        The output and its JSON report.
    thumbnail : Path or None
        The small PNG shown on the index page (None: a text placeholder is shown).
    seconds : float
        Time spent drawing and writing it.
    error : str or None
        One line if it failed (an earlier file at `path` is then left as it was).
    user_error : bool
        True if the failure came from the input (a size too large for memory, ...).
    report : dict
        The report written beside the output (empty on failure).
    """

    spec: OutputSpec
    path: Path
    report_path: Path
    thumbnail: Path | None
    seconds: float
    error: str | None = None
    user_error: bool = False
    report: dict = field(default_factory=dict)


@dataclass
class _Work:
    """What a drawing function gets: the output, its folder, the cache and the counts."""

    spec: OutputSpec
    out_dir: Path
    cache: DiskCache
    caps: Caps
    stats: CacheStats

    @property
    def options(self) -> Any:
        """The output's options dataclass (its own keys, else the jobs' defaults)."""
        return job_options(self.spec.kind, self.spec.options)

    def surfaces(self) -> list[Surface]:
        return [_surface(r, self.cache, self.stats) for r in requests_for(self.spec, self.caps)]

    def level(self) -> LevelResult:
        return _level(requests_for(self.spec, self.caps)[0], self.cache, self.stats)


#: kind -> function(work, path) -> (report dict, thumbnail maker or None).  A thumbnail
#: maker is called with the thumbnail path and writes a PNG there.
_DRAWERS: dict[str, Callable[[_Work, Path], tuple[dict, Callable[[Path], None] | None]]] = {}


def _drawer(kind: str):
    def register(fn):
        _DRAWERS[kind] = fn
        return fn
    return register


def _png_thumbnail(source: Path) -> Callable[[Path], None]:
    """A thumbnail maker that downscales the PNG at `source` (Lanczos, no metadata: deterministic)."""
    def make(target: Path) -> None:
        from PIL import Image

        from ..atomic import atomic_path, pending_path

        with Image.open(pending_path(source)) as im:  # the picture may still wait for its rename
            im = im.convert("RGBA")
            im.thumbnail((THUMBNAIL_PX, THUMBNAIL_PX), Image.Resampling.LANCZOS)
            with atomic_path(target) as tmp:
                im.save(tmp, format="PNG")
    return make


def _figure_thumbnail(fig) -> Callable[[Path], None]:
    """A thumbnail maker that renders a matplotlib figure small (for SVG/PDF outputs)."""
    def make(target: Path) -> None:
        from ..picture.output import save_figure

        w, h = fig.get_size_inches()
        save_figure(fig, target, {}, dpi=THUMBNAIL_PX / max(w, h))
    return make


def _picture_thumbnail(fig, path: Path) -> Callable[[Path], None]:
    return _png_thumbnail(path) if path.suffix.lower() == ".png" else _figure_thumbnail(fig)


def failure_text(exc: BaseException) -> str:
    """One line for a failed output: the message of an input error; for a fault inside the
    tool its type, message and the place it was raised (file:line in function)."""
    if isinstance(exc, _USER_ERRORS):
        return str(exc)
    frames = traceback.extract_tb(exc.__traceback__)
    last = frames[-1] if frames else None
    where = f" (at {Path(last.filename).name}:{last.lineno} in {last.name})" if last else ""
    return f"{type(exc).__name__}: {exc}{where}".replace("\n", " ")


def check_memory(spec: OutputSpec, caps: Caps = Caps()) -> None:
    """Raise MemoryLimitError, before any work, if a step of `spec` would not fit in memory:
    the estimates the commands make, by the same functions of the jobs layer
    (:func:`~orbitalrender.jobs.shared.require_lattice_memory_of` for the lattice with its
    surface, :func:`~orbitalrender.jobs.figure.require_picture_memory` for a picture)."""
    from ..jobs.figure import picture_size, require_picture_memory
    from ..jobs.shared import require_lattice_memory_of

    if spec.kind not in ("figure", "layout", "mesh"):
        return  # sections and radial plots are bounded by their pixel limits
    options = job_options(spec.kind, spec.options)
    if getattr(options, "field", None) is None:  # a user field is checked when it is read
        require_lattice_memory_of(options, caps.lattice(options.resolution))
    if spec.kind == "mesh":
        return
    from ..picture.layout import default_columns

    count = max(1, len(spec.states))
    strip = spec.kind == "layout" and options.times is not None
    ncols = count if strip else (getattr(options, "columns", None) or default_columns(count))
    require_picture_memory(options, caps.size(*picture_size(options, count, ncols, strip)))


def make_output(spec: OutputSpec, out_dir: Path, cache: DiskCache,
                caps: Caps = Caps()) -> tuple[OutputRecord, CacheStats]:
    """Draw and write one output with its report and thumbnail; never raises for a bad output."""
    t0 = time.perf_counter()
    stats = CacheStats()
    path = out_dir / spec.file
    report_path = out_dir / spec.report_file
    thumb = out_dir / INDEX_FOLDER / (spec.file + ".png")
    try:
        from ..atomic import output_set, resolve_inside
        from ..picture.output import write_report

        resolve_inside(out_dir, spec.file)  # a link made since the run began must not lead out
        path.parent.mkdir(parents=True, exist_ok=True)
        thumb.parent.mkdir(parents=True, exist_ok=True)
        work = _Work(spec, out_dir, cache, caps, stats)
        with _warnings_as_notes(stats, f"output '{spec.name}'"), output_set():
            # picture, report and thumbnail replace the earlier ones together
            report, thumbnail = _DRAWERS[spec.kind](work, path)
            report = {**report, "gallery_output": spec.name, "gallery_settings": spec.options}
            write_report(report_path, report)
            if thumbnail is not None:
                thumbnail(thumb)
            else:
                thumb = None
        stats.drawn += 1
    except Exception as exc:  # noqa: BLE001 - one failed output must not stop the others
        return (OutputRecord(spec, path, report_path, None, time.perf_counter() - t0, failure_text(exc),
                             isinstance(exc, _USER_ERRORS)), stats)
    return OutputRecord(spec, path, report_path, thumb, time.perf_counter() - t0,
                        report=report), stats


def _state_of(work: _Work) -> State | None:
    return work.spec.states[0] if work.spec.states else None


# -- drawing: each kind's job, with surfaces and levels from the cache --------------------
def _save(work: _Work, fig, path: Path, metadata: dict) -> tuple[dict, Callable[[Path], None]]:
    from ..jobs.write import write_picture

    write_picture(fig, path, metadata, dpi=work.options.dpi, transparent=work.options.transparent)
    return {**metadata, "file": work.spec.file}, _picture_thumbnail(fig, path)


def _figure_surfaces(work: _Work):
    """A ``surface_for`` for :func:`figure_job` that hands out the cached surfaces in order."""
    surfaces = iter(work.surfaces())
    return lambda _state: next(surfaces)


@_drawer("figure")
@_drawer("layout")
def _draw_figure(work: _Work, path: Path):
    from ..jobs.figure import figure_job

    o = work.options
    strip = work.spec.kind == "layout" and o.times is not None
    fig, md = figure_job(work.spec.states or (None,), o, surface_for=_figure_surfaces(work),
                         times_au=[s.time_au for s in work.spec.states] if strip else None,
                         fit_size=work.caps.size, panels=work.spec.kind == "layout")
    return _save(work, fig, path, md)


@_drawer("section")
def _draw_section(work: _Work, path: Path):
    from ..jobs.section import section_job

    o = replace(work.options, pixels=work.caps.lattice(work.options.pixels))
    state = _state_of(work)
    source = state if state is not None else _load_user_field(_field_description(work.spec))
    label = state.label if state is not None else Path(o.field).stem
    fig, md = section_job(source, o, label=label, level_for=work.level)
    return _save(work, fig, path, md)


@_drawer("cloud")
def _draw_cloud(work: _Work, path: Path):
    from ..atomic import atomic_path
    from ..jobs.cloud import cloud_job

    result, md = cloud_job(_state_of(work), work.options, suffix=path.suffix,
                           surface_for=_figure_surfaces(work), fit_size=work.caps.size)
    if path.suffix.lower() != ".ply":
        return _save(work, result, path, md)
    with atomic_path(path) as tmp:
        tmp.write_bytes(result)
    return {**md, "file": work.spec.file}, None


@_drawer("radial")
def _draw_radial(work: _Work, path: Path):
    from ..jobs.radial import radial_job

    fig, md = radial_job(work.spec.states, work.options)
    return _save(work, fig, path, md)


def _render_thumbnail(surface: Surface, phase_map: str, cut: bool = False) -> Callable[[Path], None]:
    """A thumbnail maker that renders `surface` small with the project's renderer (for meshes);
    with `cut`, without the half that a printed cutaway removes (y above the middle of the box)."""
    def make(target: Path) -> None:
        from ..picture.compose import figure_3d
        from ..picture.cutaway import parse_cutaway
        from ..picture.output import save_figure

        middle_y = 0.5 * (surface.vertices_a0[:, 1].min() + surface.vertices_a0[:, 1].max())
        cutaway = parse_cutaway(f"y>{middle_y:.9g}") if cut else None
        # a preview of the file: the whole thumbnail for the surface, no legend column
        fig, _ = figure_3d(surface, THUMBNAIL_PX, THUMBNAIL_PX, dpi=100.0, title="", legend=False,
                           scale_bar=False, triad="off", phase_map=phase_map, supersample=2,
                           cutaway=cutaway)
        save_figure(fig, target, {})
    return make


@_drawer("mesh")
def _draw_mesh(work: _Work, path: Path):
    from ..jobs.mesh import mesh_job

    surface = work.surfaces()[0]
    report = mesh_job(surface, path, work.options)
    report["files"] = [work.spec.file]
    return report, _render_thumbnail(surface, work.options.phase_map,
                                     cut=work.options.printable and work.options.print_cutaway)
