"""Point clouds drawn from |psi|^2, checked against closed forms, sympy and the lattice."""

import math

import numpy as np
import pytest
import sympy
from scipy import stats
from scipy.integrate import quad
from scipy.optimize import brentq
from sympy.physics.hydrogen import R_nl

import orbitalrender as orb
from orbitalrender.lattice import cloud as cloud_module
from orbitalrender.lattice import memory
from orbitalrender.lattice.cloud import draw_cloud


def _radii(c):
    return np.linalg.norm(c.points_a0, axis=1)


@pytest.mark.parametrize("fraction", [0.5, 0.9])
def test_1s_cloud_holds_F_inside_the_closed_form_radius(fraction):
    # P(r < x) = 1 - e^{-2x}(1 + 2x + 2x^2) for 1s (x in a0; integral of 4 r^2 e^{-2r}).
    x = brentq(lambda x: 1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - fraction, 0.01, 30)
    c = draw_cloud(orb.parse_state("1s"), 200_000, seed=11)
    inside = float(np.mean(_radii(c) < x))
    se = math.sqrt(fraction * (1 - fraction) / c.count)  # binomial standard error
    assert abs(inside - fraction) < 4 * se


def test_2p1_cloud_has_mean_cos2_one_fifth():
    # |Y_1^1|^2 ~ sin^2 theta, so <cos^2 theta> = int t^2 (1-t^2) / int (1-t^2) = 1/5.
    c = draw_cloud(orb.parse_state("2,1,1"), 200_000, seed=12)
    cos2 = (c.points_a0[:, 2] / _radii(c)) ** 2
    se = float(np.std(cos2)) / math.sqrt(c.count)
    assert abs(float(np.mean(cos2)) - 0.2) < 4 * se


def test_3s_cloud_inside_its_first_radial_node():
    # First node of R_30 at (9 - 3 sqrt 3)/2 a0 (root of 27 - 18 r + 2 r^2); the share
    # inside by scipy quad of sympy's R_30.
    node = (9 - 3 * math.sqrt(3)) / 2
    r = sympy.symbols("r")
    radial = sympy.lambdify(r, R_nl(3, 0, r, 1) ** 2 * r**2, "math")
    want = quad(radial, 0, node, epsabs=1e-14)[0]
    c = draw_cloud(orb.parse_state("3s"), 200_000, seed=13)
    inside = float(np.mean(_radii(c) < node))
    se = math.sqrt(want * (1 - want) / c.count)
    assert abs(inside - want) < 4 * se


@pytest.mark.parametrize("text", ["1s + i*2px", "1s@(0,0,-1) - 1s@(0,0,1)", "sp3[2]"])
def test_superposition_cloud_matches_the_lattice_density(text):
    # Chi-square of the counts in 8 octants x 2 shells inside the box against the shares
    # summed from the lattice's |psi|^2 (whose sum is off by about 1e-4, the h^4 error at
    # the cusps, so the tiny share outside the box is not compared); seeded, so the
    # verdict is the same on every run.
    state = orb.parse_state(text)
    lat = orb.sample(state, 96, dtype=np.complex128)
    x, y, z = np.meshgrid(*lat.axes(), indexing="ij")
    radius = 2.0 * state.max_n

    def cell(px, py, pz):
        return ((px > 0) + 2 * (py > 0) + 4 * (pz > 0)
                + 8 * (np.sqrt(px * px + py * py + pz * pz) > radius)).astype(int)

    prob = np.bincount(cell(x, y, z).ravel(), weights=lat.density().ravel(), minlength=16)
    prob *= lat.voxel_volume_a0_3
    c = draw_cloud(state, 40_000, seed=14)
    lo, hi = np.array(lat.extent_a0()).T
    in_box = np.all((c.points_a0 >= lo) & (c.points_a0 <= hi), axis=1)
    counts = np.bincount(cell(*c.points_a0[in_box].T), minlength=16)
    assert np.count_nonzero(~in_box) < 20  # the box holds all but about 1e-4
    used = prob * c.count > 5  # chi-square needs expected counts of at least 5 (common practice)
    expected = prob[used] / prob[used].sum() * counts[used].sum()
    assert stats.chisquare(counts[used], expected).pvalue > 1e-3


def test_radial_inverse_cdf_error_is_below_1e_9():
    u = np.random.default_rng(0).random(20_000)
    r = cloud_module._radial_table(1, 0)(u)
    closed = 1 - np.exp(-2 * r) * (1 + 2 * r + 2 * r * r)  # 1s radial CDF
    assert np.abs(closed - u).max() < 1e-9
    from orbitalrender.state.radial import radial_cumulative
    for n, l in [(3, 0), (4, 3), (6, 2)]:
        r = cloud_module._radial_table(n, l)(u[:500])
        assert np.abs(radial_cumulative(n, l, r) - u[:500]).max() < 1e-9


def test_scaling_with_Z_and_the_azimuth_of_a_real_orbital():
    # <r> = 3/(2Z) a0 for 1s (Bethe and Salpeter).
    c = draw_cloud(orb.parse_state("1s", Z=3.0), 100_000, seed=15)
    r = _radii(c)
    assert abs(r.mean() - 0.5) < 4 * r.std() / math.sqrt(c.count)
    # 3d_xy ~ sin^2(2 phi) = (1 - cos 4 phi)/2, so <cos 4 phi> = -1/2 (trigonometric identity).
    real = draw_cloud(orb.parse_state("3dxy"), 50_000, seed=16)
    cos4 = np.cos(4 * np.arctan2(real.points_a0[:, 1], real.points_a0[:, 0]))
    assert abs(cos4.mean() + 0.5) < 4 * cos4.std() / math.sqrt(real.count)
    assert real.accepted_fraction == 1.0


def test_mixture_keeps_one_over_S_squared():
    # sp3[1] = (s + p_x + p_y + p_z)/2 over complex terms |2 0 0>, |2 1 0>, |2 1 +-1> whose
    # coefficients all have modulus 1/2, so S = 2 and 1/S^2 = 1/4 are kept.
    c = draw_cloud(orb.parse_state("sp3[1]"), 20_000, seed=17)
    se = math.sqrt(0.25 * 0.75 / c.proposals)
    assert abs(c.accepted_fraction - 0.25) < 4 * se


def test_seed_reproduces_points_and_psi():
    state = orb.parse_state("sp3d2[5]")
    a, b = (draw_cloud(state, 3000, seed=7) for _ in range(2))
    assert a.points_a0.tobytes() == b.points_a0.tobytes() and a.psi.tobytes() == b.psi.tobytes()
    assert draw_cloud(state, 3000, seed=8).points_a0.tobytes() != a.points_a0.tobytes()
    assert np.allclose(a.psi, state.psi(*a.points_a0.T))


@pytest.mark.parametrize("count", [0, -5, 2.5, True, cloud_module.MAX_POINTS + 1])
def test_bad_counts_are_refused(count):
    with pytest.raises(ValueError, match="number of points"):
        draw_cloud(orb.parse_state("1s"), count)


def test_memory_is_checked_before_drawing(monkeypatch):
    monkeypatch.setattr(memory, "available_bytes", lambda: 10**6)
    with pytest.raises(memory.MemoryLimitError, match="cloud of 1000000 points"):
        draw_cloud(orb.parse_state("1s"), 1_000_000)
