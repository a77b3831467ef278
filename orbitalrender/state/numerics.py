"""State step, numerical tools shared by the steps above: a bracketed root and Gauss-Legendre rules.

Both are written here with numpy alone, so a command that needs a root or a quadrature
rule does not load ``scipy.optimize`` (a quarter of a second of imports) or
``scipy.special``'s Legendre roots (whose first call also loads ``scipy.linalg``).
``tests/test_numerics.py`` compares them with ``scipy.optimize.brentq`` and
``scipy.special.roots_legendre``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from functools import lru_cache

import numpy as np

__all__ = ["bracketed_root", "gauss_legendre"]

_EPS = float(np.finfo(float).eps)
#: Newton steps of the Legendre nodes at most; from Tricomi's first guess three reach
#: round-off for every count tried (2 to 4096), the rest is a safety margin.
_NEWTON_STEPS = 12


def bracketed_root(f: Callable[[float], float], lo: float, hi: float, *, xtol: float = 2e-12,
                   rtol: float = 4 * _EPS, maxiter: int = 1000) -> float:
    """A zero of `f` between `lo` and `hi`, where f changes sign, by Brent's method.

    Brent's method keeps a bracket [b, c] with a sign change and takes inverse quadratic
    (or secant) steps while they shrink the bracket fast enough, bisection otherwise, so
    it converges superlinearly on smooth functions and never slower than bisection.

    Parameters
    ----------
    f : callable
        A real function of one real variable.
    lo, hi : float
        Ends of the bracket; f(lo) and f(hi) must not have the same sign.
    xtol, rtol : float
        The root is returned once it is known within ``xtol + rtol * |x|`` (the same
        tolerances, with the same defaults, as ``scipy.optimize.brentq``).
    maxiter : int
        Evaluations of f at most after the two ends.  A simple root takes about ten; at a
        multiple root the method bisects every few steps, and a bracket 1e13 tolerances
        wide then takes a few hundred.

    Returns
    -------
    float
        x with f changing sign within the tolerance of x (or f(x) == 0).

    Raises
    ------
    ValueError
        If f(lo) and f(hi) have the same sign.
    ArithmeticError
        If `maxiter` evaluations do not reach the tolerance.

    References
    ----------
    R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall (1973),
    chapter 4 (the procedure ``zero``).

    Examples
    --------
    >>> round(bracketed_root(lambda x: x * x - 2.0, 0.0, 2.0), 12)  # sqrt(2)
    1.414213562373
    """
    a, b = float(lo), float(hi)
    fa, fb = float(f(a)), float(f(b))
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0.0) == (fb > 0.0):
        raise ValueError(f"f must change sign between {lo!r} and {hi!r}")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0.0) == (fc > 0.0):  # keep [b, c] a bracket
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):  # b is the best estimate so far
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 0.5 * (xtol + rtol * abs(b))
        half = 0.5 * (c - b)
        if abs(half) <= tol or fb == 0.0:
            return b
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:  # secant through a and b
                p, q = 2.0 * half * s, 1.0 - s
            else:  # inverse quadratic through a, b and c
                q, r = fa / fc, fb / fc
                p = s * (2.0 * half * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0.0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * half * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q  # the interpolation step is accepted
            else:
                d = e = half
        else:
            d = e = half
        a, fa = b, fb
        b += d if abs(d) > tol else math.copysign(tol, half)
        fb = float(f(b))
    raise ArithmeticError(f"no root within the tolerance after {maxiter} steps between {lo!r} and {hi!r}")


@lru_cache(maxsize=16)
def gauss_legendre(count: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (ascending) and weights of the `count`-point Gauss-Legendre rule on [-1, 1].

    The nodes are the zeros of P_count, found by Newton's method from Tricomi's
    asymptotic first guess; P_count and P_count-1 come from Bonnet's recurrence
    (j P_j = (2j - 1) x P_(j-1) - (j - 1) P_(j-2)), evaluated for all nodes of one half at
    once (the rule is symmetric).  The weights are 2 / ((1 - x^2) P'_count(x)^2).  The
    returned arrays are read-only (they are shared between callers).

    Parameters
    ----------
    count : int
        Number of nodes, at least 1.

    Returns
    -------
    (ndarray, ndarray)
        Nodes x_i and weights w_i, sum w_i = 2.

    References
    ----------
    F. G. Tricomi, *Sugli zeri dei polinomi sferici ed ultrasferici*, Ann. Mat. Pura
    Appl. 31 (1950) 93-97 (the first guess); Abramowitz and Stegun, *Handbook of
    Mathematical Functions*, 25.4.29 (the weights) and 22.7.10 (the recurrence).

    Examples
    --------
    The 2-point rule has nodes +-1/sqrt(3) and weights 1:

    >>> x, w = gauss_legendre(2)
    >>> [round(float(v), 15) for v in x], [round(float(v), 15) for v in w]
    ([-0.577350269189626, 0.577350269189626], [1.0, 1.0])
    """
    n = int(count)
    if n < 1:
        raise ValueError(f"a Gauss-Legendre rule needs at least 1 node, got {count}")
    k = np.arange(1, (n + 1) // 2 + 1)
    x = (1.0 - (n - 1) / (8.0 * n**3)) * np.cos(math.pi * (4 * k - 1) / (4 * n + 2))  # descending
    j = np.arange(2, n + 1, dtype=float)
    grow, keep = (2.0 * j - 1.0) / j, (j - 1.0) / j
    work = np.empty_like(x)
    for _ in range(_NEWTON_STEPS):
        below, p = np.ones_like(x), x.copy()  # P_0, P_1
        for i in range(n - 1):  # P_(j-1), P_j for j = 2 .. n, in place
            np.multiply(x, p, out=work)
            work *= grow[i]
            below *= keep[i]
            np.subtract(work, below, out=below)
            below, p = p, below
        slope = n * (below - x * p) / (1.0 - x * x)  # P_n' (A&S 22.8.5)
        step = p / slope
        x = x - step
        if float(np.max(np.abs(step))) <= 2.0 * _EPS:
            break
    else:
        raise ArithmeticError(f"the nodes of the {n}-point Gauss-Legendre rule did not converge")
    w = 2.0 / ((1.0 - x * x) * slope * slope)
    nodes = np.concatenate([-x, x[::-1][n % 2:]])
    weights = np.concatenate([w, w[::-1][n % 2:]])
    if n % 2:  # the middle node is 0 exactly
        nodes[n // 2] = 0.0
    nodes.flags.writeable = False
    weights.flags.writeable = False
    return nodes, weights
