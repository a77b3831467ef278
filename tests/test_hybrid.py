"""Hybrid orbitals: geometry from psi itself, orthonormality, the notation and stationarity."""

import math

import numpy as np
import pytest
from scipy.optimize import minimize

import orbitalrender as orb
from orbitalrender.state.hybrid import HYBRID_SETS, hybrid_coefficients
from orbitalrender.state.notation import hybrid_set_size, parse_states, pretty_label
from orbitalrender.state.quadrature import integrate, space_grid


def _lobe_direction(state: orb.State, radius_a0: float) -> np.ndarray:
    """Direction of the largest |psi| on a sphere beyond the radial nodes, found from psi
    alone: the best of 2000 Fibonacci-sphere points, refined by Nelder-Mead in (theta, phi).
    The major lobe must be the positive one."""
    k = np.arange(2000) + 0.5
    cos_t = 1 - 2 * k / 2000
    phi = math.pi * (1 + 5**0.5) * k
    s = np.sqrt(1 - cos_t**2)
    pts = np.stack([s * np.cos(phi), s * np.sin(phi), cos_t], axis=1)

    def value(p):
        return float(np.abs(state.psi(*(radius_a0 * p.T)))[0])

    def minus(angles):
        t, f = angles
        return -value(np.array([[math.sin(t) * math.cos(f), math.sin(t) * math.sin(f), math.cos(t)]]))

    best = pts[int(np.argmax(np.abs(state.psi(*(radius_a0 * pts.T)))))]
    start = [math.acos(np.clip(best[2], -1, 1)), math.atan2(best[1], best[0])]
    res = minimize(minus, start, method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-14})
    t, f = res.x
    d = np.array([math.sin(t) * math.cos(f), math.sin(t) * math.sin(f), math.cos(t)])
    assert np.real(state.psi(*(radius_a0 * d))) > 0
    return d


def _angle_deg(a, b) -> float:
    return math.degrees(math.acos(np.clip(np.dot(a, b), -1.0, 1.0)))


def test_sp3_lobes_are_tetrahedral():
    # Tetrahedral angle arccos(-1/3) = 109.4712 degrees (solid geometry of the regular
    # tetrahedron; any general chemistry text).
    dirs = [_lobe_direction(h, 5.0) for h in parse_states("sp3")]
    want = math.degrees(math.acos(-1 / 3))
    for i in range(4):
        for j in range(i + 1, 4):
            assert _angle_deg(dirs[i], dirs[j]) == pytest.approx(want, abs=1e-3)


def test_sp2_lobes_are_trigonal_in_the_xy_plane():
    # Trigonal planar: 120 degrees apart, in one plane (the xy plane by construction).
    dirs = [_lobe_direction(h, 5.0) for h in parse_states("sp2")]
    for d in dirs:
        assert abs(d[2]) < 1e-4
    for i in range(3):
        for j in range(i + 1, 3):
            assert _angle_deg(dirs[i], dirs[j]) == pytest.approx(120.0, abs=1e-3)
    assert dirs[0] == pytest.approx([1, 0, 0], abs=1e-4)  # the first along +x


def test_sp3d2_lobes_lie_on_the_axes_and_sp_on_z():
    axes = [(1, 0, 0), (-1, 0, 0), (0, 1, 0), (0, -1, 0), (0, 0, 1), (0, 0, -1)]
    for h, axis in zip(parse_states("sp3d2"), axes):
        assert _lobe_direction(h, 12.0) == pytest.approx(axis, abs=1e-4)
    for h, axis in zip(parse_states("sp"), axes[4:]):
        assert _lobe_direction(h, 5.0) == pytest.approx(axis, abs=1e-4)


def test_sp3d_axial_and_equatorial_members():
    members = parse_states("sp3d")
    assert _lobe_direction(members[0], 12.0) == pytest.approx([0, 0, 1], abs=1e-4)
    assert _lobe_direction(members[1], 12.0) == pytest.approx([0, 0, -1], abs=1e-4)
    equatorial = [_lobe_direction(h, 12.0) for h in members[2:]]
    assert equatorial[0] == pytest.approx([1, 0, 0], abs=1e-4)
    assert _angle_deg(equatorial[1], equatorial[2]) == pytest.approx(120.0, abs=1e-3)


@pytest.mark.parametrize("name", list(HYBRID_SETS))
def test_coefficient_matrix_is_orthonormal(name):
    _, c = hybrid_coefficients(name)
    assert np.abs(c @ c.T - np.eye(len(c))).max() < 1e-6


@pytest.mark.parametrize("name", ["sp3", "sp3d", "sp3d2"])
def test_members_are_orthonormal_as_functions(name):
    # <h_i|h_j> = delta_ij by an independent quadrature of psi itself (Becke grid, exact
    # for the angular part, mapped Gauss-Legendre in r).
    members = parse_states(name)
    grid = space_grid([(0, 0, 0)], radial_scale_a0=members[0].max_n ** 2)
    for i, a in enumerate(members):
        for j, b in enumerate(members[i:], start=i):
            s = integrate(lambda x, y, z, a=a, b=b: np.conj(a.psi(x, y, z)) * b.psi(x, y, z), grid)
            assert abs(s - (i == j)) < 1e-6


def test_members_are_orthonormal_on_the_lattice():
    # The lattice sum converges as h^4 (the s cusp at the nucleus), so at 96^3 the Gram
    # matrix is the identity to 1e-4 and the error shrinks with the spacing.
    members = parse_states("sp3")
    box = orb.default_box(members[0])

    def gram(res):
        v = np.array([orb.sample(m, res, box, dtype=np.complex128).values.ravel() for m in members])
        return np.conj(v) @ v.T * (2 * box.half_width_a0 / (res - 1)) ** 3

    coarse, fine = (np.abs(gram(r) - np.eye(4)).max() for r in (48, 96))
    assert fine < 1e-4
    assert fine < coarse / 8


def test_member_is_stationary_and_has_the_shell_energy():
    h = orb.parse_state("3sp3[2]", Z=2.0)
    assert h.is_stationary and {t.n for t in h.terms} == {3}
    props = orb.state_properties(h)
    # Bohr energy -Z^2/(2 n^2) hartree (any quantum mechanics text).
    assert props.mean_energy_hartree == pytest.approx(-4 / 18, rel=1e-12)
    assert any("stationary" in note for note in props.notes) and props.kind == "hybrid orbital"


def test_notation_forms_and_refusals():
    assert [s.label for s in parse_states("3sp3")] == [f"3sp3[{k}]" for k in range(1, 5)]
    assert orb.parse_state("sp3d2[6]@(0,0,1)").centres_a0 == ((0.0, 0.0, 1.0),)
    assert hybrid_set_size("sp3d2") == 6 and hybrid_set_size("sp3d2[1]") is None
    assert pretty_label("sp3d[1]") == "sp$^{3}$d[1]"
    for text, words in [("sp3", "pick one member"), ("sp4", "unknown hybrid"),
                        ("sp3[0]", "members [1] to [4]"), ("2sp3d2[1]", "needs n >= 3"),
                        ("1s + sp2", "pick one member")]:
        with pytest.raises(ValueError, match=r"\S") as err:
            orb.parse_state(text)
        assert words in str(err.value) and "\n" not in str(err.value)


def test_figure_of_a_set_draws_every_member_in_one_scene(tmp_path):
    import json

    from orbitalrender.cli import main

    out, rep = tmp_path / "sp.png", tmp_path / "sp.json"
    assert main(["figure", "sp", "--resolution", "24", "--size", "240x200", "--supersample", "1",
                 "--out", str(out), "--report", str(rep)]) == 0
    panels = json.loads(rep.read_text())["panels"]
    assert [p["state"] for p in panels] == ["sp[1]", "sp[2]"]
    assert main(["mesh", "sp", "--out", str(tmp_path / "m.ply")]) == 2  # a set is refused
    assert not (tmp_path / "m.ply").exists()
