"""Jobs step for radial plots: R(r), r^2 R(r)^2 and P(r' < r) of one or several states.

Each STATE must be one (n, l) shell on one centre (an eigenstate, a real orbital
or a combination within one shell).  Radial nodes, the most probable radius and
the radius holding `fraction` are marked and listed; the metadata carries them too.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

from ..state.limits import FRACTION_MAX
from .option import option
from .shared import FRACTION, FileOptions, PictureOptions, StateOptions

__all__ = ["RadialOptions", "RADIAL_QUANTITIES", "parse_quantities", "radial_job"]

#: What a radial plot can show (``picture.radialplot.RADIAL_QUANTITIES``).
RADIAL_QUANTITIES = ("R", "density", "cumulative")


def parse_quantities(value: str | Sequence[str]) -> tuple[str, ...]:
    """``"all"``, a comma-separated list or a list of R, density, cumulative -> their names.

    Examples
    --------
    >>> parse_quantities("density,R")
    ('density', 'R')
    >>> parse_quantities(["all"])
    ('R', 'density', 'cumulative')
    """
    text = value if isinstance(value, str) else ",".join(value)
    if text.strip().lower() == "all":
        return RADIAL_QUANTITIES
    names = [t.strip() for t in text.split(",") if t.strip()]
    bad = [t for t in names if t not in RADIAL_QUANTITIES]
    if bad or not names:
        raise ValueError(f"unknown quantity {text!r}: use all, or one or more of "
                         f"{', '.join(RADIAL_QUANTITIES)}")
    return tuple(dict.fromkeys(names))


@dataclass(frozen=True)
class RadialOptions(FileOptions, PictureOptions, StateOptions):
    """Options of a radial plot (gallery kind ``radial``; the radial command)."""

    STATE_NARGS: ClassVar[str] = "+"
    states: tuple[str, ...] = ()
    quantity: tuple[str, ...] = option(
        ("all",), "R, density, cumulative, a list of them, or all", type="texts", metavar="Q",
        check=parse_quantities,
        expected="'all', or one or a list of 'R', 'density', 'cumulative'")
    fraction: float = option(FRACTION, "mark the radius holding this probability, above 0 and at most 0.9999",
                             lo=0, hi=FRACTION_MAX, lo_open=True, metavar="F")
    title: str | None = option(None, "title (default: from the states)", type="text")


def radial_job(states: Sequence, options: RadialOptions) -> tuple[Any, dict[str, Any]]:
    """Plot the radial quantities of `states`; returns the figure and its metadata."""
    from ..picture.radialplot import radial_figure, radial_metadata

    quantities = list(parse_quantities(options.quantity))
    fig, marks = radial_figure(list(states), quantities, fraction=options.fraction, units=options.units,
                               title=options.title, text_size_pt=options.text_size_pt)
    return fig, radial_metadata(list(states), marks, quantities, units=options.units, dpi=options.dpi)
