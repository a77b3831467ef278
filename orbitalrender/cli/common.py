"""Options shared by several subcommands: the STATE and its physics, and the lattice."""

from __future__ import annotations

import argparse

from ..lattice.grid import Box
from ..lattice.sampler import PRECISIONS, default_box
from ..state.model import State
from ..state.notation import parse_state
from ..state.units import femtoseconds_to_au, nucleus_reduced_mass_ratio

__all__ = ["add_state_arguments", "state_from_args", "add_lattice_arguments", "add_field_arguments",
           "field_from_args", "add_picture_arguments", "lattice_dtype", "box_from_args"]


def add_state_arguments(parser: argparse.ArgumentParser, many: bool = False,
                        optional: bool = False) -> None:
    """STATE (see the README for the notation), --Z, --nucleus and --time.

    With `optional`, STATE may be left out (for a command that can read a field instead).
    """
    nargs = ("*" if optional else "+") if many else ("?" if optional else None)
    parser.add_argument("state", nargs=nargs, metavar="STATE",
                        help="e.g. 3,2,-1 or 3dz2 or '1s@(0,0,-0.7) + 1s@(0,0,0.7)'")
    parser.add_argument("--Z", type=float, default=1.0, help="nuclear charge (default 1)")
    parser.add_argument("--nucleus", default="infinite",
                        help="infinite (default), hydrogen, deuterium, positronium, muonic-hydrogen, "
                             "or a nucleus-to-electron mass ratio")
    parser.add_argument("--time", type=float, default=0.0,
                        help="time at which a superposition is drawn (default 0)")
    parser.add_argument("--time-unit", choices=("au", "fs"), default="au",
                        help="unit of --time: atomic units (hbar/E_h) or femtoseconds")


def state_from_args(args: argparse.Namespace, text: str | None = None) -> State:
    """The State that the parsed options describe (`text` overrides args.state)."""
    t = args.time if args.time_unit == "au" else femtoseconds_to_au(args.time)
    return parse_state(args.state if text is None else text, Z=args.Z,
                       reduced_mass_ratio=nucleus_reduced_mass_ratio(args.nucleus), time_au=t)


def add_lattice_arguments(parser: argparse.ArgumentParser, default_resolution: int = 128) -> None:
    """--resolution, --box (half-width in a0) and --precision."""
    parser.add_argument("--resolution", type=int, default=default_resolution,
                        help=f"lattice points per axis (default {default_resolution})")
    parser.add_argument("--box", type=float, default=None, metavar="HALF_WIDTH_A0",
                        help="half-width of the lattice cube in a0 (default: from the state)")
    parser.add_argument("--precision", choices=tuple(PRECISIONS), default="single",
                        help="complex64 or complex128 lattice values (default single)")


def lattice_dtype(args: argparse.Namespace):
    """The numpy dtype that --precision names."""
    return PRECISIONS[args.precision]


def box_from_args(args: argparse.Namespace, state: State) -> Box | None:
    """The cube that --box asks for (half-width about the middle of the state's centres), or None."""
    return Box(default_box(state).centre_a0, args.box) if args.box is not None else None


def add_field_arguments(parser: argparse.ArgumentParser, what: str = "use") -> None:
    """--field FILE and the grid options of an .npy field (--spacing-a0, --origin-a0)."""
    parser.add_argument("--field", metavar="FILE", default=None,
                        help=f"{what} psi stored in an .npy/.npz file instead of a STATE")
    parser.add_argument("--spacing-a0", type=float, default=None,
                        help="grid step of an .npy field in a0 (an .npz file carries its own)")
    parser.add_argument("--origin-a0", type=float, nargs=3, default=None, metavar=("X", "Y", "Z"),
                        help="coordinates of the first grid point of an .npy field (default: centred)")


def field_from_args(args: argparse.Namespace):
    """The user field (a Lattice with ``state=None``) that --field and its grid options name."""
    from ..lattice.userfield import load_field

    return load_field(args.field, args.spacing_a0, args.origin_a0)


def add_picture_arguments(parser: argparse.ArgumentParser, title_default: str, report_what: str,
                          default_dpi: float = 200.0, width_in: float = 6.4) -> None:
    """--units, --title, --dpi, --out and --report of a command that draws one matplotlib figure."""
    from ..state.units import LENGTH_UNITS_PER_A0

    parser.add_argument("--units", choices=tuple(LENGTH_UNITS_PER_A0), default="a0",
                        help="length unit of the axes (default a0)")
    parser.add_argument("--title", default=None, help=f"title (default: {title_default})")
    parser.add_argument("--dpi", type=float, default=default_dpi,
                        help=f"dots per inch of PNG output (default {default_dpi:g}; the figure is "
                             f"{width_in:g} in wide)")
    parser.add_argument("--out", metavar="FILE", default=None,
                        help="output picture; the suffix .png, .svg or .pdf sets the format "
                             "(default: named after the state, PNG, in the current folder)")
    parser.add_argument("--report", metavar="FILE.json", help=f"also write {report_what} as JSON")
