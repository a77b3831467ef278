"""Numerical integration over all space around one or more nuclei (Becke fuzzy cells).

Used for overlaps of orbitals on different centres and for any integral of a
superposition that has no closed form.

References
----------
.. [1] A. D. Becke, "A multicenter numerical integration scheme for polyatomic
       molecules", J. Chem. Phys. 88, 2547 (1988).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from .numerics import gauss_legendre

__all__ = ["SpaceGrid", "space_grid", "integrate"]


@dataclass(frozen=True)
class SpaceGrid:
    """Points (a0) and weights (a0^3) of a quadrature over all of R^3."""

    points_a0: np.ndarray  # (P, 3)
    weights_a0_3: np.ndarray  # (P,)


def _rotation_to(axis: np.ndarray) -> np.ndarray:
    """A rotation matrix taking the z axis to the unit vector along `axis` (Rodrigues)."""
    a = np.asarray(axis, dtype=float) / np.linalg.norm(axis)
    c = float(a[2])
    if c < -1.0 + 1e-12:  # -z: a half turn about x
        return np.diag([1.0, -1.0, -1.0])
    k = np.array([[0.0, 0.0, a[0]], [0.0, 0.0, a[1]], [-a[0], -a[1], 0.0]])  # [z x a]_cross
    return np.eye(3) + k + k @ k / (1.0 + c)


def _sphere_grid(radial_scale_a0: float, n_radial: int, n_polar: int, n_azimuth: int,
                 axis: np.ndarray | None = None):
    """Product grid around the origin: mapped Gauss-Legendre in r, Gauss-Legendre in cos(theta),
    trapezoid (exact for trigonometric polynomials) in phi; theta measured from `axis`
    (default z)."""
    x, wx = gauss_legendre(n_radial)
    t = 0.5 * (x + 1.0)  # (0, 1)
    # r = s t^2 / (1 - t)^2 clusters points at the nucleus, where the cusps are,
    # and reaches far enough for slowly decaying high-n states.
    r = radial_scale_a0 * t**2 / (1.0 - t) ** 2
    dr = radial_scale_a0 * 2.0 * t / (1.0 - t) ** 3 * 0.5 * wx
    c, wc = gauss_legendre(n_polar)
    phi = 2.0 * np.pi * np.arange(n_azimuth) / n_azimuth
    wphi = 2.0 * np.pi / n_azimuth
    s = np.sqrt(1.0 - c**2)
    direction = np.stack([
        (s[:, None] * np.cos(phi)[None, :]).ravel(),
        (s[:, None] * np.sin(phi)[None, :]).ravel(),
        np.repeat(c, n_azimuth),
    ], axis=1)
    if axis is not None:
        direction = direction @ _rotation_to(axis).T
    w_dir = np.repeat(wc, n_azimuth) * wphi
    points = (r[:, None, None] * direction[None, :, :]).reshape(-1, 3)
    weights = (dr * r**2)[:, None] * w_dir[None, :]
    return points, weights.ravel()


def _becke_weights(points: np.ndarray, centres: np.ndarray, owner: int) -> np.ndarray:
    """Becke's fuzzy-cell weight of `owner` at `points` (three smoothing iterations).

    The cell function of a pair is s(mu) for one centre and 1 - s(mu) = s(-mu) for the
    other, so each pair is computed once.
    """
    k = len(centres)
    if k == 1:
        return np.ones(len(points))
    cols = np.ascontiguousarray(points.T)
    dist = [np.sqrt((cols[0] - c[0]) ** 2 + (cols[1] - c[1]) ** 2 + (cols[2] - c[2]) ** 2)
            for c in centres]
    cell = [np.ones(len(points)) for _ in range(k)]
    for i in range(k):
        for j in range(i + 1, k):
            mu = (dist[i] - dist[j]) / float(np.linalg.norm(centres[i] - centres[j]))
            for _ in range(3):
                mu *= 1.5 - 0.5 * mu * mu
            share = 0.5 * (1.0 - mu)
            cell[i] *= share
            cell[j] *= 1.0 - share
    return cell[owner] / sum(cell)


def space_grid(centres_a0: Sequence[Sequence[float]], radial_scale_a0: float = 2.0,
               n_radial: int = 120, n_polar: int = 40, n_azimuth: int = 48,
               axis: Sequence[float] | None = None) -> SpaceGrid:
    """Quadrature over R^3 that resolves the cusps at each centre.

    Parameters
    ----------
    centres_a0 : sequence of (3,) points
        Nuclear positions in a0.  Duplicates are merged.
    radial_scale_a0 : float
        Length of the radial map; about the size of the largest orbital
        (n^2 / Z a0) is a good choice.
    n_radial, n_polar, n_azimuth : int
        Points per centre in r, cos(theta) and phi.
    axis : (3,) vector, optional
        Direction from which theta is measured (default z).  An integrand that varies
        little about this axis (a state whose centres lie on it) needs few phi points.

    Returns
    -------
    SpaceGrid
        Points ordered by centre, then radius, then direction.
    """
    centres = np.unique(np.asarray(centres_a0, dtype=float).reshape(-1, 3), axis=0)
    pts, wts = [], []
    base_p, base_w = _sphere_grid(radial_scale_a0, n_radial, n_polar, n_azimuth,
                                  None if axis is None else np.asarray(axis, dtype=float))
    for i, c in enumerate(centres):
        p = base_p + c
        pts.append(p)
        wts.append(base_w * _becke_weights(p, centres, i))
    return SpaceGrid(np.concatenate(pts), np.concatenate(wts))


def integrate(f: Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray],
              grid: SpaceGrid, chunk: int = 400_000) -> complex:
    """Integral of f(x, y, z) over the grid, evaluated in chunks.

    Examples
    --------
    >>> import numpy as np
    >>> g = space_grid([(0, 0, 0)])
    >>> round(integrate(lambda x, y, z: np.exp(-2 * np.sqrt(x*x + y*y + z*z)) / np.pi, g).real, 10)
    1.0
    """
    total = 0.0 + 0.0j
    p, w = grid.points_a0, grid.weights_a0_3
    for s in range(0, len(w), chunk):
        q = p[s:s + chunk]
        total += np.sum(f(q[:, 0], q[:, 1], q[:, 2]) * w[s:s + chunk])
    return complex(total)
