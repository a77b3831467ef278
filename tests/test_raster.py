"""Tests of the z-buffer scan converter (orbitalrender.picture.raster).

References: the area of a triangle, 1/2 |cross product|; the point where a ray from a
pinhole meets a plane (closed form); nothing else is needed for a rasterizer.
"""

import numpy as np
import pytest

from orbitalrender.picture.raster import rasterize


def test_covered_pixels_match_the_triangle_area():
    # Pixel centres inside a large triangle number its area to within about half its
    # perimeter (each edge cuts pixels in half on average).
    x = np.array([10.3, 190.7, 60.2])
    y = np.array([15.1, 40.9, 170.4])
    f = rasterize(x, y, np.ones(3), np.array([[0, 1, 2]]), 200, 200)
    area = 0.5 * abs((x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0]))
    perimeter = sum(np.hypot(x[i] - x[i - 1], y[i] - y[i - 1]) for i in range(3))
    assert abs(f.covered.sum() - area) < 0.5 * perimeter * 0.5
    # either winding draws the same pixels
    g = rasterize(x, y, np.ones(3), np.array([[0, 2, 1]]), 200, 200)
    assert np.array_equal(f.covered, g.covered)


def _square(x0, x1, y0, y1, depth):
    x = np.array([x0, x1, x1, x0], dtype=float)
    y = np.array([y0, y0, y1, y1], dtype=float)
    return x, y, np.full(4, depth), np.array([[0, 1, 2], [0, 2, 3]])


def test_nearest_fragment_wins_in_either_order():
    near = _square(10, 40, 10, 40, 1.0)
    far = _square(20, 60, 20, 60, 5.0)
    for first, second in ((near, far), (far, near)):
        x = np.concatenate([first[0], second[0]])
        y = np.concatenate([first[1], second[1]])
        z = np.concatenate([first[2], second[2]])
        faces = np.concatenate([first[3], second[3] + 4])
        frag = rasterize(x, y, z, faces, 64, 64)
        near_ids = {0, 1} if first is near else {2, 3}
        assert frag.triangle[30, 30] in near_ids      # overlap: the near square
        assert frag.depth[30, 30] == pytest.approx(1.0)
        assert frag.depth[50, 50] == pytest.approx(5.0)  # only the far one there
        assert frag.triangle[5, 5] == -1 and np.isinf(frag.depth[5, 5])


def test_weights_are_perspective_correct():
    # A plane tilted in depth, seen by a pinhole at the origin looking down -z with focal
    # length f px.  For every covered pixel the weights must reproduce the 3D point where the
    # pixel's ray meets the plane (closed-form ray-plane intersection).
    f_px, cx, cy = 80.0, 50.0, 50.0
    world = np.array([[-1.0, -1.0, -2.0], [1.5, -1.0, -6.0], [-1.0, 1.5, -3.0]])
    w = -world[:, 2]
    x = cx + f_px * world[:, 0] / w
    y = cy - f_px * world[:, 1] / w
    frag = rasterize(x, y, w, np.array([[0, 1, 2]]), 100, 100, divisor=w)
    rows, cols = np.nonzero(frag.covered)
    assert len(rows) > 500
    points = frag.weights[rows, cols].astype(float) @ world
    normal = np.cross(world[1] - world[0], world[2] - world[0])
    ray = np.stack([(cols + 0.5 - cx) / f_px, -(rows + 0.5 - cy) / f_px, -np.ones(len(rows))], axis=1)
    t = (world[0] @ normal) / (ray @ normal)
    assert np.allclose(points, ray * t[:, None], atol=2e-5 * np.abs(world).max())
    assert np.allclose(frag.depth[rows, cols], t, rtol=1e-6)


def test_clipping_drops_fragments_in_the_removed_region():
    x, y, z, faces = _square(0, 40, 0, 40, 1.0)
    clip = (x - 20.0)[:, None]  # removed where x > 20
    frag = rasterize(x, y, z, faces, 40, 40, clip_values=clip)
    assert frag.covered[:, :20].all() and not frag.covered[:, 20:].any()
    # two planes: only their intersection (x > 20 and y > 20) is removed
    clip2 = np.stack([x - 20.0, y - 20.0], axis=1)
    frag2 = rasterize(x, y, z, faces, 40, 40, clip_values=clip2)
    assert not frag2.covered[20:, 20:].any()
    assert frag2.covered[:20].all() and frag2.covered[:, :20].all()


def test_triangles_off_screen_or_behind_the_eye_are_skipped():
    x = np.array([-50.0, -10, -30])
    y = np.array([5.0, 5, 30])
    assert not rasterize(x, y, np.ones(3), np.array([[0, 1, 2]]), 20, 20).covered.any()
    x, y = np.array([0.0, 20, 0]), np.array([0.0, 0, 20])
    behind = rasterize(x, y, np.ones(3), np.array([[0, 1, 2]]), 20, 20, divisor=np.array([1.0, -1, 1]))
    assert not behind.covered.any()
    with pytest.raises(ValueError):
        rasterize(x, y, np.ones(3), np.array([[0, 1, 2]]), 0, 20)
