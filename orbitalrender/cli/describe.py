"""``orbitalrender describe``: derived quantities of a STATE (state step) or of a field file (lattice step).

The report is built as a dict by :func:`describe_state` or :func:`describe_field`
and printed by :func:`run` as aligned text or as one JSON object.  Options that add
keys (for example from a later pipeline step) add their entries to that dict in
:func:`run` before it is printed.
"""

from __future__ import annotations

import argparse
import json
import math

import numpy as np

from ..errors import UserInputError
from ..lattice.grid import Lattice
from ..state.model import State
from ..state.phase import real_rotation
from ..state.properties import state_properties
from .common import (
    add_field_arguments,
    add_lattice_arguments,
    add_state_arguments,
    field_from_args,
    lattice_dtype,
    state_from_args,
)

__all__ = ["describe_state", "describe_field", "describe_surface", "format_report", "register", "run"]

# Key suffix -> unit shown in the text report, longest first.
_UNITS = (("_a0_2", "a0^2"), ("_a0_3", "a0^3"), ("_per_a0", "1/a0"), ("_a0", "a0"),
          ("_eV", "eV"), ("_hartree", "hartree"), ("_deg", "deg"))
_SIGNIFICANT = 10  # digits in the text report: more than any test or figure needs


def describe_state(state: State) -> dict:
    """Report of a state: the fields of :func:`orbitalrender.state.properties.state_properties`.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> d = describe_state(eigenstate(2, 1, 0))
    >>> d["radial_nodes"], d["angular_nodes"], round(d["mean_radius_a0"], 9)
    (0, 1, 5.0)
    """
    return state_properties(state).as_dict()


def describe_field(lattice: Lattice, source: str = "") -> dict:
    """Report of a field on a lattice: grid, norm sum |psi|^2 dV and the largest |psi|.

    Examples
    --------
    >>> import numpy as np
    >>> lat = Lattice(np.full((2, 2, 2), 0.5 + 0j), (0.0, 0.0, 0.0), (1.0, 1.0, 1.0))
    >>> describe_field(lat)["norm"]
    2.0
    """
    density = lattice.density()
    return {
        "kind": "field",
        "source": source,
        "shape": list(lattice.shape),
        "dtype": str(lattice.values.dtype),
        "origin_a0": list(lattice.origin_a0),
        "spacing_a0": list(lattice.spacing_a0),
        "extent_a0": [list(e) for e in lattice.extent_a0()],
        "norm": float(np.sum(density, dtype=np.float64) * lattice.voxel_volume_a0_3),
        "max_abs_psi": float(np.sqrt(np.max(density))),
        "is_real": real_rotation(lattice.values) is not None,  # up to one global phase
    }


def describe_surface(source: State | Lattice, fraction: float, resolution: int = 128,
                     half_width_a0: float | None = None, dtype=np.complex64) -> dict:
    """Report of the surface enclosing `fraction`: level, enclosed fraction and topology.

    Examples
    --------
    >>> from orbitalrender.state.model import real_orbital
    >>> d = describe_surface(real_orbital(2, 1, 0), 0.9, resolution=32)
    >>> d["components"], d["genus"], d["closed"]
    (2, [0, 0], True)
    """
    from ..lattice.grid import Box
    from ..lattice.sampler import default_box
    from ..surface.extract import extract_surface
    from ..surface.topology import topology

    if isinstance(source, State):
        box = None
        if half_width_a0 is not None:
            box = Box(default_box(source).centre_a0, half_width_a0)
        surface = extract_surface(source, fraction, resolution=resolution, box=box, dtype=dtype)
    else:
        surface = extract_surface(source, fraction)
    report = {"fraction_requested": surface.fraction_requested, "level": surface.level,
              "fraction_enclosed": surface.fraction_enclosed}
    if surface.fraction_error is not None:
        report["fraction_error"] = surface.fraction_error
    report["lattice_shape"] = list(surface.lattice_shape)
    report.update(topology(surface).as_dict())
    return report


def _label(key: str) -> str:
    for suffix, unit in _UNITS:
        if key.endswith(suffix):
            return f"{key[:-len(suffix)].replace('_', ' ')} ({unit})"
    return key.replace("_", " ")


def _text(value) -> str:
    if value is None:
        return "not defined"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.{_SIGNIFICANT}g}"
    if isinstance(value, dict):
        return ", ".join(f"{k}={'(' + _text(v) + ')' if isinstance(v, list) else _text(v)}"
                         for k, v in value.items())
    if isinstance(value, list):
        return "none" if not value else ", ".join(_text(v) for v in value)
    return str(value)


def format_report(report: dict) -> str:
    """The report as aligned ``name (unit): value`` lines; a list of terms gets one line each.

    Examples
    --------
    >>> print(format_report({"mean_radius_a0": 1.5, "radial_node_radii_a0": []}))
    mean radius (a0)        : 1.5
    radial node radii (a0)  : none
    """
    rows: list[tuple[str, str]] = []
    for key, value in report.items():
        if isinstance(value, list) and value and isinstance(value[0], dict):
            rows += [(f"{_label(key)} {i + 1}", _text(v)) for i, v in enumerate(value)]
        else:
            rows.append((_label(key), _text(value)))
    width = max(len(name) for name, _ in rows) + 2
    return "\n".join(f"{name:<{width}}: {text}" for name, text in rows)


def _finite_json(value):
    """NaN/inf would make invalid JSON; none are expected, but refuse to print them silently."""
    if isinstance(value, float) and not math.isfinite(value):
        raise ArithmeticError(f"non-finite value {value} in the report")
    if isinstance(value, dict):
        return {k: _finite_json(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_finite_json(v) for v in value]
    return value


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``describe`` subcommand."""
    p = subparsers.add_parser(
        "describe", help="print energy, nodes, radii and expectation values of a state",
        description="Print the derived quantities of STATE (energy, nodes, <r>, <r^2>, <1/r>, "
                    "most probable radius, radius holding 90 %%), or a summary of a field file.")
    add_state_arguments(p, optional=True)
    add_field_arguments(p, "describe")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    p.add_argument("--fraction", type=float, default=None, metavar="F",
                   help="also extract the surface enclosing probability F (0 < F < 1) and report "
                        "its level, parts, Euler characteristics, genus, volumes and area")
    add_lattice_arguments(p, default_resolution=128)
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Build the report for the parsed options and print it."""
    if (args.field is None) == (args.state is None):
        raise UserInputError("give either a STATE or --field FILE")
    if args.field is not None:
        lattice = field_from_args(args)
        report = describe_field(lattice, args.field)
        source = lattice
    else:
        source = state_from_args(args)
        report = describe_state(source)
    if args.fraction is not None:
        if args.field is not None and (args.box is not None or args.resolution != 128):
            raise UserInputError("--box and --resolution apply to a STATE; a field has its own grid")
        dtype = lattice_dtype(args)
        report.update(describe_surface(source, args.fraction, args.resolution, args.box, dtype))
    print(json.dumps(_finite_json(report)) if args.json else format_report(report))
    return 0
