"""Brent's root and the Gauss-Legendre rules, against scipy.optimize.brentq, scipy.special
and closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import roots_legendre

from orbitalrender.state.numerics import bracketed_root, gauss_legendre

#: Functions with a sign change in [lo, hi]: smooth simple roots, a root with a flat
#: function (1e-12 times atan), a root at the end, a jump, a tiny root.
_CASES = [
    (lambda x: x**3 - 2.0 * x - 5.0, 2.0, 3.0),  # Newton's cubic, root 2.0945514815423265...
    (math.cos, 0.0, 3.0),
    (lambda x: math.exp(x) - 10.0, -5.0, 10.0),
    (lambda x: 1e-12 * math.atan(x - 0.3), -100.0, 100.0),
    (lambda x: x - 1e-300, 0.0, 1.0),
    (lambda x: math.copysign(1.0, x - 0.7), 0.0, 1.0),
    (lambda x: math.tanh(50.0 * (x - 0.123)), -4.0, 9.0),
]


@pytest.mark.parametrize("case", range(len(_CASES)))
@pytest.mark.parametrize("tols", [{}, {"xtol": 1e-13, "rtol": 1e-14}, {"xtol": 1e-4}])
def test_root_matches_scipy_brentq(case, tols):
    # scipy.optimize.brentq stops within xtol + rtol |x| of the root; both are Brent's method
    f, lo, hi = _CASES[case]
    ours, theirs = bracketed_root(f, lo, hi, **tols), brentq(f, lo, hi, **tols)
    tol = tols.get("xtol", 2e-12) + tols.get("rtol", 4 * np.finfo(float).eps) * abs(theirs)
    assert abs(ours - theirs) <= 2 * tol


def test_root_of_closed_forms():
    # sqrt(2) and pi/2 to round-off (closed forms)
    assert abs(bracketed_root(lambda x: x * x - 2.0, 0.0, 2.0, xtol=1e-15) - math.sqrt(2.0)) < 4e-16
    assert abs(bracketed_root(math.cos, 1.0, 2.0, xtol=1e-15) - math.pi / 2) < 4e-16


def test_root_at_a_multiple_root_still_converges():
    # (x - 1)^3: superlinear steps fail at a triple root, the method falls back on bisection
    x = bracketed_root(lambda x: (x - 1.0) ** 3, -3.0, 4.1)
    assert abs(x - 1.0) < 1e-11


def test_root_needs_a_sign_change():
    with pytest.raises(ValueError, match="change sign"):
        bracketed_root(lambda x: x * x + 1.0, -1.0, 1.0)


@pytest.mark.parametrize("count", [1, 2, 3, 5, 16, 17, 24, 63, 64, 320, 384, 1023, 2048])
def test_gauss_legendre_matches_scipy(count):
    # scipy.special.roots_legendre: nodes to round-off; weights to 1e-6 relative (scipy's
    # asymptotic weights for large counts are themselves good to about 1e-7 at the ends,
    # checked against 40-digit mpmath values while this was written)
    x, w = gauss_legendre(count)
    xs, ws = roots_legendre(count)
    assert np.max(np.abs(x - xs)) < 1e-15
    assert np.max(np.abs(w - ws) / ws) < 1e-6
    assert abs(w.sum() - 2.0) < 1e-13


@pytest.mark.parametrize("count", [7, 40, 2048])
def test_gauss_legendre_is_exact_for_polynomials(count):
    # an n-point rule integrates x^k exactly for k <= 2n - 1: int_-1^1 x^k dx = 2 / (k + 1), k even
    x, w = gauss_legendre(count)
    for k in range(0, min(2 * count - 1, 60), 2):
        assert abs(np.sum(w * x**k) - 2.0 / (k + 1)) < 1e-13


def test_gauss_legendre_is_symmetric_and_read_only():
    x, w = gauss_legendre(9)
    assert np.array_equal(x, -x[::-1]) and np.array_equal(w, w[::-1]) and x[4] == 0.0
    assert np.all(np.diff(x) > 0)
    with pytest.raises(ValueError):
        x[0] = 0.0
    with pytest.raises(ValueError, match="at least 1 node"):
        gauss_legendre(0)
