"""Picture step, plane: a plane through space, its picture axes, and the pixels of a window on it.

A :class:`Plane` is ``n . r = offset`` with two in-plane unit axes (u, v) that
become the picture's horizontal and vertical axes; :func:`plane` makes one from a
coordinate-plane name or a normal vector.  Only the standard library and numpy are
loaded here, so option definitions read :data:`PLANE_NAMES`, :data:`MIN_PIXELS` and
:data:`MAX_PIXELS` from it cheaply.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..state.units import a0_to, unit_label

__all__ = ["PLANE_NAMES", "MIN_PIXELS", "MAX_PIXELS", "Plane", "plane", "check_pixels"]

PLANE_NAMES = ("xy", "xz", "yz")
#: Pixels per side accepted: below 16 no line can be resolved, above 4096 one section
#: holds more than 16 million exact psi evaluations (tens of seconds).
MIN_PIXELS, MAX_PIXELS = 16, 4096


@dataclass(frozen=True)
class Plane:
    """The plane ``normal . r = offset_a0`` and its picture axes.

    Attributes
    ----------
    normal : tuple of float
        Unit normal.
    offset_a0 : float
        Signed distance of the plane from the origin along `normal`, a0.
    u, v : tuple of float
        Unit in-plane axes: the picture's horizontal and vertical directions.
    name : str
        ``"xy"``, ``"xz"``, ``"yz"`` or ``""`` for a plane given by its normal.
    """

    normal: tuple[float, float, float]
    offset_a0: float
    u: tuple[float, float, float]
    v: tuple[float, float, float]
    name: str = ""

    @property
    def axis_names(self) -> tuple[str, str]:
        """Names of the picture axes: e.g. ("x", "z") for the xz plane, else ("u", "v")."""
        return (self.name[0], self.name[1]) if self.name else ("u", "v")

    def point(self, s_a0, t_a0, origin_a0: Sequence[float]) -> tuple[np.ndarray, ...]:
        """Cartesian x, y, z (a0) of ``origin + s u + t v`` (broadcast over s and t)."""
        s, t = np.asarray(s_a0, dtype=float), np.asarray(t_a0, dtype=float)
        return tuple(origin_a0[i] + s * self.u[i] + t * self.v[i] for i in range(3))

    def distance_a0(self, point_a0: Sequence[float]) -> float:
        """Signed distance of a point from the plane, a0."""
        return float(np.dot(self.normal, point_a0) - self.offset_a0)

    def foot_a0(self, point_a0: Sequence[float]) -> tuple[float, float, float]:
        """The point of the plane nearest to `point_a0`."""
        d = self.distance_a0(point_a0)
        return tuple(float(p - d * nc) for p, nc in zip(point_a0, self.normal))

    def describe(self, tex: bool = True, units: str = "a0") -> str:
        """Short text for titles (matplotlib mathtext) or, with ``tex=False``, for messages,
        with the offset in `units`.

        Examples
        --------
        >>> plane("xz", 2).describe(tex=False)
        'xz plane, y = 2 a0'
        """
        unit = unit_label(units) if tex else units
        offset = self.offset_a0 * a0_to(units)
        if self.name:
            other = ({"x", "y", "z"} - set(self.name)).pop()
            return f"{self.name} plane, {other} = {offset:.4g} {unit}"
        n = ", ".join(f"{c:.3g}" for c in self.normal)
        return f"plane n = ({n}), n·r = {offset:.4g} {unit}"


def plane(spec: str | Sequence[float], offset_a0: float = 0.0) -> Plane:
    """A :class:`Plane` from a name ("xy", "xz", "yz") or a normal vector, and an offset.

    Parameters
    ----------
    spec : str or sequence of 3 floats
        A coordinate plane, or a normal (any length except zero).  For a name the
        offset is the coordinate not in it (``"xz"``, 1.5 -> the plane y = 1.5 a0) and
        the picture axes are the named ones.  For a normal n the vertical picture axis
        v is +z projected into the plane (+y when n is along z) and u = v x n, so that
        (u, v, n) is right-handed: the picture shows the plane as seen from the side n
        points to.
    offset_a0 : float
        Distance of the plane from the origin along the (unit) normal, a0.

    Examples
    --------
    >>> p = plane("xz", 1.5)
    >>> p.normal, p.u, p.v
    ((0.0, 1.0, 0.0), (1.0, 0.0, 0.0), (0.0, 0.0, 1.0))
    >>> q = plane((0, 2, 0))   # seen from +y: x points left
    >>> q.u, q.v
    ((-1.0, 0.0, 0.0), (0.0, 0.0, 1.0))
    """
    if not math.isfinite(offset_a0):
        raise ValueError(f"the plane offset must be finite, got {offset_a0}")
    if isinstance(spec, str):
        key = spec.strip().lower()
        axes = {"xy": ((0, 0, 1), (1, 0, 0), (0, 1, 0)), "xz": ((0, 1, 0), (1, 0, 0), (0, 0, 1)),
                "yz": ((1, 0, 0), (0, 1, 0), (0, 0, 1))}
        if key not in axes:
            raise ValueError(f"unknown plane {spec!r}: use one of {', '.join(PLANE_NAMES)} "
                             "or give a normal vector")
        n, u, v = (tuple(float(c) for c in a) for a in axes[key])
        return Plane(n, float(offset_a0), u, v, key)
    n = np.asarray(spec, dtype=float)
    if n.shape != (3,) or not np.all(np.isfinite(n)):
        raise ValueError(f"a plane normal needs three finite numbers, got {spec!r}")
    n = n / float(np.max(np.abs(n))) if np.any(n) else n  # scaled first: 1e300 squared overflows
    length = float(np.linalg.norm(n))
    if length == 0.0:
        raise ValueError("a plane normal cannot be the zero vector")
    n = n / length
    up = np.array([0.0, 0.0, 1.0]) if abs(n[2]) < 1.0 - 1e-12 else np.array([0.0, 1.0, 0.0])
    v = up - np.dot(up, n) * n
    v /= np.linalg.norm(v)
    u = np.cross(v, n)
    clean = tuple(tuple(float(c) + 0.0 for c in np.where(np.abs(a) < 1e-15, 0.0, a)) for a in (n, u, v))
    return Plane(clean[0], float(offset_a0), clean[1], clean[2], "")


def check_pixels(pixels: int) -> int:
    if isinstance(pixels, bool) or int(pixels) != pixels or not MIN_PIXELS <= pixels <= MAX_PIXELS:
        raise ValueError(f"pixels per side must be a whole number from {MIN_PIXELS} to {MAX_PIXELS}, "
                         f"got {pixels}")
    return int(pixels)


