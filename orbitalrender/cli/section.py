"""``orbitalrender section``: psi on a plane, coloured by phase, with nodal lines (picture step).

The plane is a coordinate plane (``--plane xz``) or any plane given by its normal
(``--normal 1,1,0``), at ``--offset`` a0 from the origin.  psi is evaluated exactly
on the pixels for a STATE and interpolated for a ``--field`` file.  Every option
is checked before any work is done, and the file is written atomically.
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from ..atomic import check_writable
from ..colormap import PHASE_SCHEMES
from ..errors import UserInputError
from ..picture.density import DENSITY_SCALES
from ..picture.nodal import section_lines
from ..picture.output import (
    check_dpi,
    check_output_paths,
    default_output_path,
    save_figure,
    write_report,
)
from ..picture.plane import MAX_PIXELS, MIN_PIXELS, PLANE_NAMES, plane
from ..picture.section import cross_section
from ..picture.section_figure import section_figure, section_metadata
from ..state.limits import check_fraction
from .common import (
    add_field_arguments,
    add_picture_arguments,
    add_state_arguments,
    field_from_args,
    state_from_args,
)

__all__ = ["register", "run", "parse_vector"]

_DEFAULT_FRACTION = 0.9
_DEFAULT_PIXELS = 400
_DEFAULT_DPI = 200.0
#: Largest logarithmic range offered: float64 densities span far more, but beyond 12
#: decades the picture shows round-off of the tails rather than the state.
_MAX_DECADES = 12.0


def parse_vector(text: str, name: str = "--normal") -> tuple[float, float, float]:
    """``"nx,ny,nz"`` -> three finite floats.

    Examples
    --------
    >>> parse_vector("1, 1,0")
    (1.0, 1.0, 0.0)
    """
    parts = [p.strip() for p in text.strip().strip("()").split(",")]
    try:
        values = tuple(float(p) for p in parts)
    except ValueError:
        values = ()
    if len(values) != 3 or not all(math.isfinite(v) for v in values):
        raise UserInputError(f"cannot read {name} {text!r}: give three numbers separated by commas, "
                             "e.g. 1,1,0")
    return values


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "section", help="draw psi on a plane: hue = phase, lightness = density, with nodal lines",
        description="Draw psi of STATE on a plane through it: hue from the phase, lightness from "
                    "|psi|^2, the cut through the surface holding FRACTION, nodal lines and a phase "
                    "legend.")
    add_state_arguments(p, optional=True)
    add_field_arguments(p, "cut")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--plane", choices=PLANE_NAMES, default=None,
                       help="a coordinate plane (default xz)")
    where.add_argument("--normal", default=None, metavar="NX,NY,NZ",
                       help="the plane's normal vector instead of a coordinate plane")
    p.add_argument("--offset", type=float, default=0.0, metavar="D",
                   help="distance of the plane from the origin along its normal, a0 (for --plane: "
                        "the coordinate not in the plane; default 0)")
    p.add_argument("--fraction", type=float, default=_DEFAULT_FRACTION, metavar="F",
                   help="draw the cut through the surface enclosing this probability, between 0 and 1 "
                        f"(default {_DEFAULT_FRACTION:g})")
    p.add_argument("--no-contour", action="store_true", help="leave out that contour")
    p.add_argument("--no-nodes", action="store_true", help="leave out the nodal lines")
    p.add_argument("--extent", type=float, default=None, metavar="HALF_WIDTH_A0",
                   help="half the side of the square shown, a0 (default: from the state)")
    p.add_argument("--pixels", type=int, default=_DEFAULT_PIXELS, metavar="N",
                   help=f"pixels per side at which psi is evaluated, {MIN_PIXELS} to {MAX_PIXELS} "
                        f"(default {_DEFAULT_PIXELS})")
    p.add_argument("--scale", choices=DENSITY_SCALES, default="linear",
                   help="lightness from |psi|^2 / max, linear (default) or logarithmic")
    p.add_argument("--decades", type=float, default=3.0,
                   help="range of the logarithmic scale in powers of ten (default 3)")
    p.add_argument("--phase-map", choices=PHASE_SCHEMES, default="uniform",
                   help="uniform (constant lightness), cvd (red-green safe) or sign (real psi)")
    add_picture_arguments(p, "state and plane", "what was drawn", _DEFAULT_DPI)
    p.set_defaults(run=run)


def _check_options(args: argparse.Namespace):
    """Refuse bad options before any work; returns (plane, out path)."""
    if (args.field is None) == (args.state is None):
        raise UserInputError("give either a STATE or --field FILE")
    if not args.no_contour:
        check_fraction(args.fraction, "--fraction")
    if not MIN_PIXELS <= args.pixels <= MAX_PIXELS:
        raise UserInputError(f"--pixels must be {MIN_PIXELS} to {MAX_PIXELS}, got {args.pixels}")
    if args.extent is not None and not (args.extent > 0 and math.isfinite(args.extent)):
        raise UserInputError(f"--extent must be a positive number of a0, got {args.extent:g}")
    if not 0.0 < args.decades <= _MAX_DECADES:
        raise UserInputError(f"--decades must lie in (0, {_MAX_DECADES:g}], got {args.decades:g}")
    check_dpi(args.dpi)
    if not math.isfinite(args.offset):
        raise UserInputError(f"--offset must be finite, got {args.offset:g}")
    spec = parse_vector(args.normal) if args.normal is not None else (args.plane or "xz")
    where = plane(spec, args.offset)
    return where, check_output_paths(args.out, args.report)


def run(args: argparse.Namespace) -> int:
    where, out = _check_options(args)
    if args.field is not None:
        source = field_from_args(args)
        label = Path(args.field).stem
    else:
        source = state_from_args(args)
        label = source.label
    if out is None:
        out = default_output_path(label, "section")
        check_writable(out)
    section = cross_section(source, where, args.extent, args.pixels,
                            None if args.no_contour else args.fraction)
    lines = section_lines(section, nodes=not args.no_nodes)
    style = dict(scheme=args.phase_map, scale=args.scale, decades=args.decades, units=args.units)
    fig = section_figure(section, lines, **style, title=args.title, label=label)
    metadata = section_metadata(section, lines, **style, source=args.field, dpi=args.dpi)
    save_figure(fig, out, metadata, dpi=args.dpi)
    if args.report:
        write_report(args.report, metadata | {"file": str(out)})
    print(f"wrote {out}")
    return 0
