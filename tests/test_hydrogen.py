"""psi_nlm, R_nl and Y_l^m against independent references (sympy, scipy.special)."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
import sympy as sp
from scipy.special import sph_harm_y
from sympy.physics.hydrogen import Psi_nlm, R_nl

from orbitalrender.state.hydrogen import (
    check_quantum_numbers,
    psi_nlm_xyz,
    radial_function,
    spherical_harmonic_xyz,
)

_R, _PHI, _THETA = sp.symbols("r phi theta", positive=True)
ALL_STATES_N6 = [(n, l, m) for n in range(1, 7) for l in range(n) for m in range(-l, l + 1)]


def _points(n: int, count: int, seed: int):
    """Random points (x, y, z, r, theta, phi) spread over the extent of shell n (about n^2 a0)."""
    rng = np.random.default_rng(seed)
    v = rng.normal(size=(count, 3))
    v /= np.linalg.norm(v, axis=1)[:, None]
    r = rng.uniform(0.05, 2.5, count) * n * n
    x, y, z = (v * r[:, None]).T
    return x, y, z, r, np.arccos(z / r), np.arctan2(y, x)


@pytest.mark.parametrize("n,l,m", ALL_STATES_N6)
def test_psi_matches_sympy_for_every_state_up_to_n6(n, l, m):
    # Reference: sympy.physics.hydrogen.Psi_nlm(n, l, m, r, phi, theta, Z) (phi azimuthal,
    # theta polar, Condon-Shortley Ynm), evaluated with mpmath at 30 digits.
    Z = 1 + (n + l + m) % 3  # Z = 1, 2 or 3 across the states
    ref = sp.lambdify((_R, _PHI, _THETA), Psi_nlm(n, l, m, _R, _PHI, _THETA, Z), modules="mpmath")
    x, y, z, r, theta, phi = _points(n, 4, seed=100 * n + 10 * l + m + 50)
    ours = psi_nlm_xyz(n, l, m, x, y, z, Z=Z)
    with mpmath.workdps(30):
        expected = np.array([complex(ref(mpmath.mpf(ri), mpmath.mpf(pi), mpmath.mpf(ti)))
                             for ri, pi, ti in zip(r, phi, theta)])
    # A relative error of 1e-10 on every point; points landing within 1e-6 of a node
    # (relative to the peak size) would make a relative measure meaningless, so the
    # denominator has a floor at 1e-6 of the largest reference value.
    floor = 1e-6 * np.max(np.abs(expected))
    rel = np.abs(ours - expected) / np.maximum(np.abs(expected), floor)
    assert np.max(rel) <= 1e-10


@pytest.mark.parametrize("n", range(1, 9))
def test_radial_function_matches_sympy_r_nl(n):
    # Reference: sympy.physics.hydrogen.R_nl(n, l, r, Z), evaluated at 30 digits.
    for l in range(n):
        Z = 1.0 + 0.5 * l
        ref = sp.lambdify(_R, R_nl(n, l, _R, sp.Rational(2 + l, 2)), modules="mpmath")
        r = np.linspace(0.01, 3.0 * n * n / Z, 9)
        with mpmath.workdps(30):
            expected = np.array([float(ref(mpmath.mpf(v))) for v in r])
        floor = 1e-6 * np.max(np.abs(expected))
        rel = np.abs(radial_function(n, l, r, Z) - expected) / np.maximum(np.abs(expected), floor)
        assert np.max(rel) <= 1e-10, (n, l)


@pytest.mark.parametrize("l", range(0, 13))
def test_spherical_harmonic_matches_scipy(l):
    # Reference: scipy.special.sph_harm_y(l, m, theta, phi), Condon-Shortley phase
    # (argument order: degree, order, polar, azimuthal).
    rng = np.random.default_rng(l)
    v = rng.normal(size=(40, 3)) * rng.uniform(0.1, 30.0, size=(40, 1))
    v[0] = (0.0, 0.0, 2.0)  # on the +z axis
    v[1] = (0.0, 0.0, -0.5)  # on the -z axis
    r = np.linalg.norm(v, axis=1)
    theta, phi = np.arccos(v[:, 2] / r), np.mod(np.arctan2(v[:, 1], v[:, 0]), 2 * np.pi)
    for m in range(-l, l + 1):
        ours = spherical_harmonic_xyz(l, m, *v.T)
        expected = sph_harm_y(l, m, theta, phi)
        assert np.allclose(ours, expected, rtol=1e-12, atol=1e-13), (l, m)


def test_spherical_harmonic_at_the_origin_is_taken_on_plus_z():
    # Y_l^0 on +z is sqrt((2l+1)/(4 pi)) (P_l(1) = 1; DLMF 14.30.1 with 14.7.1).
    for l in range(5):
        assert np.isclose(spherical_harmonic_xyz(l, 0, 0.0, 0.0, 0.0), math.sqrt((2 * l + 1) / (4 * math.pi)))


def test_psi_of_1s_at_nucleus_scales_as_z_to_three_halves():
    # psi_100(0) = sqrt(Z^3 / pi) (Bethe and Salpeter, eq. 3.17 with 3.5).
    for Z in (1.0, 2.0, 7.5):
        assert np.isclose(psi_nlm_xyz(1, 0, 0, 0.0, 0.0, 0.0, Z=Z), math.sqrt(Z**3 / math.pi), rtol=1e-13)


@pytest.mark.parametrize("bad", [(0, 0, 0), (2, 2, 0), (3, 1, -2), (1.5, 0, 0), (-1, 0, 0)])
def test_impossible_quantum_numbers_are_refused(bad):
    with pytest.raises(ValueError):
        check_quantum_numbers(*bad)


def test_nonpositive_z_is_refused():
    with pytest.raises(ValueError, match="Z must be positive"):
        radial_function(1, 0, 1.0, Z=0.0)


def test_n40_radial_function_is_finite_and_normalised():
    # int_0^inf R^2 r^2 dr = 1 (the normalisation of R_nl, Bethe and Salpeter eq. 3.16),
    # here by the trapezoid rule on a fine grid out to 6 n^2 a0, where R_40,l is below 1e-50.
    for l in (0, 1, 20, 39):
        r = np.linspace(0.0, 6 * 40**2, 400_001)
        R = radial_function(40, l, r)
        assert np.all(np.isfinite(R))
        assert abs(np.trapezoid(R * R * r * r, r) - 1.0) < 1e-9, l
