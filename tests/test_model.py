"""States: real orbitals, superpositions, overlaps, time dependence, Z and reduced-mass scaling."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import physical_constants

from orbitalrender.state.model import State, Term, eigenstate, energy_hartree, real_orbital, superpose
from orbitalrender.state.notation import REAL_LABELS
from orbitalrender.state.phase import is_real
from orbitalrender.state.quadrature import integrate, space_grid
from orbitalrender.state.units import femtoseconds_to_au, nucleus_reduced_mass_ratio

# Cartesian forms of the real orbitals, up to a positive constant: the real solid
# harmonics times the radial factor r^l e^{-r/n} of a nodeless (n = l + 1) radial
# function (tables of real spherical harmonics, e.g. Blanco, Florez and Bermejo,
# J. Mol. Struct. THEOCHEM 419, 19 (1997), Table 1; signs as for the usual
# Condon-Shortley real combinations).
CARTESIAN = {
    "s": lambda x, y, z, r2: np.ones_like(x),
    "px": lambda x, y, z, r2: x,
    "py": lambda x, y, z, r2: y,
    "pz": lambda x, y, z, r2: z,
    "dxy": lambda x, y, z, r2: x * y,
    "dxz": lambda x, y, z, r2: x * z,
    "dyz": lambda x, y, z, r2: y * z,
    "dx2-y2": lambda x, y, z, r2: x * x - y * y,
    "dz2": lambda x, y, z, r2: 3 * z * z - r2,
    "fz3": lambda x, y, z, r2: z * (5 * z * z - 3 * r2),
    "fxz2": lambda x, y, z, r2: x * (5 * z * z - r2),
    "fyz2": lambda x, y, z, r2: y * (5 * z * z - r2),
    "fz(x2-y2)": lambda x, y, z, r2: z * (x * x - y * y),
    "fxyz": lambda x, y, z, r2: x * y * z,
    "fx(x2-3y2)": lambda x, y, z, r2: x * (x * x - 3 * y * y),
    "fy(3x2-y2)": lambda x, y, z, r2: y * (3 * x * x - y * y),
}


def _norm(state: State, grid=None) -> float:
    grid = grid or space_grid(state.centres_a0, radial_scale_a0=state.max_n**2 / state.Z)
    return integrate(state.density, grid).real


@pytest.mark.parametrize("key", sorted(REAL_LABELS))
def test_real_orbital_equals_its_cartesian_form(key):
    l, m = REAL_LABELS[key]
    n = l + 1
    state = real_orbital(n, l, m)
    rng = np.random.default_rng(len(key) + 7 * l)
    x, y, z = rng.normal(size=(3, 200)) * n
    r2 = x * x + y * y + z * z
    form = CARTESIAN[key](x, y, z, r2) * np.exp(-np.sqrt(r2) / n)
    psi = state.psi(x, y, z)
    assert np.max(np.abs(psi.imag)) <= 1e-14 * np.max(np.abs(psi))
    keep = np.abs(form) > 1e-3 * np.max(np.abs(form))  # the ratio is ill-defined at the nodes
    ratio = psi.real[keep] / form[keep]
    assert ratio.min() > 0, "the real orbital has the opposite sign of its Cartesian form"
    assert np.ptp(ratio) <= 1e-10 * ratio.mean()


@pytest.mark.parametrize("n,l,m", [(2, 1, 1), (3, 2, -2), (4, 3, 3), (5, 2, -1)])
def test_real_orbitals_are_normalised_and_real(n, l, m):
    # int |psi|^2 = 1 by the Becke quadrature, and psi is real: checks the 1/sqrt(2)
    # combination coefficients of the real orbital.
    s = real_orbital(n, l, m)
    assert abs(_norm(s) - 1.0) < 1e-9
    assert is_real(s)


@pytest.mark.parametrize("R,sign", [(0.7, 1), (1.4, -1), (2.0, 1), (4.0, -1)])
def test_two_centre_1s_normalisation_uses_the_closed_form_overlap(R, sign):
    # <1s_A|1s_B> = e^{-R}(1 + R + R^2/3) for nuclei R a0 apart (the Slater 1s-1s overlap,
    # e.g. Szabo and Ostlund, Modern Quantum Chemistry, eq. 3.229 with zeta = 1), so the
    # normalised 1s_A +- 1s_B has coefficients 1 / sqrt(2 (1 +- S)).
    S = math.exp(-R) * (1 + R + R * R / 3)
    s = superpose([(1, eigenstate(1, 0, 0, centre_a0=(0, 0, -R / 2))),
                   (sign, eigenstate(1, 0, 0, centre_a0=(0, 0, R / 2)))])
    for t in s.terms:
        assert abs(abs(t.coefficient) - 1 / math.sqrt(2 * (1 + sign * S))) < 1e-8


def test_cancelling_superposition_is_refused():
    with pytest.raises(ValueError, match="zero norm"):
        superpose([(1, eigenstate(2, 1, 0)), (-1, eigenstate(2, 1, 0))])


def test_density_of_1s_2pz_oscillates_at_the_bohr_frequency():
    # |c1 e^{-i E1 t} psi1 + c2 e^{-i E2 t} psi2|^2 = a^2 + b^2 + 2ab cos((E2 - E1) t) for real
    # psi1, psi2; E2 - E1 = 3/8 hartree from E_n = -1/(2 n^2) (Bethe and Salpeter eq. 2.11).
    s0 = superpose([(1, eigenstate(1, 0, 0)), (1, eigenstate(2, 1, 0))])
    p = (0.0, 0.3, 1.1)
    a = abs(s0.terms[0].coefficient) * eigenstate(1, 0, 0).psi(*p).real
    b = abs(s0.terms[1].coefficient) * eigenstate(2, 1, 0).psi(*p).real
    for t in (0.0, 1.0, 7.3, 100.0):
        expected = a * a + b * b + 2 * a * b * math.cos(0.375 * t)
        assert np.isclose(s0.at_time(t).density(*p), expected, rtol=1e-12)
    assert is_real(s0) and not is_real(s0.at_time(1.0))
    assert not s0.is_stationary


def test_femtoseconds_convert_with_the_codata_atomic_time():
    # One atomic unit of time is hbar / E_h = 2.4188843e-17 s (CODATA, scipy.constants).
    hbar = physical_constants["reduced Planck constant"][0]
    eh = physical_constants["Hartree energy"][0]
    assert np.isclose(femtoseconds_to_au(1.0), 1e-15 / (hbar / eh), rtol=1e-9)
    assert np.isclose(femtoseconds_to_au(1.0), 41.3413733, rtol=1e-8)  # CODATA 2018 value, from memory


def test_stationary_state_density_does_not_change_in_time():
    s = superpose([(1, eigenstate(3, 2, 1)), (0.5j, eigenstate(3, 0, 0))])
    p = np.array([[0.5, 1.0, -2.0], [3.0, -1.0, 0.2]]).T
    assert s.is_stationary
    assert np.allclose(s.density(*p), s.at_time(123.4).density(*p), rtol=1e-12)


def test_complex_eigenstates_with_m_nonzero_are_not_real():
    assert not is_real(eigenstate(2, 1, 1))
    assert is_real(eigenstate(3, 2, 0))


@pytest.mark.parametrize("l,m", [(0, 0), (39, -12)])
def test_n40_states_are_finite_and_normalised(l, m):
    # int |psi|^2 dV = 1 by the Becke quadrature: 300 radial points resolve the 39 - l
    # radial nodes; 40 Gauss-Legendre points in cos(theta) integrate |Y_l^m|^2 (degree 2l <= 78)
    # exactly.
    s = eigenstate(40, l, m)
    grid = space_grid([(0, 0, 0)], radial_scale_a0=1600.0, n_radial=300)
    values = s.psi(*grid.points_a0[:1000].T)
    assert np.all(np.isfinite(values))
    assert abs(integrate(s.density, grid).real - 1.0) < 1e-6


def test_z2_lengths_are_the_z1_lengths_halved():
    # psi_Z(r) = Z^{3/2} psi_1(Z r) (hydrogen-like scaling, Bethe and Salpeter section 3).
    rng = np.random.default_rng(3)
    p = rng.normal(size=(3, 50)) * 4
    for n, l, m in [(1, 0, 0), (3, 2, -1), (5, 4, 4)]:
        one = eigenstate(n, l, m).psi(*p)
        two = eigenstate(n, l, m, Z=2.0).psi(*(p / 2))
        assert np.allclose(two, 2**1.5 * one, rtol=1e-12, atol=0)


def test_reduced_mass_scales_lengths_like_z():
    # a_mu = a0 m_e / mu: psi with mu/m_e = k equals psi with Z = k.
    p = np.array([[0.4, -1.2, 2.5]]).T
    mu = nucleus_reduced_mass_ratio("positronium")
    assert np.allclose(eigenstate(2, 1, 0, reduced_mass_ratio=mu).psi(*p),
                       eigenstate(2, 1, 0, Z=mu).psi(*p), rtol=1e-13)


def test_bohr_energies_with_reduced_mass():
    # Positronium: mu = m_e / 2, E_1 = -1/4 hartree (Bethe and Salpeter section 2).
    mu_ps = nucleus_reduced_mass_ratio("positronium")
    assert mu_ps == 0.5
    assert energy_hartree(1, 1.0, mu_ps) == -0.25
    # Hydrogen: mu/m_e = M/(M + m_e) with the CODATA proton-electron mass ratio.
    mp = physical_constants["proton-electron mass ratio"][0]
    assert np.isclose(energy_hartree(1, 1.0, nucleus_reduced_mass_ratio("hydrogen")), -0.5 * mp / (mp + 1),
                      rtol=1e-15)
    # Infinite mass: E_n = -Z^2 R_inf hc / n^2, R_inf hc = E_h / 2 (CODATA).
    assert np.isclose(energy_hartree(3, 2.0), -4 / 9 * physical_constants["Rydberg constant times hc in J"][0]
                      / physical_constants["Hartree energy"][0], rtol=1e-12)


def test_state_refuses_bad_physics():
    t = (Term(1, 0, 0),)
    for kwargs in ({"Z": 0.0}, {"Z": -1.0}, {"Z": math.inf}, {"reduced_mass_ratio": 0.0},
                   {"time_au": math.nan}):
        with pytest.raises(ValueError):
            State(t, **kwargs)
    with pytest.raises(ValueError):
        State(())


def test_huge_and_tiny_coefficients_normalise_without_overflow():
    # |1s> and |2pz> are orthonormal (Bethe and Salpeter, section 3), so c (|1s> + |2pz>)
    # normalises to coefficients 1/sqrt(2) for any c; 1e300 squared overflows a double.
    from orbitalrender import eigenstate, superpose

    for c in (1e300, 1e-300):
        s = superpose([(c, eigenstate(1, 0, 0)), (c, eigenstate(2, 1, 0))])
        assert [abs(t.coefficient) for t in s.terms] == pytest.approx([2 ** -0.5] * 2, rel=1e-12)
