"""Picture step, orientation: an axis triad (x, y, z arrows) seen with the render's camera.

A 3D picture of 2p_x looks like one of 2p_y turned by 90 degrees, and 3d_xy like
3d_{x^2-y^2}: without the axes a reader cannot tell them apart.  The triad shows
the unit vectors x, y and z projected with the same camera basis as the render
(orthographic; for a perspective camera, the directions at the image target), so
each arrow points where that axis runs in the picture.  An axis that points at the
eye comes out short; the arrows nearer the eye are drawn over the farther ones.

It is drawn in the legend column of the figure, beside the renders, so it never
hides a surface.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

__all__ = ["TRIAD_MODES", "triad_directions", "wants_triad", "draw_axis_triad"]

#: Values of the triad option: ``auto`` draws it unless orientation cannot matter.
TRIAD_MODES = ("auto", "on", "off")
#: Colour of the arrows and labels: one dark grey for all three (the labels tell them apart).
_TRIAD_COLOUR = "0.15"
#: Length of a full arrow in the triad's own axes (which span -1.5 to 1.5).
_ARROW = 1.0


def triad_directions(camera) -> dict[str, tuple[float, float, float]]:
    """(right, up, toward the eye) components of the unit vectors x, y, z for `camera`.

    Parameters
    ----------
    camera : Camera
        Anything with the ``basis()`` of :class:`orbitalrender.Camera`.

    Examples
    --------
    >>> from orbitalrender import Camera
    >>> d = triad_directions(Camera(azimuth_deg=0.0, elevation_deg=0.0))
    >>> [round(c, 12) + 0.0 for c in d["y"]], [round(c, 12) + 0.0 for c in d["z"]]
    ([1.0, 0.0, 0.0], [0.0, 1.0, 0.0])
    """
    right, up, toward = camera.basis()
    out = {}
    for name, axis in zip("xyz", np.eye(3)):
        out[name] = (float(axis @ right), float(axis @ up), float(axis @ toward))
    return out


def _orientation_free(state) -> bool:
    """True for a state whose picture looks the same from every side: s terms on one centre."""
    return state is not None and state.is_single_centre and all(t.l == 0 for t in state.terms)


def wants_triad(mode: str, states: Sequence) -> bool:
    """Whether to draw the triad: ``on``, ``off``, or ``auto`` -- unless every state drawn is
    spherically symmetric (only s terms on one centre), where the axes say nothing.

    Examples
    --------
    >>> from orbitalrender import parse_state
    >>> wants_triad("auto", [parse_state("2px")]), wants_triad("auto", [parse_state("3s")])
    (True, False)
    """
    if mode not in TRIAD_MODES:
        raise ValueError(f"unknown triad setting {mode!r}: use one of {', '.join(TRIAD_MODES)}")
    if mode != "auto":
        return mode == "on"
    return not all(_orientation_free(s) for s in states)


def draw_axis_triad(ax, camera, fontsize: float = 9.0) -> dict[str, tuple[float, float]]:
    """Draw x, y, z arrows as `camera` sees them into `ax` (its frame is switched off).

    Returns
    -------
    dict
        The 2D direction (right, up) drawn for each axis, a fraction of the full arrow.
    """
    directions = triad_directions(camera)
    drawn = {}
    # farthest first, so that the arrows nearer the eye are drawn over them
    for order, name in enumerate(sorted(directions, key=lambda k: directions[k][2])):
        dx, dy, _ = directions[name]
        drawn[name] = (dx, dy)
        ax.annotate("", xy=(_ARROW * dx, _ARROW * dy), xytext=(0.0, 0.0), zorder=2 + order,
                    arrowprops={"arrowstyle": "-|>", "color": _TRIAD_COLOUR, "lw": 1.3,
                                "shrinkA": 0, "shrinkB": 0, "mutation_scale": 1.1 * fontsize},
                    gid=f"triad-{name}")
        length = float(np.hypot(dx, dy))
        # the label beyond the tip; an axis seen end-on is labelled just beside the centre
        ux, uy = (dx / length, dy / length) if length > 0.2 else (0.7, 0.7)
        reach = _ARROW * length + 0.28
        ax.text(reach * ux, reach * uy, name, ha="center", va="center", fontsize=fontsize,
                style="italic", color=_TRIAD_COLOUR, zorder=2 + order)
    ax.plot([0.0], [0.0], marker="o", ms=2.5, color=_TRIAD_COLOUR, zorder=1)
    ax.set_xlim(-1.5, 1.5)
    ax.set_ylim(-1.5, 1.5)
    ax.set_aspect("equal")
    ax.set_axis_off()
    return drawn
