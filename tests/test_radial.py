"""P(r < R) and the radius holding a fraction, against closed forms and exact sympy integrals."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st
from sympy.physics.hydrogen import R_nl

from orbitalrender.state.radial import radial_cumulative, radius_holding


def test_1s_cumulative_closed_form():
    # P(r < R) = 1 - e^{-2R}(1 + 2R + 2R^2) for 1s (integral of 4 r^2 e^{-2r}).
    R = np.array([0.0, 0.1, 1.0, 2.6612, 7.0, 30.0])
    closed = 1 - np.exp(-2 * R) * (1 + 2 * R + 2 * R * R)
    assert np.allclose(radial_cumulative(1, 0, R), closed, rtol=1e-13, atol=1e-15)


def test_1s_radius_holding_90_percent():
    # 1 - e^{-2x}(1 + 2x + 2x^2) = 0.9 at x = 2.6612 a0 (same closed form, solved by hand).
    x = radius_holding(1, 0, 0.9)
    assert round(x, 4) == 2.6612
    assert abs(1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - 0.9) < 1e-12


@pytest.mark.parametrize("n,l", [(2, 0), (3, 1), (4, 3), (6, 2)])
def test_cumulative_matches_exact_sympy_integral(n, l):
    # int_0^R R_nl^2 r^2 dr done exactly by sympy (sympy.physics.hydrogen.R_nl, Z = 2).
    r, R = sp.symbols("r R", positive=True)
    exact = sp.lambdify(R, sp.integrate(R_nl(n, l, r, 2) ** 2 * r**2, (r, 0, R)))
    for radius in (0.3, 0.5 * n * n, 2.0 * n * n):
        assert np.isclose(radial_cumulative(n, l, radius, Z=2.0), exact(radius), rtol=1e-12, atol=1e-15)


def test_radius_scales_inversely_with_z_and_mass():
    # Lengths scale as n^2 a_mu / Z (hydrogen-like scaling).
    base = radius_holding(3, 2, 0.5)
    assert np.isclose(radius_holding(3, 2, 0.5, Z=4.0), base / 4, rtol=1e-11)
    assert np.isclose(radius_holding(3, 2, 0.5, reduced_mass_ratio=0.5), base * 2, rtol=1e-11)


@pytest.mark.parametrize("fraction", [0.0, 1.0, -0.1, 1.5])
def test_fraction_outside_the_open_interval_is_refused(fraction):
    with pytest.raises(ValueError):
        radius_holding(1, 0, fraction)


@given(n=st.integers(1, 40), data=st.data(), Z=st.floats(0.5, 20.0), F=st.floats(0.01, 0.99))
def test_radius_holding_inverts_the_cumulative(n, data, Z, F):
    # P(r < radius_holding(F)) = F, and the whole radial probability is one.
    l = data.draw(st.integers(0, n - 1))
    assert abs(radial_cumulative(n, l, radius_holding(n, l, F, Z), Z) - F) < 1e-10
    assert abs(radial_cumulative(n, l, 40.0 * n * n / Z, Z) - 1.0) < 1e-12
