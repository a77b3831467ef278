"""Picture step, radial plots: R(r), r^2 R(r)^2 and P(r < R) of one or several states, marked.

Each state must be one (n, l) shell on one centre -- an eigenstate |n l m>, a real
orbital, or any combination within one shell -- so that its radial part is R_nl.
The marks come from :mod:`orbitalrender.state.properties` (radial node radii, the
most probable radius) and :mod:`orbitalrender.state.radial` (the radius holding
F), all computed numerically there:

* radial nodes: dotted vertical lines, and open circles on the R(r) curve;
* the most probable radius (maximum of r^2 R^2): a dashed vertical line and a
  filled triangle on the density curve;
* the radius holding F: a dash-dot vertical line, and a filled square on the
  cumulative curve at height F.

Lengths are drawn in a0, angstrom, nm or pm; R is converted with them (unit^-3/2),
r^2 R^2 too (unit^-1), so every curve stays normalised in the unit shown.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import matplotlib.figure
import numpy as np
from matplotlib.lines import Line2D

from ..state.hydrogen import radial_function
from ..state.limits import check_fraction
from ..state.model import State
from ..state.notation import pretty_label
from ..state.properties import most_probable_radius, radial_node_radii, shell_of
from ..state.radial import radial_cumulative, radius_holding
from ..state.units import a0_to, unit_label

__all__ = [
    "RADIAL_QUANTITIES",
    "RadialMarks",
    "radial_marks",
    "radial_range_a0",
    "draw_radial",
    "radial_figure",
    "radial_metadata",
]

RADIAL_QUANTITIES = ("R", "density", "cumulative")
#: The plots run out to the radius holding this share of the widest state, ...
_RANGE_FRACTION = 0.999
#: ... times this margin.
_RANGE_PADDING = 1.05
#: Points per curve: smooth at print size for n up to about 10 (n - 1 nodes per curve).
_POINTS = 1200
#: Line styles of the marks (matplotlib dash specs).
_NODE_STYLE, _PEAK_STYLE, _HOLD_STYLE = ":", (0, (5.0, 2.5)), (0, (6.0, 2.0, 1.5, 2.0))
#: Colours of the states, in order: the Okabe-Ito palette, chosen to stay distinguishable
#: under the common colour-vision deficiencies (M. Okabe and K. Ito, "Color Universal
#: Design", 2002; values as commonly published).
_STATE_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
_AXIS_LABELS = {"R": r"$R_{nl}(r)$", "density": r"$r^2 R_{nl}(r)^2$", "cumulative": r"$P(r' < r)$"}
_POWERS = {"R": -1.5, "density": -1.0, "cumulative": 0.0}


@dataclass(frozen=True)
class RadialMarks:
    """The radial quantities marked on the plots of one state (lengths in a0).

    Attributes
    ----------
    label : str
    n, l : int
    Z, reduced_mass_ratio : float
    node_radii_a0 : tuple of float
        Radii where R_nl changes sign (n - l - 1 of them).
    most_probable_a0 : float
        Maximum of r^2 R_nl^2.
    fraction : float
        F.
    holding_a0 : float
        Radius of the sphere holding F of the probability.
    """

    label: str
    n: int
    l: int
    Z: float
    reduced_mass_ratio: float
    node_radii_a0: tuple[float, ...]
    most_probable_a0: float
    fraction: float
    holding_a0: float

    def as_dict(self) -> dict:
        """JSON-ready dict."""
        return {"label": self.label, "n": self.n, "l": self.l, "Z": self.Z,
                "reduced_mass_ratio": self.reduced_mass_ratio,
                "node_radii_a0": list(self.node_radii_a0), "most_probable_radius_a0": self.most_probable_a0,
                "fraction": self.fraction, "radius_holding_fraction_a0": self.holding_a0}


def _shell(state: State) -> tuple[int, int]:
    shell = shell_of(state)
    if shell is None:
        name = state.label or "the state"
        raise ValueError(f"a radial plot needs one (n, l) shell on one centre; {name} mixes "
                         "several shells or centres, so it has no single radial function")
    return shell


def radial_marks(state: State, fraction: float = 0.9) -> RadialMarks:
    """Node radii, most probable radius and the radius holding `fraction` of `state`.

    Raises
    ------
    ValueError
        If the terms of `state` do not share n, l and the centre, or F is not in (0, 1).

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> m = radial_marks(eigenstate(2, 0, 0))
    >>> [round(r, 9) for r in m.node_radii_a0], round(m.most_probable_a0, 6)
    ([2.0], 5.236068)
    """
    n, l = _shell(state)
    f = check_fraction(fraction)
    Z, mu = state.Z, state.reduced_mass_ratio
    return RadialMarks(state.label, n, l, Z, mu, radial_node_radii(n, l, Z, mu),
                       most_probable_radius(n, l, Z, mu), f, radius_holding(n, l, f, Z, mu))


def radial_range_a0(states: Sequence[State]) -> float:
    """Upper end (a0) of the radial axis: 1.05 times the radius holding 99.9 % of the widest state."""
    reach = 0.0
    for s in states:
        n, l = _shell(s)
        reach = max(reach, radius_holding(n, l, _RANGE_FRACTION, s.Z, s.reduced_mass_ratio))
    return _RANGE_PADDING * reach


def _curve(state: State, quantity: str, r_a0: np.ndarray) -> np.ndarray:
    n, l = _shell(state)
    if quantity == "R":
        return radial_function(n, l, r_a0, state.Z, state.reduced_mass_ratio)
    if quantity == "density":
        return (r_a0 * radial_function(n, l, r_a0, state.Z, state.reduced_mass_ratio)) ** 2
    if quantity == "cumulative":
        return radial_cumulative(n, l, r_a0, state.Z, state.reduced_mass_ratio)
    raise ValueError(f"unknown radial quantity {quantity!r}: use one of {', '.join(RADIAL_QUANTITIES)}")


def _axis_unit(quantity: str, units: str) -> str:
    p = _POWERS[quantity]
    if p == 0.0:
        return ""
    power = "-3/2" if p == -1.5 else "-1"
    return f" ({unit_label(units)}$^{{{power}}}$)"


def draw_radial(ax, states: Sequence[State], quantity: str, fraction: float = 0.9, units: str = "a0",
                r_max_a0: float | None = None, fontsize: float = 9.0) -> list[RadialMarks]:
    """Draw one radial `quantity` of every state into `ax`, with the marks.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    states : sequence of State
        Each one (n, l) shell on one centre.
    quantity : {"R", "density", "cumulative"}
        R_nl(r), r^2 R_nl(r)^2 or P(r' < r).
    fraction : float
        F of the radius holding F.
    units : {"a0", "angstrom", "nm", "pm"}
    r_max_a0 : float, optional
        End of the radial axis (default :func:`radial_range_a0`).
    fontsize : float

    Returns
    -------
    list of RadialMarks
        One per state, in order.
    """
    if quantity not in RADIAL_QUANTITIES:
        raise ValueError(f"unknown radial quantity {quantity!r}: use one of {', '.join(RADIAL_QUANTITIES)}")
    if not states:
        raise ValueError("a radial plot needs at least one state")
    k = a0_to(units)
    r_max = radial_range_a0(states) if r_max_a0 is None else float(r_max_a0)
    r = np.linspace(0.0, r_max, _POINTS)
    scale = k ** _POWERS[quantity]
    out = []
    for i, state in enumerate(states):
        colour = _STATE_COLOURS[i % len(_STATE_COLOURS)]
        marks = radial_marks(state, fraction)
        out.append(marks)
        y = _curve(state, quantity, r) * scale
        name = pretty_label(state.label) if state.label else f"state {i + 1}"
        ax.plot(r * k, y, color=colour, lw=1.3, label=name, zorder=3)
        for node in marks.node_radii_a0:
            ax.axvline(node * k, color=colour, ls=_NODE_STYLE, lw=0.9, zorder=1)
        ax.axvline(marks.most_probable_a0 * k, color=colour, ls=_PEAK_STYLE, lw=0.9, zorder=1)
        ax.axvline(marks.holding_a0 * k, color=colour, ls=_HOLD_STYLE, lw=0.9, zorder=1)
        if quantity == "R" and marks.node_radii_a0:
            ax.plot(np.array(marks.node_radii_a0) * k, np.zeros(len(marks.node_radii_a0)), ls="none",
                    marker="o", mfc="white", mec=colour, ms=4.5, zorder=4)
        elif quantity == "density":
            rm = marks.most_probable_a0
            ax.plot([rm * k], _curve(state, "density", np.array([rm])) * scale, ls="none", marker="v",
                    color=colour, ms=5, zorder=4)
        elif quantity == "cumulative":
            ax.plot([marks.holding_a0 * k], [marks.fraction], ls="none", marker="s", color=colour, ms=4,
                    zorder=4)
    if quantity == "R":
        ax.axhline(0.0, color="0.5", lw=0.6, zorder=0)
    if quantity == "cumulative":
        ax.axhline(fraction, color="0.5", lw=0.6, zorder=0)
        ax.set_ylim(0.0, 1.02)
        ax.text(0.995, fraction, f"F = {fraction:g}", transform=ax.get_yaxis_transform(), ha="right",
                va="bottom", fontsize=fontsize - 1.5, color="0.35")
    else:
        lo, hi = ax.get_ylim()
        ax.set_ylim(min(lo, 0.0), hi)
    ax.set_xlim(0.0, r_max * k)
    ax.set_ylabel(_AXIS_LABELS[quantity] + _axis_unit(quantity, units), fontsize=fontsize)
    ax.tick_params(labelsize=fontsize - 1, direction="out", length=3)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    return out


def _mark_legend_handles(fraction: float) -> list[Line2D]:
    return [Line2D([], [], color="0.25", ls=_NODE_STYLE, lw=0.9, marker="o", mfc="white", ms=4,
                   label="radial node"),
            Line2D([], [], color="0.25", ls=_PEAK_STYLE, lw=0.9, marker="v", ms=4,
                   label="most probable $r$"),
            Line2D([], [], color="0.25", ls=_HOLD_STYLE, lw=0.9, marker="s", ms=3.5,
                   label=f"$r$ holding {100 * fraction:.4g} %")]


def radial_figure(states: Sequence[State], quantities: Sequence[str] = RADIAL_QUANTITIES,
                  fraction: float = 0.9, units: str = "a0", title: str | None = None,
                  width_in: float = 6.4) -> tuple[matplotlib.figure.Figure, list[RadialMarks]]:
    """A figure with one panel per quantity (shared radial axis), legends of states and marks.

    Returns
    -------
    (Figure, list of RadialMarks)

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> fig, marks = radial_figure([eigenstate(3, 0, 0, label="3s")], ["R"])
    >>> len(fig.axes), len(marks[0].node_radii_a0)
    (1, 2)
    """
    quantities = list(dict.fromkeys(quantities))
    for q in quantities:
        if q not in RADIAL_QUANTITIES:
            raise ValueError(f"unknown radial quantity {q!r}: use one of {', '.join(RADIAL_QUANTITIES)}")
    if not quantities:
        raise ValueError("a radial plot needs at least one quantity")
    check_fraction(fraction)
    rows = len(quantities)
    line_in = 0.17  # height of one legend line at 8 pt, inches (with matplotlib's spacing)
    # panels of 1.9 in; the legend column needs 8 lines plus 5.2 per state
    height = max(0.9 + 1.9 * rows, 0.7 + line_in * (8 + 5.2 * len(states)))
    fig = matplotlib.figure.Figure(figsize=(width_in, height))
    top = 1.0 - 0.55 / height
    grid = fig.add_gridspec(rows, 1, left=0.12, right=0.74, bottom=0.5 / height, top=top, hspace=0.12)
    r_max = radial_range_a0(states)
    axes = [fig.add_subplot(grid[i, 0]) for i in range(rows)]
    marks: list[RadialMarks] = []
    for i, (ax, q) in enumerate(zip(axes, quantities)):
        if i:
            ax.sharex(axes[0])
        marks = draw_radial(ax, states, q, fraction, units, r_max)
        if i < rows - 1:
            ax.tick_params(labelbottom=False)
    axes[-1].set_xlabel(f"$r$ ({unit_label(units)})", fontsize=9)
    handles, labels = axes[0].get_legend_handles_labels()
    fig.legend(handles, labels, loc="upper left", bbox_to_anchor=(0.765, top), fontsize=8, frameon=False,
               title="state", title_fontsize=8, alignment="left")
    y = top - line_in * (len(states) + 2) / height
    fig.legend(handles=_mark_legend_handles(fraction), loc="upper left", bbox_to_anchor=(0.765, y),
               fontsize=7.5, frameon=False, handlelength=2.6, title="marks", title_fontsize=8,
               alignment="left")
    y -= line_in * 5 / height
    k = a0_to(units)
    fig.text(0.775, y, f"values ({unit_label(units)})", fontsize=8, va="top")
    for i, m in enumerate(marks):
        y -= line_in * 1.1 / height
        colour = _STATE_COLOURS[i % len(_STATE_COLOURS)]
        nodes = ", ".join(f"{r * k:.4g}" for r in m.node_radii_a0) or "none"
        fig.text(0.775, y, f"{pretty_label(m.label) if m.label else f'state {i + 1}'}\n  nodes: {nodes}\n"
                 f"  most probable: {m.most_probable_a0 * k:.4g}\n"
                 f"  {100 * m.fraction:.4g} % within: {m.holding_a0 * k:.4g}",
                 fontsize=7, va="top", color=colour, linespacing=1.25)
        y -= line_in * 3.1 / height
    if title is None:
        title = ("Radial functions" if len(states) > 1
                 else f"Radial functions of {pretty_label(states[0].label)}")
    fig.suptitle(title, fontsize=10, x=0.44, y=1.0 - 0.18 / height, va="top")
    return fig, marks


def radial_metadata(states: Sequence[State], marks: Sequence[RadialMarks], quantities: Sequence[str],
                    units: str = "a0", **extra) -> dict:
    """The metadata of a radial figure: the common keys (the state, if there is one), every
    state's terms, the quantities, the unit and the marked values; `extra` is added as is.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> s = eigenstate(2, 0, 0, label="2s")
    >>> md = radial_metadata([s], [radial_marks(s)], ["R"])
    >>> md["title"], md["marks"][0]["node_radii_a0"]
    ('2s', [2.0])
    """
    from .output import figure_metadata, state_metadata

    fraction = marks[0].fraction if marks else None
    return figure_metadata(states[0] if len(states) == 1 else None, fraction, None, None,
                           command="radial", title=", ".join(s.label for s in states),
                           states=[state_metadata(s) for s in states], quantities=list(quantities),
                           units=units, marks=[m.as_dict() for m in marks], **extra)
