"""Hydrogen-like eigenfunctions: radial functions, spherical harmonics and psi_nlm at points.

Conventions used throughout the package
---------------------------------------
* Lengths are in Bohr radii a0 (the infinite-nuclear-mass Bohr radius) unless a
  name says otherwise.  A finite nuclear mass enters through the reduced-mass
  length ``a_mu = a0 * m_e / mu``.
* Spherical harmonics carry the Condon-Shortley phase ``(-1)^m``, so that
  ``Y_l^{-m} = (-1)^m conj(Y_l^m)``; this is the convention of
  ``scipy.special.sph_harm_y`` and ``sympy.functions.special.spherical_harmonics.Ynm``.
* psi_nlm(r, theta, phi) = R_nl(r) Y_l^m(theta, phi), normalised to one over
  all space in units of a0^-3/2.

References
----------
.. [1] H. A. Bethe and E. E. Salpeter, *Quantum Mechanics of One- and
       Two-Electron Atoms*, Springer (1957), section 3.
.. [2] NIST Digital Library of Mathematical Functions, sections 14.10 (Legendre
       recurrences) and 18.9 (Laguerre recurrences), https://dlmf.nist.gov.
"""

from __future__ import annotations

import math

import numpy as np

from .limits import check_n

__all__ = [
    "check_quantum_numbers",
    "radial_function",
    "spherical_harmonic_xyz",
    "psi_nlm_xyz",
]


def check_quantum_numbers(n: int, l: int, m: int) -> None:
    """Raise ``ValueError`` unless ``1 <= n <= N_MAX`` (:mod:`orbitalrender.state.limits`),
    ``0 <= l < n`` and ``|m| <= l``."""
    for name, value in (("n", n), ("l", l), ("m", m)):
        if int(value) != value:
            raise ValueError(f"{name} must be an integer, got {value!r}")
    if n < 1:
        raise ValueError(f"n must be >= 1, got n={n}")
    check_n(n)
    if not 0 <= l < n:
        raise ValueError(f"l must satisfy 0 <= l < n, got n={n}, l={l}")
    if abs(m) > l:
        raise ValueError(f"m must satisfy |m| <= l, got l={l}, m={m}")


def _laguerre(k: int, alpha: int, x: np.ndarray) -> np.ndarray:
    """Generalised Laguerre polynomial L_k^(alpha)(x) by the forward recurrence.

    (k + 1) L_{k+1} = (2k + 1 + alpha - x) L_k - (k + alpha) L_{k-1}  (DLMF 18.9.1),
    stable for x >= 0 in the direction of increasing k.
    """
    x = np.asarray(x, dtype=float)
    prev = np.ones_like(x)
    if k == 0:
        return prev
    cur = 1.0 + alpha - x
    for j in range(1, k):
        prev, cur = cur, ((2 * j + 1 + alpha - x) * cur - (j + alpha) * prev) / (j + 1)
    return cur


def radial_function(n: int, l: int, r_a0: np.ndarray, Z: float = 1.0,
                    reduced_mass_ratio: float = 1.0) -> np.ndarray:
    """Radial function R_nl(r) of a hydrogen-like ion, in a0^-3/2.

    Parameters
    ----------
    n, l : int
        Principal and orbital quantum numbers, ``0 <= l < n``.
    r_a0 : array_like
        Distance from the nucleus in Bohr radii a0.
    Z : float
        Nuclear charge in units of e.
    reduced_mass_ratio : float
        mu / m_e.  1 for an infinitely heavy nucleus.

    Returns
    -------
    ndarray
        R_nl(r) with int_0^inf R^2 r^2 dr = 1.

    Notes
    -----
    With rho = 2 Z r / (n a_mu) and a_mu = a0 / (mu/m_e) [1]_::

        R_nl = sqrt((2Z/(n a_mu))^3 (n-l-1)! / (2n (n+l)!)) rho^l e^{-rho/2} L_{n-l-1}^{(2l+1)}(rho)

    The prefactor, rho^l and the exponential are combined in logarithms
    (``math.lgamma`` for the factorials), so n = 40 and beyond neither
    overflows nor underflows before the final product; where that envelope
    underflows to zero, R is zero (the Laguerre factor may overflow there).

    Examples
    --------
    >>> round(float(radial_function(1, 0, 0.0)), 12)  # R_10(0) = 2 a0^-3/2
    2.0
    >>> round(float(radial_function(2, 0, 2.0)), 12)  # the 2s node sits at r = 2 a0
    0.0
    """
    check_quantum_numbers(n, l, 0)
    if Z <= 0:
        raise ValueError(f"Z must be positive, got {Z}")
    r = np.asarray(r_a0, dtype=float)
    scale = 2.0 * Z * reduced_mass_ratio / n  # rho per a0
    rho = scale * r
    log_norm = 1.5 * math.log(scale) + 0.5 * (
        math.lgamma(n - l) - math.log(2 * n) - math.lgamma(n + l + 1))
    with np.errstate(divide="ignore"):
        log_rho_l = l * np.log(rho) if l > 0 else np.zeros_like(rho)
    envelope = np.exp(log_norm + log_rho_l - 0.5 * rho)
    # Far out (rho of order 1e9 for n = 40) the polynomial overflows where the envelope
    # has long underflowed to zero; R is zero there.
    with np.errstate(over="ignore", invalid="ignore"):
        return np.where(envelope > 0.0, envelope * _laguerre(n - l - 1, 2 * l + 1, rho), 0.0)


def _legendre_q(l: int, m: int, cos_theta: np.ndarray) -> np.ndarray:
    """Normalised associated Legendre part without its sin^m factor.

    Returns q with Y_l^m(theta, phi) = q(cos theta) (sin theta e^{i phi})^m for m >= 0,
    including the Condon-Shortley phase.  Uses the fully normalised recurrences
    (DLMF 14.10.1 rewritten for orthonormal functions), which do not overflow for
    large l.
    """
    q_mm = 1.0 / math.sqrt(4.0 * math.pi)
    for k in range(1, m + 1):
        q_mm *= -math.sqrt((2 * k + 1) / (2 * k))
    prev = np.full_like(cos_theta, q_mm)
    if l == m:
        return prev
    cur = math.sqrt(2 * m + 3) * cos_theta * prev
    for j in range(m + 2, l + 1):
        a_j = math.sqrt((4 * j * j - 1) / (j * j - m * m))
        a_jm1 = math.sqrt((4 * (j - 1) ** 2 - 1) / ((j - 1) ** 2 - m * m))
        prev, cur = cur, a_j * (cos_theta * cur - prev / a_jm1)
    return cur


def spherical_harmonic_xyz(l: int, m: int, x: np.ndarray, y: np.ndarray,
                           z: np.ndarray) -> np.ndarray:
    """Y_l^m at the direction of the points (x, y, z), Condon-Shortley phase.

    The azimuthal factor is formed as ((x + i y) / r)^|m| = sin^|m| theta e^{i|m| phi}
    rather than from arctan2, so the z axis is not a special case.  At r = 0 the
    direction is taken as +z.

    Examples
    --------
    >>> import numpy as np
    >>> y10 = spherical_harmonic_xyz(1, 0, 0.0, 0.0, 1.0)  # sqrt(3/(4 pi)) on +z
    >>> bool(np.isclose(y10, np.sqrt(3 / (4 * np.pi))))
    True
    """
    check_quantum_numbers(l + 1, l, m)
    x, y, z = (np.asarray(v, dtype=float) for v in (x, y, z))
    r = np.sqrt(x * x + y * y + z * z)
    at_origin = r == 0.0
    safe_r = np.where(at_origin, 1.0, r)
    cos_theta = np.where(at_origin, 1.0, z / safe_r)
    am = abs(m)
    value = _legendre_q(l, am, cos_theta).astype(complex)
    if am:
        value *= ((x + 1j * y) / safe_r) ** am
    if m < 0:
        value = (-1) ** am * np.conj(value)
    return value


def psi_nlm_xyz(n: int, l: int, m: int, x: np.ndarray, y: np.ndarray, z: np.ndarray,
                Z: float = 1.0, reduced_mass_ratio: float = 1.0) -> np.ndarray:
    """Complex eigenfunction psi_nlm = R_nl(r) Y_l^m at Cartesian points (a0).

    Parameters
    ----------
    n, l, m : int
        Quantum numbers, ``n >= 1``, ``0 <= l < n``, ``|m| <= l``.
    x, y, z : array_like
        Cartesian coordinates relative to the nucleus, in a0; broadcast together.
    Z : float
        Nuclear charge.
    reduced_mass_ratio : float
        mu / m_e.

    Returns
    -------
    ndarray of complex
        psi in a0^-3/2.

    Examples
    --------
    >>> import numpy as np
    >>> psi = psi_nlm_xyz(1, 0, 0, 0.0, 0.0, 0.0)  # 1/sqrt(pi) at the nucleus
    >>> bool(np.isclose(psi, 1 / np.sqrt(np.pi)))
    True
    """
    x, y, z = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x, y, z)))
    r = np.sqrt(x * x + y * y + z * z)
    return radial_function(n, l, r, Z, reduced_mass_ratio) * spherical_harmonic_xyz(l, m, x, y, z)
