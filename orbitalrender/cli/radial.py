"""``orbitalrender radial``: R(r), r^2 R(r)^2 and P(r' < r) of one or several states (picture step).

Each STATE must be one (n, l) shell on one centre (an eigenstate, a real orbital
or a combination within one shell).  Radial nodes, the most probable radius and
the radius holding FRACTION are marked and listed; the report carries them too.
"""

from __future__ import annotations

import argparse

from ..atomic import check_writable
from ..errors import UserInputError
from ..picture.output import (
    check_dpi,
    check_output_paths,
    default_output_path,
    save_figure,
    write_report,
)
from ..picture.radialplot import RADIAL_QUANTITIES, radial_figure, radial_metadata
from ..state.limits import check_fraction
from .common import add_picture_arguments, add_state_arguments, state_from_args

__all__ = ["register", "run", "parse_quantities"]

_DEFAULT_FRACTION = 0.9
_DEFAULT_DPI = 200.0


def parse_quantities(text: str) -> list[str]:
    """``"all"`` or a comma-separated list of R, density, cumulative.

    Examples
    --------
    >>> parse_quantities("density,R")
    ['density', 'R']
    >>> parse_quantities("all")
    ['R', 'density', 'cumulative']
    """
    if text.strip().lower() == "all":
        return list(RADIAL_QUANTITIES)
    names = [t.strip() for t in text.split(",") if t.strip()]
    bad = [t for t in names if t not in RADIAL_QUANTITIES]
    if bad or not names:
        raise UserInputError(f"unknown --quantity {text!r}: use all, or one or more of "
                             f"{', '.join(RADIAL_QUANTITIES)} separated by commas")
    return list(dict.fromkeys(names))


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "radial", help="plot R(r), r^2 R^2 and P(r' < r) with nodes and radii marked",
        description="Plot the radial function R(r), the radial density r^2 R(r)^2 and the "
                    "cumulative probability P(r' < r) of each STATE, with the radial nodes, the "
                    "most probable radius and the radius holding FRACTION marked.")
    add_state_arguments(p, many=True)
    p.add_argument("--quantity", default="all", metavar="Q",
                   help="R, density, cumulative, a comma-separated list of them, or all (default)")
    p.add_argument("--fraction", type=float, default=_DEFAULT_FRACTION, metavar="F",
                   help=f"mark the radius holding this probability, between 0 and 1 "
                        f"(default {_DEFAULT_FRACTION:g})")
    add_picture_arguments(p, "from the states", "the marked values", _DEFAULT_DPI)
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    quantities = parse_quantities(args.quantity)
    check_fraction(args.fraction, "--fraction")
    check_dpi(args.dpi)
    out = check_output_paths(args.out, args.report)
    states = [state_from_args(args, text) for text in args.state]
    labels = [s.label for s in states]
    if out is None:
        out = default_output_path(" ".join(labels), "radial")
        check_writable(out)
    fig, marks = radial_figure(states, quantities, args.fraction, args.units, title=args.title)
    metadata = radial_metadata(states, marks, quantities, args.units, dpi=args.dpi)
    save_figure(fig, out, metadata, dpi=args.dpi)
    if args.report:
        write_report(args.report, metadata | {"file": str(out)})
    print(f"wrote {out}")
    return 0
