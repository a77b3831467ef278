"""Jobs step for 3D pictures: the options of a figure and of a layout, and the job that draws them.

A figure is one shaded, phase-coloured render of the surface enclosing
`fraction`; a layout is several at one scale: a grid of STATEs, every state of a
shell, or a time strip of one STATE.  :func:`figure_job` makes the matplotlib
figure and its metadata; :func:`write_picture` writes them.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

from ..picture.camera import PROJECTIONS
from ..picture.triad import TRIAD_MODES
from ..state.limits import FRACTION_MAX
from .option import Options, option
from .shared import (
    FRACTION,
    FRACTION_HELP,
    PHASE_MAPS,
    FieldOptions,
    FileOptions,
    LatticeOptions,
    PictureOptions,
    StateOptions,
    lazy,
    surface_of,
)

__all__ = ["ViewOptions", "FigureOptions", "LayoutOptions", "PROJECTIONS", "SIZE_RANGE_PX", "FIGURE_SIZE_PX",
           "PANEL_PX", "parse_size", "figure_job", "picture_size", "view_record", "require_picture_memory"]

#: Sides of a picture accepted, px: below 64 the legend and title do not fit; above 8192 one
#: supersampled render needs gigabytes.
SIZE_RANGE_PX = (64, 8192)
#: Size of one render when none is given, px (our choice: a slide-sized picture).
FIGURE_SIZE_PX = (900, 800)
#: Side of one panel of a grid or time strip when no size is given, px (our choice: a slide
#: row of four or five panels stays under 2000 px wide).
PANEL_PX = 380
_SIZE = re.compile(r"^\s*(\d+)\s*[xX]\s*(\d+)\s*$")


def parse_size(text: str) -> tuple[int, int]:
    """``WxH`` in pixels -> (W, H) (the range is checked by the width and height options).

    Examples
    --------
    >>> parse_size("1200x900")
    (1200, 900)
    """
    mt = _SIZE.match(text)
    if mt is None:
        raise ValueError(f"cannot read the size {text!r}: give width x height in pixels, e.g. 900x800")
    return int(mt[1]), int(mt[2])


def _camera(zoom: float) -> None:
    lazy("picture.camera", "Camera")(zoom=zoom)


@dataclass(frozen=True)
class ViewOptions(Options):
    """How a 3D scene is seen and framed: size, camera, phase map and legend (figures and clouds)."""

    dpi: float = option(100.0, "dots per inch of the figure", lo=10.0, hi=2400.0)
    width_px: int | None = option(
        None, f"size of the whole figure in pixels (default {FIGURE_SIZE_PX[0]}x{FIGURE_SIZE_PX[1]} for "
              f"one picture; panels of about {PANEL_PX} px for a grid or time strip)",
        type="integer", lo=SIZE_RANGE_PX[0], hi=SIZE_RANGE_PX[1], unit="px", flag="--size",
        metavar="WxH", parse=parse_size, spread=("width_px", "height_px"))
    height_px: int | None = option(None, "height of the whole figure", type="integer",
                                   lo=SIZE_RANGE_PX[0], hi=SIZE_RANGE_PX[1], unit="px", flag="")
    azimuth_deg: float = option(35.0, "viewing direction round z from +x toward +y", unit="deg",
                                flag="--azimuth", metavar="DEG")
    elevation_deg: float = option(20.0, "viewing direction above the xy plane", lo=-90, hi=90,
                                  unit="deg", flag="--elevation", metavar="DEG")
    zoom: float = option(1.0, "1 fits the surface (or the cloud); 2 is twice as large", lo=0,
                         lo_open=True, check=_camera)
    projection: str = option("orthographic", "orthographic (lengths true to the scale bar) or perspective",
                             type="text", choices=PROJECTIONS)
    phase_map: str = option("uniform", "uniform (constant lightness), cvd (red-green safe) or sign "
                            "(real states)", type="text", choices=PHASE_MAPS)
    legend: bool = option(True, "leave out the phase legend and scale bar", type="bool")


@dataclass(frozen=True)
class FigureOptions(ViewOptions, FileOptions, PictureOptions, LatticeOptions, FieldOptions, StateOptions):
    """Options of one 3D picture (gallery kind ``figure``)."""

    STATE_NARGS: ClassVar[str] = "?"
    states: tuple[str, ...] = ()
    fraction: float = option(FRACTION, FRACTION_HELP, lo=0, hi=FRACTION_MAX, lo_open=True,
                             metavar="F")
    title: str | None = option(None, "title of a single picture (default: state and F)", type="text")
    supersample: int = option(3, "antialiasing: K x K samples per pixel", type="integer", lo=1, hi=4,
                              metavar="K")
    cutaway: str | None = option(
        None, "remove part of the surface and cap the cut with psi: front, quadrant, or conditions "
              "such as x>0, z<-1.5, (1,1,0)>0 joined by &", type="text", metavar="CUT",
        check=lazy("picture.cutaway", "parse_cutaway"),
        expected="'front', 'quadrant' or conditions such as 'x>0&y>0'")
    translucent_outer: float | None = option(
        None, "draw outer shells (parts lying wholly outside another part) with this opacity",
        lo=0, hi=1, lo_open=True, metavar="ALPHA")
    nodal_axis: bool = option(False, "draw the nodal z axis as a dashed line (states whose terms all "
                              "have m != 0)", type="bool")
    triad: str = option("auto", "x, y, z axis arrows as the camera sees them, beside the picture: auto "
                        "(unless every state is spherically symmetric), on or off", type="text",
                        choices=TRIAD_MODES)


@dataclass(frozen=True)
class LayoutOptions(FigureOptions):
    """Options of several 3D pictures at one scale (gallery kind ``layout``; the figure command)."""

    STATE_NARGS: ClassVar[str] = "*"
    #: Options a gallery layout does not take (its panels are STATEs; one field is a figure).
    NOT_IN_GALLERY: ClassVar[tuple[str, ...]] = ("field", "field_spacing_a0", "field_origin_a0")
    shell: int | None = option(None, "one panel per state of shell N (instead of STATE)", type="integer",
                               lo=1, hi=7, metavar="N")
    basis: str = option("real", "with a shell: real orbitals or complex |n l m>", type="text",
                        choices=("real", "complex"))
    columns: int | None = option(None, "panels per row (default: near square)", type="integer",
                                 lo=1, hi=64)
    times: tuple[float, ...] | None = option(
        None, "time strip of one STATE at these times (unit: time unit)", type="numbers",
        metavar="T1,T2,...", parse=lambda text: [float(t) for t in text.split(",") if t.strip()])
    panel_px: int = option(PANEL_PX, "side of one panel when no size is given", type="integer",
                           lo=64, hi=4096, unit="px")


def picture_size(options: FigureOptions, count: int, ncols: int, panels: bool = False) -> tuple[int, int]:
    """(width, height) in px of a figure of `count` panels in `ncols` columns (`panels`: drawn as
    panels even if there is one)."""
    if options.width_px is not None and options.height_px is not None:
        return options.width_px, options.height_px
    if count == 1 and not panels:
        return (options.width_px or FIGURE_SIZE_PX[0], options.height_px or FIGURE_SIZE_PX[1])
    from ..picture.compose import fit_geometry

    panel = getattr(options, "panel_px", PANEL_PX)
    nrows = -(-count // ncols)
    probe = fit_geometry(10 * panel, panel + 30, dpi=options.dpi, text_size_pt=options.text_size_pt)
    return (options.width_px or ncols * panel + probe.legend_px,
            options.height_px or nrows * (panel + probe.title_px))


def require_picture_memory(options: FigureOptions, size_px: Sequence[int]) -> None:
    """Before any work: raise MemoryLimitError if rendering a picture of `size_px` (width,
    height) with the view options of `options` would not fit in memory now.  The one check of
    the command and the gallery."""
    from ..picture.scene import render_path, require_render_memory

    path = render_path(cutaway=options.cutaway is not None, nodal_axis=options.nodal_axis,
                       translucent_outer=options.translucent_outer)
    require_render_memory(*size_px, options.supersample, path)


def view_record(options: FigureOptions, size: Sequence[int]) -> dict[str, Any]:
    """The ``view`` entry of a figure's report."""
    return {"azimuth_deg": options.azimuth_deg, "elevation_deg": options.elevation_deg,
            "zoom": options.zoom, "projection": options.projection, "cutaway": options.cutaway,
            "translucent_outer": options.translucent_outer, "nodal_axis": options.nodal_axis,
            "phase_map": options.phase_map, "size_px": list(size), "dpi": options.dpi}


def _panel_record(surface) -> dict[str, Any]:
    return {"state": surface.state.label if surface.state is not None else None,
            "level_a0^-3": surface.level, "fraction_enclosed": surface.fraction_enclosed,
            "triangles": int(len(surface.faces))}


def figure_job(states: Sequence, options: FigureOptions, *,
               surface_for: Callable[[Any], Any] | None = None,
               times_au: Sequence[float] | None = None,
               fit_size: Callable[[int, int], tuple[int, int]] | None = None,
               panels: bool | None = None) -> tuple[Any, dict[str, Any]]:
    """Draw the surfaces of `states` as one picture, a grid or a time strip.

    Parameters
    ----------
    states : sequence of State (or None for a user field)
        One state per panel; for a time strip, the one state at each of `times_au`.
    options : FigureOptions or LayoutOptions
    surface_for : callable, optional
        ``surface_for(state) -> Surface``; default: extracted on the lattice of `options`
        (a cache may provide them instead).
    times_au : sequence of float, optional
        The times of a time strip, atomic units.
    fit_size : callable, optional
        ``fit_size(width_px, height_px) -> (width_px, height_px)`` applied to the picture
        size (a gallery's draft cap).
    panels : bool, optional
        True: draw even one state as a panel of a layout; default: panels for several
        states or a time strip, one picture for one state.

    Returns
    -------
    (matplotlib.figure.Figure, dict)
        The figure and its metadata (see :func:`orbitalrender.picture.output.figure_metadata`).
    """
    from ..picture.camera import Camera
    from ..picture.compose import figure_3d, surface_title
    from ..picture.cutaway import parse_cutaway
    from ..picture.layout import default_columns, small_multiples, time_labels
    from ..picture.output import figure_metadata

    def surface(state):
        return surface_for(state) if surface_for is not None else surface_of(state, options.fraction, options)

    camera = Camera(options.azimuth_deg, options.elevation_deg, options.zoom, options.projection)
    render = dict(camera=camera, phase_map=options.phase_map,
                  cutaway=parse_cutaway(options.cutaway) if options.cutaway else None,
                  translucent_outer=options.translucent_outer, nodal_axis=options.nodal_axis,
                  supersample=options.supersample)
    compose = dict(dpi=options.dpi, units=options.units, legend=options.legend,
                   scale_bar=options.legend, transparent=options.transparent, triad=options.triad,
                   text_size_pt=options.text_size_pt)
    if options.phase_map == "sign":  # refuse a complex state before its surfaces are made
        from ..state.model import State
        from ..state.phase import sign_rotation

        for s in states:
            for member in (s if isinstance(s, tuple) else (s,)):
                if isinstance(member, State):
                    sign_rotation(member)
    # a hybrid set (a tuple of members) is one panel of several surfaces in one scene
    groups = [[surface(m) for m in s] if isinstance(s, tuple) else [surface(s)] for s in states]
    surfaces = [g[0] for g in groups]
    strip = times_au is not None
    ncols = (len(surfaces) if strip else
             getattr(options, "columns", None) or default_columns(len(surfaces)))
    single = len(surfaces) == 1 and not strip if panels is None else not panels
    size = picture_size(options, len(surfaces), ncols, strip or not single)
    if fit_size is not None:
        size = fit_size(*size)
    first = surfaces[0]
    common = dict(command="figure", view=view_record(options, size))
    if single and len(groups[0]) > 1:
        fig, rendered = figure_3d(groups[0], *size, title=options.title or _set_title(groups[0]),
                                  **compose, **render)
        md = figure_metadata(None, first.fraction_requested, None, first.lattice_shape[0],
                             panels=[_panel_record(s) for s in groups[0]], px_per_a0=rendered.px_per_a0,
                             **common)
        return fig, md
    if single:
        fig, rendered = figure_3d(first, *size, title=options.title, **compose, **render)
        source = {} if first.state is not None else {"source": options.field}
        md = figure_metadata(first.state, first.fraction_requested, first.level, first.lattice_shape[0],
                             fraction_enclosed=first.fraction_enclosed, triangles=int(len(first.faces)),
                             px_per_a0=rendered.px_per_a0, **common, **source)
        return fig, md
    titles = (time_labels(first.state, times_au, options.time_unit) if strip else
              [_set_title(g) if len(g) > 1 else surface_title(g[0]) for g in groups])
    fig, renders = small_multiples(groups, titles, ncols=ncols, width_px=size[0], height_px=size[1],
                                   shared_target=strip, **compose, **render)
    if strip:
        md = figure_metadata(first.state.at_time(0.0), first.fraction_requested, None,
                             first.lattice_shape[0], times_au=[s.state.time_au for s in surfaces],
                             px_per_a0=renders[0].px_per_a0, **common)
    else:
        md = figure_metadata(None, first.fraction_requested, None, first.lattice_shape[0],
                             panels=[_panel_record(s) for g in groups for s in g],
                             px_per_a0=renders[0].px_per_a0, **common)
    return fig, md


def _set_title(group) -> str:
    """Title of a hybrid set drawn together: :func:`surface_title` of its first member with the
    set's name (the members' label without [k])."""
    import re

    from ..picture.compose import surface_title

    return surface_title(group[0], label=re.sub(r"\[\d+\]$", "", group[0].state.label))
