"""Jobs step for reports: derived quantities of a STATE or of a field file, and of their surface.

The report is built as a dict by :func:`describe_job` (from :func:`describe_state`
or :func:`describe_field`, and :func:`describe_surface` when a fraction is given);
:func:`format_report` and :func:`report_json` turn it into aligned text or one JSON
object.  Options that add keys (for example from a later pipeline step) add their
entries to that dict in :func:`describe_job`.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any, ClassVar

from ..errors import UserInputError
from ..state.limits import FRACTION_MAX
from .option import option
from .shared import FieldOptions, LatticeOptions, StateOptions, box_of, dtype_of

__all__ = ["DescribeOptions", "describe_state", "describe_field", "describe_surface", "describe_job",
           "format_report", "report_json"]

# Key suffix -> unit shown in the text report, longest first.
_UNITS = (("_a0_2", "a0^2"), ("_a0_3", "a0^3"), ("_per_a0", "1/a0"), ("_a0", "a0"),
          ("_eV", "eV"), ("_hartree", "hartree"), ("_deg", "deg"))
_SIGNIFICANT = 10  # digits in the text report: more than any test or figure needs


@dataclass(frozen=True)
class DescribeOptions(LatticeOptions, FieldOptions, StateOptions):
    """Options of a report (the describe command)."""

    STATE_NARGS: ClassVar[str] = "?"
    states: tuple[str, ...] = ()
    json: bool = option(False, "print one JSON object instead of text", type="bool", key="")
    fraction: float | None = option(
        None, "also extract the surface enclosing probability F (0 < F <= 0.9999) and report its "
              "level, parts, Euler characteristics, genus, volumes and area", lo=0, hi=FRACTION_MAX,
        lo_open=True, metavar="F")


def describe_state(state) -> dict:
    """Report of a state: the fields of :func:`orbitalrender.state.properties.state_properties`.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> d = describe_state(eigenstate(2, 1, 0))
    >>> d["radial_nodes"], d["angular_nodes"], round(d["mean_radius_a0"], 9)
    (0, 1, 5.0)
    """
    from ..state.properties import state_properties

    return state_properties(state).as_dict()


def describe_field(lattice, source: str = "") -> dict:
    """Report of a field on a lattice: grid, norm sum |psi|^2 dV and the largest |psi|.

    Examples
    --------
    >>> import numpy as np
    >>> from orbitalrender.lattice.grid import Lattice
    >>> lat = Lattice(np.full((2, 2, 2), 0.5 + 0j), (0.0, 0.0, 0.0), (1.0, 1.0, 1.0))
    >>> describe_field(lat)["norm"]
    2.0
    """
    import numpy as np

    from ..state.phase import real_rotation

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


def describe_surface(source, fraction: float, *, options: LatticeOptions | None = None) -> dict:
    """Report of the surface enclosing `fraction`: level, enclosed fraction and topology.

    Examples
    --------
    >>> from orbitalrender.state.model import real_orbital
    >>> d = describe_surface(real_orbital(2, 1, 0), 0.9, options=LatticeOptions(resolution=32))
    >>> d["components"], d["genus"], d["closed"]
    (2, [0, 0], True)
    """
    from ..state.model import State
    from ..surface.extract import extract_surface
    from ..surface.topology import topology

    options = options if options is not None else LatticeOptions()
    if isinstance(source, State):
        surface = extract_surface(source, fraction, resolution=options.resolution,
                                  box=box_of(options, source), dtype=dtype_of(options))
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


def report_json(report: dict) -> str:
    """The report as one line of JSON (refusing NaN and infinity, which JSON cannot hold)."""
    return json.dumps(_finite_json(report))


def describe_job(source, options: DescribeOptions, *, source_name: str = "") -> dict[str, Any]:
    """The report of `source` (a State, or a user field's Lattice read from `source_name`)."""
    from ..state.model import State

    report = describe_state(source) if isinstance(source, State) else describe_field(source, source_name)
    if options.fraction is not None:
        if not isinstance(source, State) and (options.box_a0 is not None or options.resolution != 128):
            raise UserInputError("--box and --resolution apply to a STATE; a field has its own grid")
        report.update(describe_surface(source, options.fraction, options=options))
    return report
