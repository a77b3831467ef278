"""Picture step, rasterizer: triangles in screen space -> per-pixel nearest triangle and barycentrics.

A z-buffer scan converter, not a painter's sort, so nested and interlocking
surfaces (the ring of 3d_z2 passing in front of and behind its lobes) occlude
each other correctly pixel by pixel.  It does no shading: it returns, for every
pixel, which triangle is nearest, its depth and the (perspective-correct)
barycentric weights, and shading is done afterwards on those buffers
(deferred shading, see :mod:`orbitalrender.picture.render3d`).

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

import numba
import numpy as np

__all__ = ["Fragments", "rasterize"]


@dataclass(frozen=True, eq=False)
class Fragments:
    """The nearest surviving fragment at every pixel.

    Attributes
    ----------
    triangle : ndarray, int32, (H, W)
        Index of the nearest triangle, -1 where no triangle covers the pixel.
    depth : ndarray, float64, (H, W)
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
def _scan(px, py, zv, w, faces, clip, width, height, depth, tri, wts):  # pragma: no cover - compiled
    n_clip = clip.shape[1]
    for t in range(faces.shape[0]):
        i0 = faces[t, 0]
        i1 = faces[t, 1]
        i2 = faces[t, 2]
        x0 = px[i0]
        y0 = py[i0]
        x1 = px[i1]
        y1 = py[i1]
        x2 = px[i2]
        y2 = py[i2]
        area = (x1 - x0) * (y2 - y0) - (x2 - x0) * (y1 - y0)
        if area == 0.0 or not (w[i0] > 0.0 and w[i1] > 0.0 and w[i2] > 0.0):
            continue
        inv_area = 1.0 / area
        xmin = max(int(np.floor(min(x0, x1, x2) - 0.5)), 0)
        xmax = min(int(np.ceil(max(x0, x1, x2) - 0.5)), width - 1)
        ymin = max(int(np.floor(min(y0, y1, y2) - 0.5)), 0)
        ymax = min(int(np.ceil(max(y0, y1, y2) - 0.5)), height - 1)
        if xmin > xmax or ymin > ymax:
            continue
        iw0 = 1.0 / w[i0]
        iw1 = 1.0 / w[i1]
        iw2 = 1.0 / w[i2]
        for j in range(ymin, ymax + 1):
            sy = j + 0.5
            for i in range(xmin, xmax + 1):
                sx = i + 0.5
                # screen-space barycentrics from edge functions (either winding)
                l0 = ((x1 - sx) * (y2 - sy) - (x2 - sx) * (y1 - sy)) * inv_area
                l1 = ((x2 - sx) * (y0 - sy) - (x0 - sx) * (y2 - sy)) * inv_area
                l2 = 1.0 - l0 - l1
                if l0 < 0.0 or l1 < 0.0 or l2 < 0.0:
                    continue
                # perspective-correct weights: interpolate 1/w linearly in screen space
                q0 = l0 * iw0
                q1 = l1 * iw1
                q2 = l2 * iw2
                s = q0 + q1 + q2
                b0 = q0 / s
                b1 = q1 / s
                b2 = q2 / s
                z = b0 * zv[i0] + b1 * zv[i1] + b2 * zv[i2]
                if z >= depth[j, i]:
                    continue
                if n_clip > 0:
                    removed = True
                    for k in range(n_clip):
                        if b0 * clip[i0, k] + b1 * clip[i1, k] + b2 * clip[i2, k] <= 0.0:
                            removed = False
                            break
                    if removed:
                        continue
                depth[j, i] = z
                tri[j, i] = t
                wts[j, i, 0] = b0
                wts[j, i, 1] = b1
                wts[j, i, 2] = b2


def rasterize(x_px: np.ndarray, y_px: np.ndarray, depth: np.ndarray, faces: np.ndarray,
              width: int, height: int, clip_values: np.ndarray | None = None,
              divisor: np.ndarray | None = None) -> Fragments:
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
    zbuf = np.full((height, width), np.inf)
    tri = np.full((height, width), -1, dtype=np.int32)
    wts = np.zeros((height, width, 3), dtype=np.float32)
    n = len(x_px)
    w = np.ones(n) if divisor is None else np.ascontiguousarray(divisor, dtype=np.float64)
    _scan(*(np.ascontiguousarray(a, dtype=np.float64) for a in (x_px, y_px, depth)), w, faces, clip,
          width, height, zbuf, tri, wts)
    return Fragments(tri, zbuf, wts)
