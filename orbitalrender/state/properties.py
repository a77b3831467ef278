"""Derived quantities of a state: energy, nodes, radial expectation values and radii.

For a state whose terms all share n and l and sit on one centre (an eigenstate
|n l m> or a real orbital) the radial quantities are those of R_nl: <r>, <r^2> and
<1/r> from their closed forms (:func:`closed_form_moment`, Bethe and Salpeter), the
rest numerically (quadrature in sqrt(rho), root bracketing, maximisation), with every
factor that could overflow for large n combined in logarithms, for 1 <= n <= N_MAX
(:mod:`orbitalrender.state.limits`).  :func:`radial_moment` computes any moment by
quadrature, so that the tests can hold it against the closed forms.  For other
single-centre superpositions the expectation values come from the Becke
quadrature of :mod:`orbitalrender.state.quadrature`; for states on several
centres the quantities measured from "the" nucleus are not defined and are
reported as missing, with the reason.

Conventions: lengths in a0, energies in hartree and eV (``HARTREE_EV`` from
CODATA through scipy.constants), angles in radians.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from .hydrogen import _laguerre, _legendre_q, check_quantum_numbers, radial_function
from .model import State, _real_terms, energy_hartree
from .numerics import bracketed_root
from .quadrature import space_grid
from .radial import radius_holding
from .units import HARTREE_EV

__all__ = [
    "EigenProperties",
    "SuperpositionProperties",
    "REPORTED_FRACTION",
    "radial_moment",
    "closed_form_moment",
    "radial_node_radii",
    "most_probable_radius",
    "nodal_cone_angles",
    "nodal_plane_azimuths",
    "shell_of",
    "eigen_properties",
    "state_properties",
]

#: Fraction of the radial probability whose enclosing radius is reported.
REPORTED_FRACTION = 0.9
#: Sampling density of the root and maximum searches: points per unit of sqrt(rho) and
#: per radian.  Neighbouring zeros of L_k^a(rho) are about pi / (2 sqrt(k)) apart in
#: sqrt(rho) and neighbouring zeros of P_l^m(cos theta) about pi / l apart in theta, so
#: 400 points per unit resolves them with a margin for n, l up to 200 (N_MAX): about 40
#: points between neighbouring radial zeros and 6 between angular ones.
_SAMPLES_PER_UNIT = 400
#: Radial moments are integrated out to rho = 8 n + 100: beyond it R^2 r^(2+k) is below
#: e^-100 of its largest value for every n (the density peaks below rho = 4 n).
_MOMENT_RHO_END = (8.0, 100.0)
_GL_X, _GL_W = np.polynomial.legendre.leggauss(24)


def _rho_per_a0(n: int, Z: float, reduced_mass_ratio: float) -> float:
    """rho = 2 Z r / (n a_mu) per a0."""
    return 2.0 * Z * reduced_mass_ratio / n


def radial_moment(n: int, l: int, power: int, Z: float = 1.0,
                  reduced_mass_ratio: float = 1.0) -> float:
    """<r^power> of |n l m> in a0^power, by quadrature of R_nl^2 r^(2+power) in sqrt(rho).

    Parameters
    ----------
    n, l : int
        Quantum numbers.
    power : int
        Exponent, ``power >= -2`` (the integral diverges below).
    Z, reduced_mass_ratio : float
        Nuclear charge and mu / m_e.

    Returns
    -------
    float

    Notes
    -----
    The zeros of R_nl are nearly evenly spaced in s = sqrt(rho), rho = 2 Z r / (n a_mu),
    about pi / (2 sqrt(n)) apart, so composite 24-point Gauss-Legendre panels of width
    1 / sqrt(n) in s (less than one zero each) integrate the smooth integrand to
    round-off, out to rho = 8 n + 100.  (A Gauss-Laguerre rule would be exact in exact
    arithmetic, but its weights underflow beyond rho ~ 745, where the density of n > 150
    still lives.)

    Examples
    --------
    >>> round(radial_moment(1, 0, 1), 12)  # <r> of 1s is 3/2 a0
    1.5
    """
    check_quantum_numbers(n, l, 0)
    if power < -2:
        raise ValueError(f"<r^k> diverges for k < -2, got k={power}")
    k = _rho_per_a0(n, Z, reduced_mass_ratio)
    a, b = _MOMENT_RHO_END
    s_end = math.sqrt(a * n + b)
    panels = math.ceil(s_end * math.sqrt(n))
    edges = np.linspace(0.0, s_end, panels + 1)
    half = 0.5 * np.diff(edges)
    s = (0.5 * (edges[1:] + edges[:-1])[:, None] + half[:, None] * _GL_X).ravel()
    w = (half[:, None] * _GL_W).ravel()
    r = s * s / k
    f = radial_function(n, l, r, Z, reduced_mass_ratio) ** 2 * r ** (2 + power) * (2.0 * s / k)
    return float(np.sum(w * f))


def closed_form_moment(n: int, l: int, power: int, Z: float = 1.0,
                       reduced_mass_ratio: float = 1.0) -> float:
    """<r^power> of |n l m> for power 1, 2 or -1, in a0^power, from the closed forms.

    Notes
    -----
    With a = a0 m_e / mu (Bethe and Salpeter, eq. 3.26):
    <r> = a (3 n^2 - l (l + 1)) / (2 Z),  <r^2> = a^2 n^2 (5 n^2 + 1 - 3 l (l + 1)) / (2 Z^2),
    <1/r> = Z / (a n^2).

    Examples
    --------
    >>> closed_form_moment(2, 1, 1)  # <r> of 2p is 5 a0
    5.0
    """
    check_quantum_numbers(n, l, 0)
    a = 1.0 / reduced_mass_ratio
    if power == 1:
        return a * (3 * n * n - l * (l + 1)) / (2.0 * Z)
    if power == 2:
        return a * a * n * n * (5 * n * n + 1 - 3 * l * (l + 1)) / (2.0 * Z * Z)
    if power == -1:
        return Z / (a * n * n)
    raise ValueError(f"a closed form is given for powers 1, 2 and -1, got {power}")


def _sqrt_rho_grid(n: int, Z: float, reduced_mass_ratio: float) -> np.ndarray:
    """Radii (a0, r > 0) evenly spaced in sqrt(rho) out past the outermost node and maximum.

    Every zero of L_{n-l-1}^{2l+1} lies below rho = 4n (the largest zero of L_k^a is
    below 4k + 2a + 2; Szego, *Orthogonal Polynomials*, section 6.31).
    """
    top = math.sqrt(4.0 * n + 8.0)
    s = np.linspace(0.0, top, int(_SAMPLES_PER_UNIT * top) + 2)[1:]
    return s * s / _rho_per_a0(n, Z, reduced_mass_ratio)


def _sign_change_roots(f, grid: np.ndarray) -> list[float]:
    """Roots of f between neighbouring grid points where f changes sign (refined by Brent's method),
    plus grid points where f is exactly zero."""
    values = f(grid)
    roots = [float(g) for g, v in zip(grid, values) if v == 0.0]
    sign = np.sign(values)  # (the values themselves may be too large to multiply)
    change = np.flatnonzero(sign[:-1] * sign[1:] < 0)
    scale = float(np.max(np.abs(grid)))
    for i in change:
        roots.append(bracketed_root(lambda t: float(f(t)), grid[i], grid[i + 1],
                                    xtol=1e-15 * scale, rtol=4 * np.finfo(float).eps))
    return sorted(roots)


def radial_node_radii(n: int, l: int, Z: float = 1.0, reduced_mass_ratio: float = 1.0) -> tuple[float, ...]:
    """Radii (a0) where R_nl changes sign, found numerically; n - l - 1 of them.

    Examples
    --------
    >>> [round(r, 12) for r in radial_node_radii(2, 0)]  # the 2s node at 2 a0
    [2.0]
    """
    check_quantum_numbers(n, l, 0)
    # R_nl has the sign of L_{n-l-1}^(2l+1)(rho) for r > 0; the polynomial alone does not
    # underflow near the nucleus as rho^l e^(-rho/2) does for large l (an underflowed zero
    # would read as a node)
    k = _rho_per_a0(n, Z, reduced_mass_ratio)
    roots = _sign_change_roots(lambda r: _laguerre(n - l - 1, 2 * l + 1, k * np.asarray(r, float)),
                               _sqrt_rho_grid(n, Z, reduced_mass_ratio))
    if len(roots) != n - l - 1:
        raise ArithmeticError(f"found {len(roots)} radial nodes of ({n},{l}), expected {n - l - 1}")
    return tuple(roots)


def _density_slope(n: int, l: int, rho):
    """A function with the sign of d/drho [rho^(l+1) e^(-rho/2) L_k^(2l+1)(rho)], k = n - l - 1.

    With dL_k^a/dx = -L_{k-1}^(a+1) (DLMF 18.9.14) the derivative is
    rho^l e^(-rho/2) [(l + 1 - rho/2) L_k^(2l+1) - rho L_{k-1}^(2l+2)]; the bracket is returned.
    """
    k, a = n - l - 1, 2 * l + 1
    lower = _laguerre(k - 1, a + 1, rho) if k > 0 else 0.0
    return (l + 1 - 0.5 * rho) * _laguerre(k, a, rho) - rho * lower


def most_probable_radius(n: int, l: int, Z: float = 1.0, reduced_mass_ratio: float = 1.0) -> float:
    """Radius (a0) where the radial density r^2 R_nl^2 is largest, found numerically.

    The largest sample on a fine grid brackets the maximum; there the slope of r R_nl
    changes sign, and Brent's method finds that zero to round-off.

    Examples
    --------
    >>> round(most_probable_radius(1, 0), 12)  # 1s: a0
    1.0
    """
    check_quantum_numbers(n, l, 0)
    grid = _sqrt_rho_grid(n, Z, reduced_mass_ratio)
    i = int(np.argmax((radial_function(n, l, grid, Z, reduced_mass_ratio) * grid) ** 2))
    k = _rho_per_a0(n, Z, reduced_mass_ratio)
    lo, hi = k * grid[max(i - 1, 0)], k * grid[min(i + 1, len(grid) - 1)]
    rho = bracketed_root(lambda x: float(_density_slope(n, l, x)), lo, hi, xtol=1e-15 * hi,
                         rtol=4 * np.finfo(float).eps)
    return float(rho / k)


def nodal_cone_angles(l: int, m: int) -> tuple[float, ...]:
    """Polar angles theta (radians, in (0, pi)) of the nodal cones of Y_l^m and its real forms.

    These are the l - |m| zeros of P_l^|m|(cos theta), found numerically; a zero at
    theta = pi/2 is the xy plane.

    Examples
    --------
    >>> import math
    >>> cones = nodal_cone_angles(2, 0)  # 3d_z2: arccos(+-1/sqrt 3)
    >>> round(cones[0], 12) == round(math.acos(1 / math.sqrt(3)), 12)
    True
    """
    check_quantum_numbers(l + 1, l, m)
    am = abs(m)
    theta = np.linspace(0.0, math.pi, int(_SAMPLES_PER_UNIT * math.pi) + 1)[1:-1]
    roots = _sign_change_roots(lambda t: _legendre_q(l, am, np.cos(t)), theta)
    if len(roots) != l - am:
        raise ArithmeticError(f"found {len(roots)} nodal cones of Y_{l}^{m}, expected {l - am}")
    return tuple(roots)


def nodal_plane_azimuths(m: int) -> tuple[float, ...]:
    """Azimuths phi (radians, in [0, pi)) of the |m| nodal planes through the z axis of the
    real orbital of index m: cos(m phi) = 0 for m > 0, sin(|m| phi) = 0 for m < 0.

    Examples
    --------
    >>> nodal_plane_azimuths(-1)  # 2p_y: the plane y = 0
    (0.0,)
    """
    am = abs(m)
    start = 0.5 * math.pi / am if m > 0 else 0.0
    return tuple(start + k * math.pi / am for k in range(am))


def _real_index(state: State) -> int | None:
    """m if `state` equals real_orbital(n, l, m) up to a global phase, else None."""
    n, l = state.terms[0].n, state.terms[0].l
    by_m = {t.m: t.coefficient for t in state.terms}
    for m in range(-l, l + 1):
        want = {mp: c for c, mp in _real_terms(n, l, m)}
        if set(want) != set(by_m):
            continue
        ratios = [by_m[mp] / c for mp, c in want.items()]
        if all(abs(r - ratios[0]) <= 1e-9 * abs(ratios[0]) for r in ratios):
            return m
    return None


def shell_of(state: State) -> tuple[int, int] | None:
    """(n, l) when every term of `state` has the same n and l and one centre, else None."""
    shells = {(t.n, t.l) for t in state.terms}
    if len(shells) != 1 or not state.is_single_centre:
        return None
    return shells.pop()


@dataclass(frozen=True)
class EigenProperties:
    """Derived quantities of |n l m>, or of a real orbital of index m, or of any
    single-centre combination within one (n, l) shell (then `kind` is "shell" and the
    angular details are missing).  Lengths in a0, energies in hartree and eV."""

    label: str
    kind: str  # "eigenstate", "real orbital" or "shell"
    n: int
    l: int
    m: int | None
    Z: float
    reduced_mass_ratio: float
    energy_hartree: float
    energy_eV: float
    radial_nodes: int
    angular_nodes: int
    radial_node_radii_a0: tuple[float, ...]
    nodal_cone_angles_deg: tuple[float, ...] | None
    nodal_plane_azimuths_deg: tuple[float, ...] | None
    mean_radius_a0: float
    mean_square_radius_a0_2: float
    mean_inverse_radius_per_a0: float
    most_probable_radius_a0: float
    radius_90_percent_a0: float

    def as_dict(self) -> dict:
        """JSON-ready dict (tuples become lists)."""
        return {k: list(v) if isinstance(v, tuple) else v for k, v in asdict(self).items()}


@dataclass(frozen=True)
class SuperpositionProperties:
    """Expectation values of a superposition of several (n, l) shells.

    ``None`` marks a quantity that is not defined for this state; `notes` says why.
    """

    label: str
    kind: str  # "superposition" or "hybrid orbital"
    Z: float
    reduced_mass_ratio: float
    terms: tuple[tuple[int, int, int, complex, tuple[float, float, float]], ...]  # n, l, m, c, centre
    is_stationary: bool
    mean_energy_hartree: float | None
    mean_energy_eV: float | None
    mean_radius_a0: float | None
    mean_square_radius_a0_2: float | None
    mean_inverse_radius_per_a0: float | None
    notes: tuple[str, ...]

    def as_dict(self) -> dict:
        """JSON-ready dict; each term becomes {n, l, m, coefficient_re, coefficient_im, centre_a0}."""
        d = asdict(self)
        d["terms"] = [{"n": n, "l": l, "m": m, "coefficient_re": c.real, "coefficient_im": c.imag,
                       "centre_a0": list(centre)} for n, l, m, c, centre in self.terms]
        d["notes"] = list(self.notes)
        return d


def eigen_properties(n: int, l: int, m: int | None = 0, Z: float = 1.0,
                     reduced_mass_ratio: float = 1.0, label: str = "",
                     kind: str = "eigenstate") -> EigenProperties:
    """Derived quantities of the shell (n, l); `m` (None if unknown) sets the angular nodes.

    Parameters
    ----------
    n, l, m : int
        Quantum numbers; for ``kind="real orbital"`` m is the real-orbital index
        (cos for m > 0, sin for m < 0).
    Z, reduced_mass_ratio : float
        Nuclear charge and mu / m_e.
    label : str
        Name carried into the report.
    kind : {"eigenstate", "real orbital", "shell"}
        What the angular part is.  A complex eigenstate with m != 0 has no nodal
        planes (|e^{i m phi}| = 1): its |m| angular nodes collapse onto the z axis.

    Returns
    -------
    EigenProperties

    Examples
    --------
    >>> p = eigen_properties(2, 0, 0)
    >>> p.radial_nodes, round(p.energy_hartree, 3), round(p.mean_radius_a0, 9)
    (1, -0.125, 6.0)
    """
    check_quantum_numbers(n, l, 0 if m is None else m)
    e = energy_hartree(n, Z, reduced_mass_ratio)
    cones = planes = None
    if m is not None:
        cones = tuple(math.degrees(t) for t in nodal_cone_angles(l, m))
        planes = tuple(math.degrees(p) for p in nodal_plane_azimuths(m)) if kind == "real orbital" else ()
    return EigenProperties(
        label=label or f"{n},{l},{m}", kind=kind, n=n, l=l, m=m, Z=float(Z),
        reduced_mass_ratio=float(reduced_mass_ratio), energy_hartree=e, energy_eV=e * HARTREE_EV,
        radial_nodes=n - l - 1, angular_nodes=l,
        radial_node_radii_a0=radial_node_radii(n, l, Z, reduced_mass_ratio),
        nodal_cone_angles_deg=cones, nodal_plane_azimuths_deg=planes,
        mean_radius_a0=closed_form_moment(n, l, 1, Z, reduced_mass_ratio),
        mean_square_radius_a0_2=closed_form_moment(n, l, 2, Z, reduced_mass_ratio),
        mean_inverse_radius_per_a0=closed_form_moment(n, l, -1, Z, reduced_mass_ratio),
        most_probable_radius_a0=most_probable_radius(n, l, Z, reduced_mass_ratio),
        radius_90_percent_a0=radius_holding(n, l, REPORTED_FRACTION, Z, reduced_mass_ratio),
    )


def _quadrature_moments(state: State) -> tuple[float, float, float]:
    """<r>, <r^2>, <1/r> of a single-centre state about its centre, by Becke quadrature."""
    centre = np.asarray(state.centres_a0[0])
    grid = space_grid([centre], radial_scale_a0=state.max_n ** 2 / (state.Z * state.reduced_mass_ratio))
    r = np.linalg.norm(grid.points_a0 - centre, axis=1)
    density = state.density(*grid.points_a0.T) * grid.weights_a0_3
    norm = float(np.sum(density))
    return tuple(float(np.sum(density * r ** k) / norm) for k in (1, 2, -1))


def _is_hybrid_member(state: State) -> bool:
    """True for a state made by :func:`orbitalrender.state.hybrid.hybrid_member` (by its label)."""
    from .hybrid import parse_hybrid

    try:
        parsed = parse_hybrid(state.label)
    except ValueError:
        return False
    return parsed is not None and parsed[2] is not None and state.is_single_centre


def state_properties(state: State) -> EigenProperties | SuperpositionProperties:
    """Derived quantities of any State.

    A state within one (n, l) shell on one centre gets :class:`EigenProperties`
    (angular details when it is an eigenstate or a real orbital).  Any other state
    gets :class:`SuperpositionProperties`: for one centre the mean energy
    sum |c_k|^2 E_k (the terms are orthonormal) and <r>, <r^2>, <1/r> by quadrature;
    for several centres these are missing, since r from one nucleus is not defined.

    Examples
    --------
    >>> from orbitalrender.state.model import real_orbital
    >>> p = state_properties(real_orbital(3, 2, -2))  # 3d_xy: nodal planes x = 0 and y = 0
    >>> p.kind, p.nodal_plane_azimuths_deg
    ('real orbital', (0.0, 90.0))
    """
    shell = shell_of(state)
    if shell is not None:
        n, l = shell
        if state.is_eigenstate:
            m, kind = state.terms[0].m, "eigenstate"
        else:
            m = _real_index(state)
            kind = "shell" if m is None else "real orbital"
        return eigen_properties(n, l, m, state.Z, state.reduced_mass_ratio, state.label, kind)
    terms = tuple((t.n, t.l, t.m, t.coefficient, t.centre_a0) for t in state.terms)
    notes: list[str] = []
    if state.is_single_centre:
        e = sum(abs(c) ** 2 * energy_hartree(n, state.Z, state.reduced_mass_ratio)
                for n, _, _, c, _ in terms)
        mean_r, mean_r2, mean_inv = _quadrature_moments(state)
        ev = e * HARTREE_EV
        if state.is_stationary:
            notes.append(f"a stationary state: every term has n = {state.max_n}, so the energy is "
                         f"exactly E_{state.max_n} and the density does not change in time")
        else:
            notes.append("not an energy eigenstate: the energy is a mean, the density changes in time")
    else:
        e = ev = mean_r = mean_r2 = mean_inv = None
        notes.append(f"terms on {len(state.centres_a0)} centres: energy and distances from one "
                     "nucleus are not defined")
    return SuperpositionProperties(
        label=state.label, kind="hybrid orbital" if _is_hybrid_member(state) else "superposition",
        Z=float(state.Z),
        reduced_mass_ratio=float(state.reduced_mass_ratio), terms=terms,
        is_stationary=state.is_stationary, mean_energy_hartree=e, mean_energy_eV=ev,
        mean_radius_a0=mean_r, mean_square_radius_a0_2=mean_r2, mean_inverse_radius_per_a0=mean_inv,
        notes=tuple(notes))
