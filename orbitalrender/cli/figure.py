"""``orbitalrender figure``: shaded, phase-coloured 3D pictures of probability surfaces (picture step).

One STATE gives one render with its title, phase legend and scale bar; several
STATEs (or ``--shell N``) give a grid of panels at one shared scale; ``--times``
gives a time strip of one superposition.  The format follows the suffix of
``--out`` (.png, .svg, .pdf); in SVG and PDF the render is an embedded raster and
the labels are text.  Every option is checked before any work is done, and the
file is written atomically, so a failure leaves no partial file.
"""

from __future__ import annotations

import argparse
import re
from pathlib import Path

import matplotlib as mpl
import numpy as np

from ..atomic import check_writable
from ..colormap import PHASE_SCHEMES
from ..errors import UserInputError
from ..lattice.memory import require_lattice_memory, surface_bytes_per_point
from ..picture.axis import state_nodal_axis_centre
from ..picture.camera import PROJECTIONS, Camera
from ..picture.compose import figure_3d, fit_geometry, surface_title
from ..picture.cutaway import parse_cutaway
from ..picture.layout import default_columns, shell_states, small_multiples, time_strip
from ..picture.output import default_output_path, figure_format, figure_metadata, save_figure, write_report
from ..picture.scene import render_path, require_render_memory
from ..state.limits import check_fraction
from ..state.units import LENGTH_UNITS_PER_A0, femtoseconds_to_au, nucleus_reduced_mass_ratio
from .common import add_lattice_arguments, add_state_arguments, box_from_args, lattice_dtype, state_from_args

__all__ = ["register", "run", "parse_size"]

_DEFAULT_RESOLUTION = 128
_DEFAULT_FRACTION = 0.9
_DEFAULT_SIZE = "900x800"
#: Default panel side of a grid or time strip when --size is not given, px.
_DEFAULT_PANEL_PX = 380
_SIZE_RANGE_PX = (64, 8192)
_SIZE = re.compile(r"^\s*(\d+)\s*[xX]\s*(\d+)\s*$")


def parse_size(text: str) -> tuple[int, int]:
    """``WxH`` in pixels -> (W, H), each 64 to 8192.

    Examples
    --------
    >>> parse_size("1200x900")
    (1200, 900)
    """
    mt = _SIZE.match(text)
    if mt is None:
        raise UserInputError(f"cannot read the size {text!r}: give width x height in pixels, e.g. 900x800")
    w, h = int(mt[1]), int(mt[2])
    lo, hi = _SIZE_RANGE_PX
    if not (lo <= w <= hi and lo <= h <= hi):
        raise UserInputError(f"the size {w}x{h} px is out of range: each side must be {lo} to {hi} px")
    return w, h


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "figure", help="draw the probability surface shaded and coloured by the phase of psi",
        description="Draw the surface enclosing a probability FRACTION of each STATE as a shaded 3D "
                    "picture, hue = phase of psi, with a phase legend and a scale bar.  Several "
                    "STATEs (or --shell) make a grid at one scale; --times makes a time strip.")
    add_state_arguments(p, many=True)
    # STATE may be left out when --shell lists the states
    next(a for a in p._actions if a.dest == "state").nargs = "*"
    p.add_argument("--fraction", type=float, default=_DEFAULT_FRACTION, metavar="F",
                   help="probability enclosed by the surface, between 0 and 1 "
                        f"(default {_DEFAULT_FRACTION:g})")
    add_lattice_arguments(p, _DEFAULT_RESOLUTION)
    p.add_argument("--out", metavar="FILE", default=None,
                   help="output picture; the suffix .png, .svg or .pdf sets the format "
                        "(default: named after the state, PNG, in the current folder)")
    p.add_argument("--report", metavar="FILE.json", help="also write what was drawn as JSON")
    v = p.add_argument_group("view")
    v.add_argument("--size", default=None, metavar="WxH",
                   help=f"size of the whole figure in pixels (default {_DEFAULT_SIZE} for one picture; "
                        f"panels of about {_DEFAULT_PANEL_PX} px for a grid or time strip)")
    v.add_argument("--dpi", type=float, default=100.0, help="dots per inch of the figure (default 100)")
    v.add_argument("--azimuth", type=float, default=35.0, metavar="DEG",
                   help="viewing direction round z from +x toward +y (default 35)")
    v.add_argument("--elevation", type=float, default=20.0, metavar="DEG",
                   help="viewing direction above the xy plane, -90 to 90 (default 20)")
    v.add_argument("--zoom", type=float, default=1.0, help="1 fits the surface; 2 is twice as large")
    v.add_argument("--projection", choices=PROJECTIONS, default="orthographic",
                   help="orthographic (default; lengths true to the scale bar) or perspective")
    v.add_argument("--phase-map", choices=PHASE_SCHEMES, default="uniform",
                   help="uniform (constant lightness), cvd (red-green safe) or sign (real states)")
    v.add_argument("--transparent", action="store_true", help="transparent background")
    v.add_argument("--units", choices=tuple(LENGTH_UNITS_PER_A0), default="a0",
                   help="unit of the scale bar (default a0)")
    v.add_argument("--title", default=None, help="title of a single picture (default: state and F)")
    v.add_argument("--no-legend", action="store_true", help="leave out the phase legend and scale bar")
    v.add_argument("--supersample", type=int, default=3, metavar="K",
                   help="antialiasing: K x K samples per pixel, 1 to 4 (default 3)")
    c = p.add_argument_group("inside views")
    c.add_argument("--cutaway", metavar="CUT", default=None,
                   help="remove part of the surface and cap the cut with psi: front, quadrant, "
                        "or conditions such as x>0, z<-1.5, (1,1,0)>0 joined by &")
    c.add_argument("--translucent-outer", type=float, default=None, metavar="ALPHA",
                   help="draw outer shells (parts lying wholly outside another part) with opacity ALPHA")
    c.add_argument("--nodal-axis", action="store_true",
                   help="draw the nodal z axis as a dashed line (states whose terms all have m != 0)")
    g = p.add_argument_group("several panels")
    g.add_argument("--shell", type=int, default=None, metavar="N",
                   help="one panel per state of shell N (instead of STATE)")
    g.add_argument("--basis", choices=("real", "complex"), default="real",
                   help="with --shell: real orbitals (default) or complex |n l m>")
    g.add_argument("--columns", type=int, default=None, help="panels per row (default: near square)")
    g.add_argument("--times", default=None, metavar="T1,T2,...",
                   help="time strip of one STATE at these times (unit: --time-unit)")
    p.set_defaults(run=run)


def _times(args: argparse.Namespace) -> list[float] | None:
    if args.times is None:
        return None
    try:
        values = [float(t) for t in args.times.split(",") if t.strip()]
    except ValueError:
        raise UserInputError(f"cannot read --times {args.times!r}: "
                             "give numbers separated by commas") from None
    if not values or not all(np.isfinite(values)):
        raise UserInputError(f"--times needs finite numbers separated by commas, got {args.times!r}")
    if args.time_unit == "fs":
        values = [femtoseconds_to_au(t) for t in values]
    return values


def _check_options(args: argparse.Namespace):
    """Refuse bad options before any work; returns (size, camera, cutaway, times, out path)."""
    size = parse_size(args.size) if args.size is not None else None
    if not 10 <= args.dpi <= 2400:
        raise UserInputError(f"--dpi must be 10 to 2400, got {args.dpi:g}")
    check_fraction(args.fraction, "--fraction")
    if not 1 <= args.supersample <= 4:
        raise UserInputError(f"--supersample must be 1 to 4, got {args.supersample}")
    if args.translucent_outer is not None and not 0.0 < args.translucent_outer <= 1.0:
        raise UserInputError(f"--translucent-outer must lie in (0, 1], got {args.translucent_outer:g}")
    if args.columns is not None and args.columns < 1:
        raise UserInputError(f"--columns must be at least 1, got {args.columns}")
    if args.shell is not None and args.state:
        raise UserInputError("give either STATE ... or --shell N, not both")
    if args.shell is None and not args.state:
        raise UserInputError("give a STATE (e.g. 3dz2 or 2,1,1) or --shell N")
    times = _times(args)
    if times is not None:
        if args.shell is not None or len(args.state) != 1:
            raise UserInputError("--times draws one STATE at several times: give exactly one STATE")
        if args.time != 0.0:
            raise UserInputError("--times gives the times itself; leave out --time")
    camera = Camera(args.azimuth, args.elevation, args.zoom, args.projection)  # validates the view
    cutaway = parse_cutaway(args.cutaway) if args.cutaway else None
    out = Path(args.out) if args.out else None
    if out is not None:
        figure_format(out)
        check_writable(out)
    if args.report:
        check_writable(args.report)
    dtype = lattice_dtype(args)
    require_lattice_memory(args.resolution, dtype, extra_bytes_per_point=surface_bytes_per_point(dtype),
                           what="lattice with its surface")
    return size, camera, cutaway, times, out


def _surface(state, args: argparse.Namespace):
    from ..surface.extract import extract_surface  # the surface step

    box = box_from_args(args, state)
    dtype = lattice_dtype(args)
    return extract_surface(state, args.fraction, args.resolution, box, dtype)


def _panel_record(surface) -> dict:
    return {"state": surface.state.label if surface.state is not None else None,
            "level_a0^-3": surface.level, "fraction_enclosed": surface.fraction_enclosed,
            "triangles": int(len(surface.faces))}


def run(args: argparse.Namespace) -> int:
    size, camera, cutaway, times, out = _check_options(args)
    if args.shell is not None:
        states = shell_states(args.shell, args.basis, args.Z, nucleus_reduced_mass_ratio(args.nucleus))
    else:
        states = [state_from_args(args, text) for text in args.state]
    count = len(times) if times is not None else len(states)
    if size is not None:
        width, height = size
    elif count == 1:
        width, height = parse_size(_DEFAULT_SIZE)
    else:
        ncols = count if times is not None else (args.columns or default_columns(count))
        nrows = -(-count // ncols)
        probe = fit_geometry(10 * _DEFAULT_PANEL_PX, _DEFAULT_PANEL_PX + 30, 1, 1, True, True, args.dpi)
        width = ncols * _DEFAULT_PANEL_PX + probe.legend_px
        height = nrows * (_DEFAULT_PANEL_PX + probe.title_px)
    path = render_path(cutaway=cutaway is not None, nodal_axis=args.nodal_axis,
                       translucent_outer=args.translucent_outer)
    require_render_memory(width, height, args.supersample, path)  # before any work
    if args.nodal_axis and len(states) == 1:
        state_nodal_axis_centre(states[0])  # refuse before any work
    if out is None:
        out = default_output_path(states[0].label if len(states) == 1 else
                                  (f"shell{args.shell}" if args.shell else "states"), "figure")
        check_writable(out)
    render_options = dict(camera=camera, phase_map=args.phase_map, cutaway=cutaway,
                          translucent_outer=args.translucent_outer, nodal_axis=args.nodal_axis,
                          supersample=args.supersample)
    common = dict(dpi=args.dpi, units=args.units, legend=not args.no_legend,
                  scale_bar=not args.no_legend, transparent=args.transparent)
    view = {"azimuth_deg": args.azimuth, "elevation_deg": args.elevation, "zoom": args.zoom,
            "projection": args.projection, "cutaway": args.cutaway,
            "translucent_outer": args.translucent_outer, "nodal_axis": args.nodal_axis,
            "phase_map": args.phase_map, "size_px": [width, height], "dpi": args.dpi}
    if times is not None:
        state = states[0]
        box = box_from_args(args, state)
        labels = [f"t = {t} {args.time_unit}" for t in args.times.split(",") if t.strip()]
        fig, renders = time_strip(state, times, args.fraction, args.resolution, box, labels,
                                  width_px=width, height_px=height, **common, **render_options)
        metadata = figure_metadata(state, args.fraction, None, args.resolution, command="figure",
                                   times_au=times, view=view, px_per_a0=renders[0].px_per_a0)
    elif len(states) == 1:
        surface = _surface(states[0], args)
        fig, render = figure_3d(surface, width, height, title=args.title, **common, **render_options)
        metadata = figure_metadata(states[0], args.fraction, surface.level, args.resolution,
                                   command="figure", fraction_enclosed=surface.fraction_enclosed,
                                   triangles=int(len(surface.faces)), view=view,
                                   px_per_a0=render.px_per_a0)
    else:
        surfaces = [_surface(s, args) for s in states]
        fig, renders = small_multiples(surfaces, [surface_title(s) for s in surfaces], args.columns,
                                       width, height, **common, **render_options)
        metadata = figure_metadata(None, args.fraction, None, args.resolution, command="figure",
                                   panels=[_panel_record(s) for s in surfaces], view=view,
                                   px_per_a0=renders[0].px_per_a0)
    # labels stay text in SVG (not outlines) and embed as TrueType in PDF, as journals ask
    with mpl.rc_context({"svg.fonttype": "none", "pdf.fonttype": 42}):
        save_figure(fig, out, metadata, dpi=args.dpi, transparent=args.transparent)
    if args.report:
        write_report(args.report, metadata | {"file": str(out)})
    print(f"wrote {out}")
    return 0
