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

In a figure of several panels each mark is drawn only in its own panel (nodes with
R, the most probable radius with the density, the radius holding F with P), or, when
that quantity is not shown, in the first panel; the values are also listed beside
the plot ("node at r = 2.00 a0").

Lengths are drawn in a0, angstrom, nm or pm; R is converted with them (unit^-3/2),
r^2 R^2 too (unit^-1), so every curve stays normalised in the unit shown.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from dataclasses import dataclass

import matplotlib.figure
import numpy as np
from matplotlib.lines import Line2D

from ..state.hydrogen import radial_function
from ..state.limits import check_fraction
from ..state.model import State
from ..state.notation import conditions_label, pretty_label
from ..state.properties import most_probable_radius, radial_node_radii, shell_of
from ..state.radial import radial_cumulative, radius_holding
from ..state.units import a0_to, unit_label
from .output import check_text_size

__all__ = [
    "RADIAL_QUANTITIES",
    "RadialMarks",
    "radial_marks",
    "radial_range_a0",
    "draw_radial",
    "radial_figure",
    "radial_metadata",
    "RADIAL_MARKS",
    "mark_panels",
    "radial_values_text",
]

RADIAL_QUANTITIES = ("R", "density", "cumulative")
#: The marks, each with the quantity whose panel it belongs to.
RADIAL_MARKS = {"nodes": "R", "peak": "density", "holding": "cumulative"}
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
                r_max_a0: float | None = None, fontsize: float = 9.0, *,
                marks: Collection[str] = tuple(RADIAL_MARKS)) -> list[RadialMarks]:
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
        Size of the axis labels, points.
    marks : collection of {"nodes", "peak", "holding"}
        The marks drawn in this panel (default all; see :func:`mark_panels`).

    Returns
    -------
    list of RadialMarks
        One per state, in order.
    """
    if quantity not in RADIAL_QUANTITIES:
        raise ValueError(f"unknown radial quantity {quantity!r}: use one of {', '.join(RADIAL_QUANTITIES)}")
    if not states:
        raise ValueError("a radial plot needs at least one state")
    unknown = set(marks) - set(RADIAL_MARKS)
    if unknown:
        raise ValueError(f"unknown radial marks {sorted(unknown)}: use {', '.join(RADIAL_MARKS)}")
    k = a0_to(units)
    r_max = radial_range_a0(states) if r_max_a0 is None else float(r_max_a0)
    r = np.linspace(0.0, r_max, _POINTS)
    scale = k ** _POWERS[quantity]
    out = []
    for i, state in enumerate(states):
        colour = _STATE_COLOURS[i % len(_STATE_COLOURS)]
        found = radial_marks(state, fraction)
        out.append(found)
        y = _curve(state, quantity, r) * scale
        ax.plot(r * k, y, color=colour, lw=1.3, label=_state_name(state, i, states), zorder=3)
        nodes = np.array(found.node_radii_a0)
        if "nodes" in marks:
            for node in nodes:
                ax.axvline(node * k, color=colour, ls=_NODE_STYLE, lw=0.9, zorder=1)
            if len(nodes):  # open circles where the curve of this panel meets the node
                ax.plot(nodes * k, _curve(state, quantity, nodes) * scale, ls="none", marker="o",
                        mfc="white", mec=colour, ms=4.5, zorder=4)
        if "peak" in marks:
            rm = found.most_probable_a0
            ax.axvline(rm * k, color=colour, ls=_PEAK_STYLE, lw=0.9, zorder=1)
            ax.plot([rm * k], _curve(state, quantity, np.array([rm])) * scale, ls="none", marker="v",
                    color=colour, ms=5, zorder=4)
        if "holding" in marks:
            rh = found.holding_a0
            ax.axvline(rh * k, color=colour, ls=_HOLD_STYLE, lw=0.9, zorder=1)
            ax.plot([rh * k], _curve(state, quantity, np.array([rh])) * scale, ls="none", marker="s",
                    color=colour, ms=4, zorder=4)
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


def _state_name(state: State, index: int, states: Sequence[State]) -> str:
    """Legend name of a state: its typeset label, with Z and mu when they differ between states."""
    name = pretty_label(state.label) if state.label else f"state {index + 1}"
    if len({(s.Z, s.reduced_mass_ratio) for s in states}) > 1:
        extra = conditions_label(state.Z, state.reduced_mass_ratio)
        name = f"{name}, {extra}" if extra else name
    return name


def mark_panels(quantities: Sequence[str]) -> list[tuple[str, ...]]:
    """The marks drawn in each panel: each mark only in the panel of its own quantity
    (:data:`RADIAL_MARKS`), or in the first panel when that quantity is not shown.

    Examples
    --------
    >>> mark_panels(["R", "density", "cumulative"])
    [('nodes',), ('peak',), ('holding',)]
    >>> mark_panels(["density"])
    [('nodes', 'peak', 'holding')]
    """
    quantities = list(quantities)
    home = {mark: quantities.index(q) if q in quantities else 0 for mark, q in RADIAL_MARKS.items()}
    return [tuple(mark for mark in RADIAL_MARKS if home[mark] == i) for i in range(len(quantities))]


def _mark_legend_handles(fraction: float, shown: Collection[str]) -> list[Line2D]:
    handles = {"nodes": Line2D([], [], color="0.25", ls=_NODE_STYLE, lw=0.9, marker="o", mfc="white",
                               ms=4, label="radial node"),
               "peak": Line2D([], [], color="0.25", ls=_PEAK_STYLE, lw=0.9, marker="v", ms=4,
                              label="most probable $r$"),
               "holding": Line2D([], [], color="0.25", ls=_HOLD_STYLE, lw=0.9, marker="s", ms=3.5,
                                 label=f"$r$ holding {100 * fraction:.4g} %")}
    return [handles[m] for m in RADIAL_MARKS if m in shown]


def _radii(values_a0: Sequence[float], k: float, unit: str) -> str:
    """'r = 1.90, 7.10 a0': radii in the unit shown, to 0.01 of it (finer than the plot can show)."""
    return "r = " + ", ".join(f"{v * k:.2f}" for v in values_a0) + f" {unit}"


def radial_values_text(marks: RadialMarks, units: str = "a0") -> str:
    """The marked values of one state as lines of text: the nodes ("node at r = 2.00 a0",
    "nodes at r = 1.90, 7.10 a0", "no radial node"), the most probable radius and the radius
    holding F.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> print(radial_values_text(radial_marks(eigenstate(2, 0, 0)), "pm"))
    node at r = 105.84 pm
    most probable r = 277.08 pm
    90 % within r = 482.89 pm
    """
    k, unit = a0_to(units), unit_label(units)
    nodes = marks.node_radii_a0
    if not nodes:
        first = "no radial node"
    else:
        first = ("node at " if len(nodes) == 1 else "nodes at ") + _radii(nodes, k, unit)
    return (f"{first}\nmost probable {_radii([marks.most_probable_a0], k, unit)}\n"
            f"{100 * marks.fraction:.4g} % within {_radii([marks.holding_a0], k, unit)}")


#: Default title size of a radial figure, points (our choice: readable in print at 6.4 in
#: wide and on a projected slide); the other text is drawn at fixed ratios of it.
RADIAL_TEXT_PT = 11.0
#: Text sizes relative to the title: axis labels, legend entries, the list of values.
_LABEL_RATIO, _LEGEND_RATIO, _VALUES_RATIO = 0.9, 0.8, 0.72
#: Height of one legend line per point of text, inches (matplotlib's spacing, measured).
_LINE_IN_PER_PT = 0.17 / 8.0
#: Legend lines taken by the values of one state (four lines of smaller text and a gap).
_VALUES_LINES = 4.1


def radial_figure(states: Sequence[State], quantities: Sequence[str] = RADIAL_QUANTITIES,
                  fraction: float = 0.9, units: str = "a0", title: str | None = None,
                  width_in: float = 6.4, *, text_size_pt: float | None = None
                  ) -> tuple[matplotlib.figure.Figure, list[RadialMarks]]:
    """A figure with one panel per quantity (shared radial axis), legends of states and marks.

    Parameters
    ----------
    states : sequence of State
        Each one (n, l) shell on one centre.
    quantities : sequence of {"R", "density", "cumulative"}
        One panel each, top to bottom.
    fraction : float
        F of the marked radius holding F.
    units : {"a0", "angstrom", "nm", "pm"}
    title : str, optional
        Default: "Radial functions" (of the one state), with Z and the reduced mass when
        they are not 1 (see :func:`orbitalrender.state.notation.conditions_label`).
    width_in : float
        Figure width, inches; the height follows from the panels and the legend.
    text_size_pt : float, optional
        Size of the title in points at the figure's size (default :data:`RADIAL_TEXT_PT`);
        labels, legends and values are drawn at fixed ratios of it.

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
    size = check_text_size(RADIAL_TEXT_PT if text_size_pt is None else text_size_pt)
    label_pt, legend_pt, values_pt = size * _LABEL_RATIO, size * _LEGEND_RATIO, size * _VALUES_RATIO
    line_in = _LINE_IN_PER_PT * legend_pt
    rows = len(quantities)
    panel_in = max(1.9, 0.19 * size)  # panels grow with large text, so the ticks keep room
    top_in = 0.25 + 0.03 * size  # room for the title
    # the legend column: the states' legend (2 + 1 per state), the marks' (5), 4.1 per state's values
    legend_lines = 7 + (_VALUES_LINES + 1) * len(states)
    height = max(0.9 + panel_in * rows, top_in + 0.3 + line_in * legend_lines)
    fig = matplotlib.figure.Figure(figsize=(width_in, height))
    top = 1.0 - top_in / height
    grid = fig.add_gridspec(rows, 1, left=0.12, right=0.685, bottom=(0.2 + 0.028 * size) / height, top=top,
                            hspace=0.12)
    r_max = radial_range_a0(states)
    axes = [fig.add_subplot(grid[i, 0]) for i in range(rows)]
    marks: list[RadialMarks] = []
    shown = mark_panels(quantities)
    for i, (ax, q) in enumerate(zip(axes, quantities)):
        if i:
            ax.sharex(axes[0])
        marks = draw_radial(ax, states, q, fraction, units, r_max, label_pt, marks=shown[i])
        if i < rows - 1:
            ax.tick_params(labelbottom=False)
    axes[-1].set_xlabel(f"$r$ ({unit_label(units)})", fontsize=label_pt)
    handles, labels = axes[0].get_legend_handles_labels()
    left = 0.715
    fig.legend(handles, labels, loc="upper left", bbox_to_anchor=(left, top), fontsize=legend_pt,
               frameon=False, title="state", title_fontsize=legend_pt, alignment="left")
    y = top - line_in * (len(states) + 2) / height
    fig.legend(handles=_mark_legend_handles(fraction, RADIAL_MARKS), loc="upper left",
               bbox_to_anchor=(left, y), fontsize=values_pt, frameon=False, handlelength=2.6,
               title="marks", title_fontsize=legend_pt, alignment="left")
    y -= line_in * 5 / height
    for i, m in enumerate(marks):
        colour = _STATE_COLOURS[i % len(_STATE_COLOURS)]
        values = "\n".join("  " + line for line in radial_values_text(m, units).splitlines())
        fig.text(left + 0.01, y, f"{_state_name(states[i], i, states)}\n{values}", fontsize=values_pt,
                 va="top", color=colour, linespacing=1.25)
        y -= line_in * _VALUES_LINES / height
    if title is None:
        title = ("Radial functions" if len(states) > 1
                 else f"Radial functions of {pretty_label(states[0].label)}")
        shared = {(s.Z, s.reduced_mass_ratio) for s in states}
        extra = conditions_label(*shared.pop()) if len(shared) == 1 else ""
        title = f"{title}, {extra}" if extra else title
    fig.suptitle(title, fontsize=size, x=0.41, y=1.0 - 0.18 / height, va="top")
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
