"""Tests of small multiples and time strips (orbitalrender.picture.layout).

References: the closed-form 1s radius (P(r < x) = 1 - e^{-2x}(1 + 2x + 2x^2)); the mean
radius <r> = (3 n^2 - l(l+1)) / 2 a0 (Bethe & Salpeter, Quantum Mechanics of One- and
Two-Electron Atoms, eq. 3.26) to tell a larger state from a smaller one; Bohr energies
E_n = -1/(2 n^2) hartree for the beat period of a superposition.
"""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from orbitalrender.picture.camera import Camera
from orbitalrender.picture.layout import (
    default_columns,
    shared_cameras,
    shell_states,
    small_multiples,
    time_strip,
)
from orbitalrender.state.model import eigenstate, real_orbital, superpose
from orbitalrender.surface.extract import extract_surface

SIDE = Camera(azimuth_deg=0.0, elevation_deg=0.0)


def _radius_px(render):
    return math.sqrt(float(render.rgba[..., 3].sum()) / math.pi)


def test_panels_share_one_scale_so_sizes_compare():
    # 1s and 2s at F = 0.5, drawn side by side: the ratio of their radii on the page must be
    # the ratio of the radii in a0 (the 1s one from its closed form).
    small = extract_surface(eigenstate(1, 0, 0), 0.5, resolution=40)
    large = extract_surface(eigenstate(2, 1, 1), 0.5, resolution=40)
    fig, renders = small_multiples([small, large], width_px=600, height_px=320, camera=SIDE,
                                   transparent=True)
    assert renders[0].px_per_a0 == renders[1].px_per_a0
    x = brentq(lambda x: 1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - 0.5, 0.01, 20)
    assert abs(_radius_px(renders[0]) - x * renders[0].px_per_a0) < 1.5
    # the 2p(m=1) surface is much larger: <r> = 5 a0 vs 1.5 a0 (Bethe & Salpeter 3.26)
    larger = np.ptp(np.nonzero(renders[1].rgba[..., 3] > 0.5)[1])
    smaller = np.ptp(np.nonzero(renders[0].rgba[..., 3] > 0.5)[1])
    assert larger > 2.0 * smaller
    # one legend and one scale bar for the figure, a title per panel
    assert len(fig.texts) == 2
    assert sum(1 for ax in fig.axes for t in ax.texts if "a_0" in t.get_text()) == 1


def test_shared_cameras_take_the_largest_extent():
    a = extract_surface(eigenstate(1, 0, 0), 0.9, resolution=32)
    b = extract_surface(eigenstate(2, 0, 0), 0.9, resolution=32)
    cams = shared_cameras([[a], [b]], SIDE)
    assert cams[0].half_extent_a0 == cams[1].half_extent_a0
    assert cams[0].half_extent_a0 >= np.abs(b.vertices_a0).max()


def test_time_strip_frames_follow_the_beat_and_share_one_centre():
    # (2p_z + 3d_z2)/sqrt(2): |psi|^2 oscillates with the beat period 2 pi / (E_3 - E_2),
    # E_n = -1/(2 n^2) hartree.  Frames one period apart are the same picture; half a period
    # later the density has moved to the other side (z -> -z), so the frame is mirrored.
    state = superpose([(1, real_orbital(2, 1, 0)), (1, real_orbital(3, 2, 0))])
    period = 2 * math.pi / (-1 / 18 + 1 / 8)
    fig, renders = time_strip(state, [0.0, 0.5 * period, period], fraction=0.6, resolution=40,
                              height_px=240, camera=SIDE, transparent=True)
    a0, a_half, a1 = (r.rgba[..., 3] for r in renders)
    assert {r.camera.target_a0 for r in renders} == {renders[0].camera.target_a0}
    assert np.abs(a0 - a1).mean() < 0.01
    assert np.abs(a0 - a_half).mean() > 0.05
    assert np.abs(a0 - a_half[::-1]).mean() < np.abs(a0 - a_half).mean() / 2
    assert [t.get_text() for t in fig.texts][:2] == ["t = 0 au", f"t = {0.5 * period:g} au"]


def test_shell_states_cover_the_shell():
    # n^2 states in shell n (degeneracy of the Bohr levels)
    for n in (1, 2, 3, 5):
        assert len(shell_states(n)) == n * n
        assert len(shell_states(n, "complex")) == n * n
    assert [s.label for s in shell_states(3)][4:] == ["3dz2", "3dxz", "3dyz", "3dx2-y2", "3dxy"]
    with pytest.raises(ValueError):
        shell_states(3, "spherical")


def test_default_columns_make_near_square_grids():
    assert [default_columns(k) for k in (1, 2, 3, 4)] == [1, 2, 3, 4]  # one row up to 4
    for count in range(5, 50):
        cols = default_columns(count)
        rows = math.ceil(count / cols)
        assert cols * rows >= count and 0 <= cols - rows <= 1
