"""Derived quantities against closed forms (Bethe and Salpeter), scipy.special zeros and CODATA."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st
from scipy.constants import physical_constants
from scipy.special import roots_genlaguerre, roots_legendre
from sympy.physics.hydrogen import R_nl

from orbitalrender.state.model import eigenstate, real_orbital, superpose
from orbitalrender.state.notation import parse_state
from orbitalrender.state.properties import (
    EigenProperties,
    SuperpositionProperties,
    eigen_properties,
    most_probable_radius,
    nodal_cone_angles,
    nodal_plane_azimuths,
    radial_moment,
    radial_node_radii,
    state_properties,
)
from orbitalrender.state.units import nucleus_reduced_mass_ratio

MU_H = nucleus_reduced_mass_ratio("hydrogen")
SHELLS = [(n, l) for n in (1, 2, 3, 4, 7, 12, 25, 40) for l in sorted({0, 1, n // 2, n - 1}) if l < n]


def _closed_moments(n, l, Z, mu):
    # Bethe and Salpeter, eqs. 3.24-3.26, with a = a0 m_e / mu:
    # <r> = (a / 2Z)(3n^2 - l(l+1)), <r^2> = (a^2 n^2 / 2Z^2)(5n^2 + 1 - 3l(l+1)), <1/r> = Z / (a n^2).
    a = 1.0 / mu
    return (a / (2 * Z) * (3 * n * n - l * (l + 1)),
            a * a * n * n / (2 * Z * Z) * (5 * n * n + 1 - 3 * l * (l + 1)),
            Z / (a * n * n))


@pytest.mark.parametrize("n,l", SHELLS)
@pytest.mark.parametrize("Z,mu", [(1.0, 1.0), (3.0, MU_H), (1.0, 0.5)])
def test_radial_moments_match_bethe_salpeter(n, l, Z, mu):
    r1, r2, rinv = _closed_moments(n, l, Z, mu)
    assert np.isclose(radial_moment(n, l, 1, Z, mu), r1, rtol=1e-11)
    assert np.isclose(radial_moment(n, l, 2, Z, mu), r2, rtol=1e-11)
    assert np.isclose(radial_moment(n, l, -1, Z, mu), rinv, rtol=1e-11)
    assert np.isclose(radial_moment(n, l, 0, Z, mu), 1.0, rtol=1e-11)  # normalisation


def test_moment_below_minus_two_is_refused():
    with pytest.raises(ValueError, match="diverges"):
        radial_moment(2, 1, -3)


def test_2s_and_3s_node_radii():
    # R_20 ∝ (2 - r) e^{-r/2}: node at 2 a0; R_30 ∝ (27 - 18r + 2r^2) e^{-r/3}: nodes at
    # (9 -+ 3 sqrt 3)/2 a0 (Bethe and Salpeter, Table 1 of section 3).
    assert np.allclose(radial_node_radii(2, 0), [2.0], rtol=1e-13)
    assert np.allclose(radial_node_radii(3, 0), [(9 - 3 * math.sqrt(3)) / 2, (9 + 3 * math.sqrt(3)) / 2],
                       rtol=1e-13)


@pytest.mark.parametrize("n,l", [(5, 1), (12, 3), (40, 0), (40, 7), (40, 38)])
def test_node_radii_are_the_laguerre_zeros(n, l):
    # The nodes of R_nl sit at rho = 2 Z r/(n a) = the zeros of L_{n-l-1}^{(2l+1)}
    # (scipy.special.roots_genlaguerre gives them independently, by Golub-Welsch).
    Z = 2.0
    nodes = np.array(radial_node_radii(n, l, Z))
    zeros = roots_genlaguerre(n - l - 1, 2 * l + 1)[0]
    assert len(nodes) == n - l - 1
    assert np.allclose(nodes * 2 * Z / n, zeros, rtol=1e-10)


def test_most_probable_radius_closed_forms():
    # Circular states l = n-1: r^2 R^2 ∝ r^{2n} e^{-2Zr/n}, largest at n^2 a / Z.
    for n in (1, 2, 5, 20, 40):
        for Z in (1.0, 2.5):
            assert np.isclose(most_probable_radius(n, n - 1, Z), n * n / Z, rtol=1e-13)
    # 2s: d/dr [r^2 (2 - r)^2 e^{-r}] = 0 at r = 3 + sqrt 5 (the outer, larger maximum).
    assert np.isclose(most_probable_radius(2, 0), 3 + math.sqrt(5), rtol=1e-13)


def test_radius_holding_90_percent_of_1s():
    # 1 - e^{-2x}(1 + 2x + 2x^2) = 0.9 at x = 2.6612 a0 (closed-form cumulative of 1s).
    p = eigen_properties(1, 0, 0)
    assert round(p.radius_90_percent_a0, 4) == 2.6612


def test_3dz2_nodal_cones():
    # 3 cos^2 theta - 1 = 0: theta = arccos(+-1/sqrt 3).
    t = math.acos(1 / math.sqrt(3))
    assert np.allclose(nodal_cone_angles(2, 0), [t, math.pi - t], rtol=1e-13)
    p = state_properties(parse_state("3dz2"))
    assert np.allclose(p.nodal_cone_angles_deg, [math.degrees(t), 180 - math.degrees(t)])


@pytest.mark.parametrize("l", [1, 4, 9, 30, 39])
def test_m0_cones_are_the_legendre_zeros(l):
    # Zeros of P_l(cos theta): scipy.special.roots_legendre (Gauss-Legendre nodes).
    x = np.sort(roots_legendre(l)[0])[::-1]  # largest cos theta first = smallest theta
    assert np.allclose(np.cos(nodal_cone_angles(l, 0)), x, atol=1e-13)


def test_cones_of_m_nonzero_are_zeros_of_the_associated_legendre():
    # P_3^1(x) ∝ (1 - x^2)^{1/2} (5x^2 - 1): cones at cos theta = +-1/sqrt 5 (DLMF table 14.5).
    t = math.acos(1 / math.sqrt(5))
    assert np.allclose(nodal_cone_angles(3, -1), [t, math.pi - t], rtol=1e-13)
    assert nodal_cone_angles(3, 3) == ()


def test_plane_azimuths_are_where_the_real_orbital_vanishes():
    # 3d_xy ∝ xy: planes x = 0 (phi = 90 deg) and y = 0 (phi = 0); 3d_x2-y2 ∝ x^2 - y^2:
    # phi = 45 and 135 deg; 2p_x ∝ x: phi = 90 deg.
    assert np.allclose(np.degrees(nodal_plane_azimuths(-2)), [0, 90])
    assert np.allclose(np.degrees(nodal_plane_azimuths(2)), [45, 135])
    assert np.allclose(np.degrees(nodal_plane_azimuths(1)), [90])
    for m in (-3, 3, 1, -1):  # and the orbitals themselves vanish there
        s = real_orbital(4, 3, m)
        for phi in nodal_plane_azimuths(m):
            r = np.array([1.0, 2.5, 4.0])
            pts = (r * math.cos(phi), r * math.sin(phi), 0.3 * r)
            assert np.max(np.abs(s.psi(*pts))) < 1e-15


def test_energies_in_ev_use_codata():
    # E_1 of infinite-mass hydrogen is -R_inf hc = -13.605693... eV (CODATA via scipy.constants).
    p = eigen_properties(1, 0, 0)
    assert np.isclose(p.energy_eV, -physical_constants["Rydberg constant times hc in eV"][0], rtol=1e-12)
    # Positronium E_1 = -1/4 hartree (mu = m_e / 2).
    assert eigen_properties(1, 0, 0, reduced_mass_ratio=0.5).energy_hartree == -0.25


def test_z2_lengths_are_halved():
    one, two = eigen_properties(4, 1, 0), eigen_properties(4, 1, 0, Z=2.0)
    for key in ("mean_radius_a0", "most_probable_radius_a0", "radius_90_percent_a0"):
        assert np.isclose(getattr(two, key), getattr(one, key) / 2, rtol=1e-9), key
    assert np.allclose(two.radial_node_radii_a0, np.array(one.radial_node_radii_a0) / 2, rtol=1e-12)
    assert np.isclose(two.energy_hartree, 4 * one.energy_hartree)


def test_n40_properties_are_finite():
    p = eigen_properties(40, 0, 0)
    d = p.as_dict()
    assert len(d["radial_node_radii_a0"]) == 39
    assert all(math.isfinite(v) for v in d.values() if isinstance(v, float))


def test_real_orbitals_share_the_radial_quantities_of_their_shell():
    real = state_properties(parse_state("4fxyz"))
    assert isinstance(real, EigenProperties) and real.kind == "real orbital" and real.m == -2
    plain = eigen_properties(4, 3, -2)
    assert real.mean_radius_a0 == plain.mean_radius_a0
    assert real.nodal_cone_angles_deg == plain.nodal_cone_angles_deg  # P_3^2 ∝ x: the xy plane
    assert np.allclose(real.nodal_cone_angles_deg, [90.0])
    mixed = state_properties(superpose([(1, eigenstate(3, 1, 1)), (0.3, eigenstate(3, 1, 0))]))
    assert mixed.kind == "shell" and mixed.nodal_cone_angles_deg is None


def test_single_centre_superposition_moments():
    # 1s + 2p0 (equal weights): cross terms vanish by angular orthogonality, so
    # <r> = (1.5 + 5) / 2 = 3.25, <r^2> = (3 + 30) / 2, <1/r> = (1 + 1/4) / 2 (Bethe and Salpeter).
    p = state_properties(parse_state("1s + 2,1,0"))
    assert isinstance(p, SuperpositionProperties)
    assert np.isclose(p.mean_radius_a0, 3.25, rtol=1e-9)
    assert np.isclose(p.mean_square_radius_a0_2, 16.5, rtol=1e-9)
    assert np.isclose(p.mean_inverse_radius_per_a0, 0.625, rtol=1e-9)
    assert np.isclose(p.mean_energy_hartree, (-0.5 - 0.125) / 2)


def test_same_l_superposition_includes_the_radial_cross_term():
    # (1s + 2s)/sqrt 2: <r> = (3/2 + 6)/2 + <1s|r|2s>, the cross term by exact sympy integration.
    r = sp.symbols("r", positive=True)
    cross = float(sp.integrate(R_nl(1, 0, r, 1) * R_nl(2, 0, r, 1) * r**3, (r, 0, sp.oo)))
    p = state_properties(parse_state("1s + 2s"))
    assert np.isclose(p.mean_radius_a0, 3.75 + cross, rtol=1e-9)


def test_two_centre_quantities_are_reported_as_not_defined():
    p = state_properties(parse_state("1s@(0,0,-0.7) - 1s@(0,0,0.7)"))
    assert p.mean_radius_a0 is None and p.mean_energy_hartree is None
    assert "centres" in p.notes[0]
    d = p.as_dict()
    assert d["terms"][0]["centre_a0"] == [0.0, 0.0, -0.7]


@given(n=st.integers(1, 40), data=st.data(), Z=st.floats(0.2, 30.0))
def test_random_shells_are_normalised_and_have_all_their_nodes(n, data, Z):
    # int R^2 r^2 dr = 1 and n - l - 1 radial nodes (Sturm oscillation count) for any valid n, l, Z.
    l = data.draw(st.integers(0, n - 1))
    assert np.isclose(radial_moment(n, l, 0, Z), 1.0, rtol=1e-11)
    assert len(radial_node_radii(n, l, Z)) == n - l - 1


# -- every reported number stays finite and right up to the largest supported n -----------------
def _sweep_states() -> list[tuple[int, int, int]]:
    """A handful of (n, l, m) per decade of n up to N_MAX: both l extremes (l = 0, l = n - 1
    with m = +-l) everywhere, and a middle l at the largest n."""
    from orbitalrender.state.limits import N_MAX

    picks = []
    for n in (1, 2, 5, 10, 20, 50, 100, N_MAX):
        picks += [(n, 0, 0), (n, n - 1, (n - 1) * (-1) ** n)]
        if n == N_MAX:
            picks.append((n, n // 2, 3))
    return list(dict.fromkeys(picks))


def _closed_forms(n: int, l: int) -> dict:
    # Bethe and Salpeter, eq. 3.26 (Z = 1, infinite nuclear mass, lengths in a0), and the
    # Bohr energy -1 / (2 n^2) hartree; the most probable radius of l = n - 1 is n^2 a0
    # (R ~ r^(n-1) e^(-r/n), so r^2 R^2 peaks at r = n^2).
    return {"energy_hartree": -0.5 / n**2, "mean_radius_a0": 0.5 * (3 * n * n - l * (l + 1)),
            "mean_square_radius_a0_2": 0.5 * n * n * (5 * n * n + 1 - 3 * l * (l + 1)),
            "mean_inverse_radius_per_a0": 1.0 / n**2}


def test_describe_and_radial_report_finite_closed_form_values_up_to_the_largest_n(capsys, tmp_path):
    import json
    import math

    from orbitalrender.cli import main

    for n, l, m in _sweep_states():
        state = f"{n},{l},{m}"
        assert main(["describe", state, "--json"]) == 0
        out, err = capsys.readouterr()
        assert err == ""  # no warning of any library
        data = json.loads(out)
        for key, value in _closed_forms(n, l).items():
            assert math.isclose(data[key], value, rel_tol=1e-12), (state, key, data[key], value)
        assert len(data["radial_node_radii_a0"]) == n - l - 1
        assert all(math.isfinite(v) for v in data["radial_node_radii_a0"]), state
        assert math.isfinite(data["radius_90_percent_a0"]), state
        if l == n - 1:
            assert math.isclose(data["most_probable_radius_a0"], n * n, rel_tol=1e-9), state
        assert main(["describe", state]) == 0
        text, err = capsys.readouterr()
        assert err == "" and "nan" not in text and "inf" not in text, state
        report = tmp_path / "r.json"
        assert main(["radial", state, "--dpi", "20", "--out", str(tmp_path / "r.png"),
                     "--report", str(report)]) == 0
        assert capsys.readouterr().err == ""
        mark = json.loads(report.read_text())["marks"][0]
        assert len(mark["node_radii_a0"]) == n - l - 1
        assert all(math.isfinite(v) for v in mark["node_radii_a0"] + [mark["most_probable_radius_a0"]])


def test_n_above_the_largest_is_refused_in_one_line(capsys):
    # 203,2,-1 was drawn by the STATE-mutation property test and ended in an internal error
    from orbitalrender.cli import main

    assert main(["describe", "203,2,-1", "--json"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "n must be at most 200" in err
