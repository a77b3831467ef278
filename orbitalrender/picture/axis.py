"""Picture step, nodal axis: where the dashed line along a nodal z axis goes, and its pixels.

A state whose every term has m != 0 about one centre vanishes on the line through
that centre parallel to z (e^{i m phi} is undefined there and the factor
sin^|m| theta is zero).  The line is drawn dashed, depth-tested against the
surfaces, so it is hidden where a lobe or ring passes in front of it.
"""

from __future__ import annotations

import math

import numpy as np

from ..surface.model import Surface
from .camera import Projection

__all__ = ["AXIS_RGB", "nodal_axis_centre", "state_nodal_axis_centre", "has_nodal_axis",
           "axis_segment", "axis_layer"]

#: The nodal axis is drawn past each end of the surface by this fraction of its largest extent.
_AXIS_OVERHANG = 0.15


def nodal_axis_centre(surface: Surface) -> tuple[float, float, float]:
    """Centre of the nodal z axis of `surface`'s state: every term needs m != 0 and one centre.

    Raises
    ------
    ValueError
        If psi does not vanish all along a line parallel to z.

    Examples
    --------
    >>> import numpy as np
    >>> from orbitalrender.state.model import eigenstate
    >>> s = Surface(np.zeros((0, 3)), np.zeros((0, 3), int), np.zeros((0, 3)), np.zeros(0),
    ...             1.0, None, None, None, (2, 2, 2), (1.0, 1.0, 1.0), eigenstate(2, 1, 1))
    >>> nodal_axis_centre(s)
    (0.0, 0.0, 0.0)
    """
    if surface.state is None:
        raise ValueError("a nodal axis can only be drawn for an analytic state, not a user field")
    return state_nodal_axis_centre(surface.state)


def state_nodal_axis_centre(state) -> tuple[float, float, float]:
    """Centre of the line parallel to z on which psi of `state` vanishes (see
    :func:`nodal_axis_centre`); ValueError if there is none."""
    if not state.is_single_centre or any(t.m == 0 for t in state.terms):
        raise ValueError(f"state {state.label!r} has no nodal axis along z: that needs every term "
                         "to have m != 0 and one centre")
    return state.centres_a0[0]


def has_nodal_axis(surface: Surface) -> bool:
    """True when :func:`nodal_axis_centre` would find an axis."""
    try:
        nodal_axis_centre(surface)
    except ValueError:
        return False
    return True


def axis_segment(surfaces: list[Surface]) -> np.ndarray:
    """End points (2, 3) of the dashed nodal axis."""
    centre = np.array(nodal_axis_centre(surfaces[0]))
    if any(nodal_axis_centre(s) != tuple(centre) for s in surfaces[1:]):
        raise ValueError("the surfaces drawn together have nodal axes at different centres")
    pts = np.concatenate([s.vertices_a0 for s in surfaces])
    lo, hi = float(pts[:, 2].min()), float(pts[:, 2].max())
    pad = _AXIS_OVERHANG * float(np.max(pts.max(axis=0) - pts.min(axis=0)))
    return np.array([[centre[0], centre[1], lo - pad], [centre[0], centre[1], hi + pad]])


def axis_layer(segment: np.ndarray, proj: Projection, ss: int, width_px: float = 1.6,
                dash_px: float = 7.0, gap_px: float = 5.0) -> np.ndarray:
    """Depth (H, W) of a dashed line (inf off the line); sizes in output pixels."""
    h, w = proj.height, proj.width
    x, y, depth, _ = proj.project(segment)
    length = float(np.hypot(x[1] - x[0], y[1] - y[0]))
    count = max(2, int(math.ceil(length / 0.5)) + 1)
    s = np.linspace(0.0, 1.0, count)
    arc = s * length / ss
    on = np.mod(arc, dash_px + gap_px) < dash_px
    s = s[on]
    points = segment[0] + s[:, None] * (segment[1] - segment[0])
    px, py, pd, _ = proj.project(points)
    radius = 0.5 * width_px * ss
    r = int(math.ceil(radius))
    oy, ox = np.mgrid[-r:r + 1, -r:r + 1]
    disc = (ox**2 + oy**2) <= radius**2
    ox, oy = ox[disc], oy[disc]
    cols = (np.floor(px)[:, None] + ox[None]).astype(np.int64).ravel()
    rows = (np.floor(py)[:, None] + oy[None]).astype(np.int64).ravel()
    dep = np.repeat(pd, len(ox))
    keep = (cols >= 0) & (cols < w) & (rows >= 0) & (rows < h)
    out = np.full(h * w, np.inf)
    np.minimum.at(out, rows[keep] * w + cols[keep], dep[keep])
    return out.reshape(h, w)


#: Colour of the nodal axis line (sRGB): a dark grey that reads on every hue of the maps.
AXIS_RGB = (0.12, 0.12, 0.12)


