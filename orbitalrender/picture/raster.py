"""Picture step, rasterizer: triangles in screen space -> per-pixel nearest triangle and barycentrics.

A z-buffer scan converter, not a painter's sort, so nested and interlocking
surfaces (the ring of 3d_z2 passing in front of and behind its lobes) occlude
each other correctly pixel by pixel.  It does no shading: it returns, for every
pixel, which triangle is nearest, its depth and the (perspective-correct)
barycentric weights, and shading is done afterwards on those buffers
(deferred shading, see :mod:`orbitalrender.picture.scene`).

Clipping for cutaways is done per fragment: each vertex carries K signed plane
values s_k (positive on the removed side); a fragment is dropped when all K
interpolated values are positive, i.e. when it lies in the removed region, the
intersection of K half-spaces.

The inner loop is compiled with numba (``cache=True``, so the compile cost is
paid once per machine); benchmarks/bench_render.py measures it against a
vectorised numpy scan converter.

References
----------
.. [1] J. Pineda, "A parallel algorithm for polygon rasterization",
       SIGGRAPH '88, 17-20 (edge functions).
.. [2] E. Catmull, "A subdivision algorithm for computer display of curved
       surfaces", PhD thesis, Univ. of Utah (1974) (the z-buffer).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numba
import numpy as np

__all__ = ["Fragments", "Screen", "Buffers", "rasterize", "scan_triangle"]


class Screen(NamedTuple):
    """Projected vertices, in (supersampled) pixels, as the scan converter reads them."""

    x: np.ndarray        #: (V,) float64 column
    y: np.ndarray        #: (V,) float64 row (grows downward)
    depth: np.ndarray    #: (V,) float64 view depth, larger is farther
    w: np.ndarray        #: (V,) float64 projective divisor (ones for orthographic)
    perspective: bool    #: make the weights perspective-correct with `w`


class Buffers(NamedTuple):
    """The z-buffer, triangle index and weights a triangle is drawn into (rows row0 .. row1 - 1)."""

    depth: np.ndarray    #: (H, W) float32
    triangle: np.ndarray  #: (H, W) int32, -1 where empty
    weights: np.ndarray  #: (H, W, 3) float32


@dataclass(frozen=True, eq=False)
class Fragments:
    """The nearest surviving fragment at every pixel.

    Attributes
    ----------
    triangle : ndarray, int32, (H, W)
        Index of the nearest triangle, -1 where no triangle covers the pixel.
    depth : ndarray, float32, (H, W)
        Its view depth (distance along the viewing direction, larger = farther),
        +inf where empty.
    weights : ndarray, float32, (H, W, 3)
        Perspective-correct barycentric weights of the triangle's three vertices.
    """

    triangle: np.ndarray
    depth: np.ndarray
    weights: np.ndarray

    @property
    def covered(self) -> np.ndarray:
        """Boolean (H, W): a triangle was drawn here."""
        return self.triangle >= 0


@numba.njit(cache=True, nogil=True)
def _span(a, c, lo, hi):  # pragma: no cover - compiled
    """Narrow [lo, hi] to the x where a x + c >= 0 (one edge function along a row)."""
    if a > 0.0:
        lo = max(lo, -c / a)
    elif a < 0.0:
        hi = min(hi, -c / a)
    elif c < 0.0:
        hi = lo - 1.0
    return lo, hi


@numba.njit(cache=True, nogil=True)
def _scan(screen, faces, skip, clip, width, height, buffers):  # pragma: no cover - compiled
    for t in range(faces.shape[0]):
        if not skip[t]:
            scan_triangle(t, screen, faces, clip, width, 0, height, buffers)


@numba.njit(cache=True, nogil=True)
def scan_triangle(t, screen, faces, clip, width, row0, row1, buffers):  # pragma: no cover - compiled
    """Draw triangle t of `screen` (a Screen) into `buffers` (a Buffers), which hold image rows
    row0 .. row1 - 1 (buffer row j - row0): the whole image, or one band of it (see the banded
    pass of :mod:`orbitalrender.picture.shading`).  `clip` (V, K) are the cutaway plane values."""
    px, py, zv, w, perspective = screen.x, screen.y, screen.depth, screen.w, screen.perspective
    depth, tri, wts = buffers.depth, buffers.triangle, buffers.weights
    n_clip = clip.shape[1]
    i0 = faces[t, 0]
    i1 = faces[t, 1]
    i2 = faces[t, 2]
    x0 = px[i0]
    y0 = py[i0]
    x1 = px[i1]
    y1 = py[i1]
    x2 = px[i2]
    y2 = py[i2]
    if not (w[i0] > 0.0 and w[i1] > 0.0 and w[i2] > 0.0):
        return
    # edge functions E_k(x, y) = A_k x + B_k y + C_k, E_k = 0 on the edge opposite vertex k;
    # a shared edge gets exactly opposite coefficients in its two triangles, so no pixel
    # centre on it is lost to rounding
    a0 = y1 - y2
    b0 = x2 - x1
    c0 = x1 * y2 - x2 * y1
    a1 = y2 - y0
    b1 = x0 - x2
    c1 = x2 * y0 - x0 * y2
    a2 = y0 - y1
    b2 = x1 - x0
    c2 = x0 * y1 - x1 * y0
    area = c0 + c1 + c2
    if area == 0.0:
        return
    sign = 1.0 if area > 0.0 else -1.0
    inv_area = 1.0 / area
    xmin = max(int(np.floor(min(x0, x1, x2) - 0.5)), 0)
    xmax = min(int(np.ceil(max(x0, x1, x2) - 0.5)), width - 1)
    ymin = max(int(np.floor(min(y0, y1, y2) - 0.5)), row0)
    ymax = min(int(np.ceil(max(y0, y1, y2) - 0.5)), row1 - 1)
    if xmin > xmax or ymin > ymax:
        return
    iw0 = 1.0 / w[i0]
    iw1 = 1.0 / w[i1]
    iw2 = 1.0 / w[i2]
    for j in range(ymin, ymax + 1):
        sy = j + 0.5
        # the row's span from the three edges, widened by a pixel; the exact test decides
        lo, hi = _span(sign * a0, sign * (b0 * sy + c0), xmin + 0.5, xmax + 0.5)
        lo, hi = _span(sign * a1, sign * (b1 * sy + c1), lo, hi)
        lo, hi = _span(sign * a2, sign * (b2 * sy + c2), lo, hi)
        if lo > hi:
            continue
        first = max(xmin, int(lo - 0.5) - 1)
        last = min(xmax, int(hi - 0.5) + 1)
        for i in range(first, last + 1):
            sx = i + 0.5
            e0 = a0 * sx + b0 * sy + c0
            e1 = a1 * sx + b1 * sy + c1
            e2 = a2 * sx + b2 * sy + c2
            if sign * e0 < 0.0 or sign * e1 < 0.0 or sign * e2 < 0.0:
                continue
            l0 = e0 * inv_area
            l1 = e1 * inv_area
            l2 = e2 * inv_area
            if perspective:  # interpolate 1/w linearly in screen space
                q0 = l0 * iw0
                q1 = l1 * iw1
                q2 = l2 * iw2
                s = 1.0 / (q0 + q1 + q2)
                l0 = q0 * s
                l1 = q1 * s
                l2 = q2 * s
            z = l0 * zv[i0] + l1 * zv[i1] + l2 * zv[i2]
            jb = j - row0
            if z >= depth[jb, i]:
                continue
            if n_clip > 0:
                removed = True
                for k in range(n_clip):
                    if l0 * clip[i0, k] + l1 * clip[i1, k] + l2 * clip[i2, k] <= 0.0:
                        removed = False
                        break
                if removed:
                    continue
            depth[jb, i] = z
            tri[jb, i] = t
            wts[jb, i, 0] = l0
            wts[jb, i, 1] = l1
            wts[jb, i, 2] = l2


def rasterize(x_px: np.ndarray, y_px: np.ndarray, depth: np.ndarray, faces: np.ndarray,
              width: int, height: int, *, clip_values: np.ndarray | None = None,
              divisor: np.ndarray | None = None, skip: np.ndarray | None = None) -> Fragments:
    """Scan-convert triangles with a z-buffer.

    Parameters
    ----------
    x_px, y_px : ndarray, (V,)
        Vertex positions in pixels; pixel (i, j) covers [i, i+1) x [j, j+1) and is
        sampled at its centre.  y grows downward (row index).
    depth : ndarray, (V,)
        View depth of each vertex (larger is farther); the nearest fragment wins.
    faces : ndarray, int, (F, 3)
        Vertex indices; either winding is drawn.
    width, height : int
        Image size in pixels.
    clip_values : ndarray, (V, K), optional
        Signed distances of each vertex to K planes, positive on the removed side.
        A fragment whose K interpolated values are all positive is dropped.
    divisor : ndarray, (V,), optional
        The projective divisor w of each vertex (distance in front of a perspective
        camera), used to make the weights perspective-correct; triangles with a
        vertex at w <= 0 are skipped.  None (orthographic) means w = 1.
    skip : ndarray of bool, (F,), optional
        Triangles not to draw (e.g. back faces of a closed surface: culling).

    Returns
    -------
    Fragments

    Examples
    --------
    >>> import numpy as np
    >>> f = rasterize(np.array([0.0, 4, 0]), np.array([0.0, 0, 4]), np.ones(3),
    ...               np.array([[0, 1, 2]]), 4, 4)
    >>> f.covered.astype(int)
    array([[1, 1, 1, 1],
           [1, 1, 1, 0],
           [1, 1, 0, 0],
           [1, 0, 0, 0]])
    """
    width, height = int(width), int(height)
    if width < 1 or height < 1:
        raise ValueError(f"the image must be at least 1 x 1 px, got {width} x {height}")
    faces = np.ascontiguousarray(faces, dtype=np.int64).reshape(-1, 3)
    if clip_values is None:
        clip = np.zeros((len(x_px), 0))
    else:
        clip = np.ascontiguousarray(clip_values, dtype=np.float64).reshape(len(x_px), -1)
    zbuf = np.full((height, width), np.inf, dtype=np.float32)
    tri = np.full((height, width), -1, dtype=np.int32)
    wts = np.zeros((height, width, 3), dtype=np.float32)
    n = len(x_px)
    w = np.ones(n) if divisor is None else np.ascontiguousarray(divisor, dtype=np.float64)
    skip = np.zeros(len(faces), dtype=np.bool_) if skip is None \
        else np.ascontiguousarray(skip, dtype=np.bool_)
    screen = Screen(*(np.ascontiguousarray(a, dtype=np.float64) for a in (x_px, y_px, depth)), w,
                    divisor is not None)
    _scan(screen, faces, skip, clip, width, height, Buffers(zbuf, tri, wts))
    return Fragments(tri, zbuf, wts)
