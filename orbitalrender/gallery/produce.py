"""Gallery step, the work itself: what each output kind needs from the cache, and how it is drawn and written.

:func:`requests_for` lists the surfaces and levels an output needs (each a
:class:`Request` named by its cache key); :func:`make_request` makes one of them
in a worker; :func:`make_output` draws and writes one output, its JSON report
and its thumbnail, taking surfaces and levels from the cache.  Every kind calls
the same library functions as its command (``figure``, ``layout`` -> the 3D
renderer and layouts, ``section``, ``radial``, ``mesh``), so a gallery output and
the command's output agree.
"""

from __future__ import annotations

import hashlib
import time
import traceback
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import Any

from ..errors import UserInputError
from ..lattice.grid import Box, Lattice
from ..lattice.memory import MemoryLimitError
from ..lattice.sampler import PRECISIONS, default_box
from ..state.model import State
from ..surface.level import LevelResult
from ..surface.model import Surface
from .cache import CacheStats, DiskCache, cached_lattice, cached_level, cached_surface, level_key, surface_key
from .config import OutputSpec

__all__ = ["Caps", "Request", "OutputRecord", "requests_for", "make_request", "make_output",
           "THUMBNAIL_PX", "INDEX_FOLDER", "COMMAND_OF", "option"]

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


def _box(spec: OutputSpec, state: State | None) -> Box | None:
    """The lattice cube: ``box_a0`` is its half-width about the middle of the state's centres
    (as ``--box`` of the commands); None for the default box."""
    if "box_a0" not in spec.options or state is None:
        return None
    return Box(default_box(state).centre_a0, spec.options["box_a0"])


def _file_sha256(path: str) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _field_description(spec: OutputSpec) -> tuple:
    path = spec.options["field"]
    return (path, spec.options.get("field_spacing_a0"), spec.options.get("field_origin_a0"),
            _file_sha256(path))


def _field_parts(field_desc: tuple) -> dict:
    path, spacing, origin, sha = field_desc
    return {"sha256": sha, "spacing_a0": spacing, "origin_a0": origin}


def _surface_request(spec: OutputSpec, state: State | None, caps: Caps) -> Request:
    fraction = float(option(spec, "fraction"))
    resolution = caps.lattice(int(option(spec, "resolution")))
    box = _box(spec, state)
    precision = option(spec, "precision")
    if state is None:
        desc = _field_description(spec)
        key = surface_key(_field_parts(desc), fraction, resolution, box, PRECISIONS[precision])
        return Request("surface", key, None, fraction, resolution, box, precision, desc)
    rule = "lattice" if caps.resolution else "quadrature"
    key = surface_key(state, fraction, resolution, box, PRECISIONS[precision], rule)
    return Request("surface", key, state, fraction, resolution, box, precision, level_rule=rule)


def _level_request(spec: OutputSpec, state: State | None) -> Request:
    fraction = float(option(spec, "fraction"))
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


def make_request(req: Request, cache: DiskCache) -> tuple[CacheStats, float, str]:
    """Make (or find) one surface or level in the cache; returns (counts, seconds, what was done).

    A failure is not raised here: the output that needs it fails when it is drawn, with
    the same message, and the others go on.
    """
    t0 = time.perf_counter()
    stats = CacheStats()
    try:
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

    def opt(self, key: str) -> Any:
        return option(self.spec, key)

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
        with output_set():  # picture, report and thumbnail replace the earlier ones together
            report, thumbnail = _DRAWERS[spec.kind](work, path)
            report = {**report, "gallery_output": spec.name, "gallery_settings": spec.options}
            write_report(report_path, report)
            if thumbnail is not None:
                thumbnail(thumb)
            else:
                thumb = None
        stats.drawn += 1
    except Exception as exc:  # noqa: BLE001 - one failed output must not stop the others
        message = f"{type(exc).__name__}: {exc}" if not isinstance(exc, _USER_ERRORS) else str(exc)
        if not isinstance(exc, _USER_ERRORS):
            message += " | " + traceback.format_exc(limit=-1).strip().splitlines()[-2].strip()
        return (OutputRecord(spec, path, report_path, None, time.perf_counter() - t0, message,
                             isinstance(exc, _USER_ERRORS)), stats)
    return OutputRecord(spec, path, report_path, thumb, time.perf_counter() - t0,
                        report=report), stats


def _state_of(work: _Work) -> State | None:
    return work.spec.states[0] if work.spec.states else None


# -- drawing ----------------------------------------------------------------------------
#: Output kind -> the command whose options (and defaults) its keys mirror.
COMMAND_OF = {"figure": "figure", "layout": "figure", "section": "section", "radial": "radial",
              "mesh": "mesh"}
#: Config key -> the option's destination in the commands' parsers, where the names differ.
_DEST = {"azimuth_deg": "azimuth", "elevation_deg": "elevation", "offset_a0": "offset"}


@cache
def _command_defaults(command: str) -> dict[str, Any]:
    """The defaults of the options of `command` (from its argparse parser)."""
    import argparse

    from ..cli import build_parser

    for action in build_parser()._actions:
        if isinstance(action, argparse._SubParsersAction):
            sub = action.choices[command]
            return {a.dest: a.default for a in sub._actions if a.default is not argparse.SUPPRESS}
    raise LookupError(command)  # pragma: no cover - the command line always has subcommands


def option(spec: OutputSpec, key: str) -> Any:
    """The value of config `key` for `spec`: its own or the default's, else the default of the
    same option of the output's command (or of ``figure``, where the command has none)."""
    if key in spec.options:
        return spec.options[key]
    dest = _DEST.get(key, key)
    for command in (COMMAND_OF[spec.kind], "figure"):
        value = _command_defaults(command).get(dest)
        if value is not None:
            return value
    return None


def _render_options(work: _Work) -> dict[str, Any]:
    from ..picture.camera import Camera
    from ..picture.cutaway import parse_cutaway

    o = work.spec.options
    camera = Camera(option(work.spec, "azimuth_deg"), option(work.spec, "elevation_deg"),
                    option(work.spec, "zoom"), option(work.spec, "projection"))
    return {"camera": camera, "phase_map": work.opt("phase_map"),
            "cutaway": parse_cutaway(o["cutaway"]) if "cutaway" in o else None,
            "translucent_outer": o.get("translucent_outer"), "nodal_axis": o.get("nodal_axis", False),
            "supersample": work.opt("supersample")}


def _compose_options(work: _Work) -> dict[str, Any]:
    legend = work.spec.options.get("legend", True)
    return {"dpi": work.opt("dpi"), "units": work.opt("units"), "legend": legend, "scale_bar": legend,
            "transparent": work.spec.options.get("transparent", False)}


def _view(work: _Work, render, size: tuple[int, int]) -> dict[str, Any]:
    """The ``view`` entry of the figure command's report."""
    cam = render.camera
    return {"azimuth_deg": cam.azimuth_deg, "elevation_deg": cam.elevation_deg, "zoom": cam.zoom,
            "projection": cam.projection, "cutaway": work.spec.options.get("cutaway"),
            "translucent_outer": work.spec.options.get("translucent_outer"),
            "nodal_axis": work.spec.options.get("nodal_axis", False), "phase_map": render.phase_map,
            "size_px": list(size), "dpi": work.opt("dpi")}


def _panel_record(surface: Surface) -> dict[str, Any]:
    return {"state": surface.state.label if surface.state is not None else None,
            "level_a0^-3": surface.level, "fraction_enclosed": surface.fraction_enclosed,
            "triangles": int(len(surface.faces))}


def _save(work: _Work, fig, path: Path, metadata: dict) -> tuple[dict, Callable[[Path], None]]:
    from ..picture.output import save_figure

    save_figure(fig, path, metadata, dpi=work.opt("dpi"),
                transparent=work.spec.options.get("transparent", False))
    return {**metadata, "file": work.spec.file}, _picture_thumbnail(fig, path)


@_drawer("figure")
def _draw_figure(work: _Work, path: Path):
    from ..picture.compose import figure_3d
    from ..picture.output import figure_metadata

    surface = work.surfaces()[0]
    size = work.caps.size(work.spec.options.get("width_px", _FIGURE_SIZE[0]),
                          work.spec.options.get("height_px", _FIGURE_SIZE[1]))
    fig, render = figure_3d(surface, *size, title=work.spec.options.get("title"),
                            **_compose_options(work), **_render_options(work))
    source = {} if surface.state is not None else {"source": work.spec.options["field"]}
    md = figure_metadata(surface.state, surface.fraction_requested, surface.level,
                         surface.lattice_shape[0], command="figure",
                         fraction_enclosed=surface.fraction_enclosed, triangles=int(len(surface.faces)),
                         view=_view(work, render, size), px_per_a0=render.px_per_a0, **source)
    return _save(work, fig, path, md)


#: Figure size of one render, px (the figure command's default ``--size``).
_FIGURE_SIZE = (900, 800)
#: Side of one panel of a layout when no figure size is given, px (our choice: a slide
#: column of four or five panels stays under 2000 px wide).
_PANEL_PX = 380


def _layout_size(work: _Work, count: int, ncols: int) -> tuple[int, int]:
    from ..picture.compose import fit_geometry

    o = work.spec.options
    if "width_px" in o and "height_px" in o:
        return work.caps.size(o["width_px"], o["height_px"])
    panel = o.get("panel_px", _PANEL_PX)
    nrows = -(-count // ncols)
    probe = fit_geometry(10 * panel, panel + 30, 1, 1, True, True, work.opt("dpi"))
    width = o.get("width_px", ncols * panel + probe.legend_px)
    height = o.get("height_px", nrows * (panel + probe.title_px))
    return work.caps.size(width, height)


@_drawer("layout")
def _draw_layout(work: _Work, path: Path):
    from ..picture.compose import surface_title
    from ..picture.layout import default_columns, small_multiples
    from ..picture.output import figure_metadata

    o = work.spec.options
    surfaces = work.surfaces()
    strip = "times" in o
    if strip:
        titles = [f"t = {t:g} {work.opt('time_unit') or 'au'}" for t in o["times"]]
        ncols = len(surfaces)
    else:
        titles = [surface_title(s) for s in surfaces]
        ncols = o.get("columns", default_columns(len(surfaces)))
    size = _layout_size(work, len(surfaces), ncols)
    fig, renders = small_multiples(surfaces, titles, ncols, *size, shared_target=strip,
                                   **_compose_options(work), **_render_options(work))
    first = surfaces[0]
    common = dict(command="figure", view=_view(work, renders[0], size), px_per_a0=renders[0].px_per_a0)
    if strip:
        md = figure_metadata(first.state.at_time(0.0), first.fraction_requested, None,
                             first.lattice_shape[0], times_au=[s.state.time_au for s in surfaces],
                             **common)
    else:
        md = figure_metadata(None, first.fraction_requested, None, first.lattice_shape[0],
                             panels=[_panel_record(s) for s in surfaces], **common)
    return _save(work, fig, path, md)


@_drawer("section")
def _draw_section(work: _Work, path: Path):
    from dataclasses import replace

    from ..picture.nodal import section_lines
    from ..picture.plane import plane
    from ..picture.section import cross_section
    from ..picture.section_figure import section_figure, section_metadata

    o = work.spec.options
    where = plane(o.get("normal") or o.get("plane", "xz"), option(work.spec, "offset_a0"))
    state = _state_of(work)
    source = state if state is not None else _load_user_field(_field_description(work.spec))
    pixels = work.caps.lattice(int(work.opt("pixels")))
    section = cross_section(source, where, o.get("extent_a0"), pixels, fraction=None)
    contour = o.get("contour", True)
    if contour:
        level = work.level()
        section = replace(section, level=level.level, fraction_requested=level.fraction_requested,
                          fraction_enclosed=level.fraction_enclosed,
                          fraction_error=level.fraction_error, level_method=level.method)
    lines = section_lines(section, nodes=o.get("nodes", True))
    style = dict(scheme=work.opt("phase_map"), scale=work.opt("scale"), decades=work.opt("decades"),
                 units=work.opt("units"))
    label = state.label if state is not None else Path(o["field"]).stem
    fig = section_figure(section, lines, **style, title=o.get("title"), label=label)
    md = section_metadata(section, lines, **style, source=o.get("field"), dpi=work.opt("dpi"))
    return _save(work, fig, path, md)


@_drawer("radial")
def _draw_radial(work: _Work, path: Path):
    from ..cli.radial import parse_quantities
    from ..picture.radialplot import radial_figure, radial_metadata

    states = list(work.spec.states)
    quantities = parse_quantities(_quantity_text(work.opt("quantity")))
    fraction = work.opt("fraction")
    fig, marks = radial_figure(states, quantities, fraction, work.opt("units"),
                               title=work.spec.options.get("title"))
    md = radial_metadata(states, marks, quantities, work.opt("units"), dpi=work.opt("dpi"))
    return _save(work, fig, path, md)


def _quantity_text(value: str | list[str]) -> str:
    return ",".join(value) if isinstance(value, list) else value


def _render_thumbnail(surface: Surface, phase_map: str) -> Callable[[Path], None]:
    """A thumbnail maker that renders `surface` small with the project's renderer (for meshes)."""
    def make(target: Path) -> None:
        from ..picture.compose import figure_3d
        from ..picture.output import save_figure

        fig, _ = figure_3d(surface, THUMBNAIL_PX, THUMBNAIL_PX, dpi=100.0, title="", legend=False,
                           scale_bar=False, phase_map=phase_map, supersample=2)
        save_figure(fig, target, {})
    return make


def _mesh_print_options(work: _Work):
    from ..mesh.print_options import PrintOptions

    cut = work.spec.options.get("print_cutaway", False)
    return PrintOptions(work.opt("min_thickness_mm"), work.opt("min_gap_mm"), work.opt("strut_fraction"),
                        "none" if cut else work.opt("base"), cut)


@_drawer("mesh")
def _draw_mesh(work: _Work, path: Path):
    from ..mesh.pipeline import export_mesh

    o = work.spec.options
    surface = work.surfaces()[0]
    printable = o.get("printable", False)
    report = export_mesh(surface, path, units=work.opt("units"), size_mm=o.get("size_mm"),
                         phase_map=work.opt("phase_map"),
                         printable=_mesh_print_options(work) if printable else None,
                         split="sign" if o.get("split_sign", False) else None)
    report["files"] = [work.spec.file]
    return report, _render_thumbnail(surface, work.opt("phase_map"))
