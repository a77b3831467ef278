"""One-electron states: complex eigenstates, real orbitals and normalised superpositions.

A :class:`State` is a frozen list of :class:`Term` objects, each a complex
hydrogen-like eigenstate |n l m> with a coefficient and a centre, plus the
nuclear charge, the reduced mass and a time.  Every constructor returns a
state normalised to one, the overlap of terms on different centres included.

Time dependence: each term carries exp(-i E_n t / hbar) with
E_n = -(mu/m_e) Z^2 / (2 n^2) hartree and t in atomic units (hbar / E_h).

Real orbitals (sign convention, the usual one for real spherical harmonics,
with Condon-Shortley Y_l^m)::

    m > 0:  (Y_l^{-m} + (-1)^m Y_l^m) / sqrt(2)       ~ cos(m phi)
    m = 0:  Y_l^0
    m < 0:  i (Y_l^{m} - (-1)^m Y_l^{|m|}) / sqrt(2)   ~ sin(|m| phi)

so that 2p_x, 3d_xz and 3d_x2-y2 are positive on +x and 2p_y, 3d_xy positive
where y (and x) are.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import UserInputError
from .hydrogen import check_quantum_numbers, psi_nlm_xyz
from .limits import check_centre, check_reduced_mass_ratio, check_z
from .quadrature import integrate, space_grid

__all__ = [
    "Term",
    "State",
    "eigenstate",
    "real_orbital",
    "superpose",
    "energy_hartree",
]

_ORIGIN = (0.0, 0.0, 0.0)


def energy_hartree(n: int, Z: float = 1.0, reduced_mass_ratio: float = 1.0) -> float:
    """Bohr energy E_n = -(mu/m_e) Z^2 / (2 n^2) in hartree.

    Examples
    --------
    >>> energy_hartree(1)
    -0.5
    """
    return -reduced_mass_ratio * Z * Z / (2.0 * n * n)


@dataclass(frozen=True)
class Term:
    """coefficient * |n l m>, centred at `centre_a0`."""

    n: int
    l: int
    m: int
    coefficient: complex = 1.0 + 0.0j
    centre_a0: tuple[float, float, float] = _ORIGIN

    def __post_init__(self) -> None:
        check_quantum_numbers(self.n, self.l, self.m)
        c = complex(self.coefficient)
        if not (math.isfinite(c.real) and math.isfinite(c.imag)):
            raise UserInputError(f"a coefficient must be a finite number, got {c}")
        object.__setattr__(self, "coefficient", c)
        object.__setattr__(self, "centre_a0", check_centre(self.centre_a0))


@dataclass(frozen=True)
class State:
    """A normalised hydrogen-like state.

    Attributes
    ----------
    terms : tuple of Term
        Coefficients are those of the normalised state at t = 0.
    Z : float
        Nuclear charge (e), the same for every centre.
    reduced_mass_ratio : float
        mu / m_e; 1 for an infinitely heavy nucleus.
    time_au : float
        Time at which the state is evaluated, in hbar / E_h.
    label : str
        Human-readable name, used in titles and reports.
    """

    terms: tuple[Term, ...]
    Z: float = 1.0
    reduced_mass_ratio: float = 1.0
    time_au: float = 0.0
    label: str = field(default="", compare=False)

    def __post_init__(self) -> None:
        if not self.terms:
            raise ValueError("a state needs at least one term")
        check_z(self.Z)
        check_reduced_mass_ratio(self.reduced_mass_ratio)
        if not math.isfinite(self.time_au):
            raise ValueError(f"time must be finite, got {self.time_au}")

    # -- structure ---------------------------------------------------------
    @property
    def is_eigenstate(self) -> bool:
        """True for a single term |n l m> (a stationary state)."""
        return len(self.terms) == 1

    @property
    def centres_a0(self) -> tuple[tuple[float, float, float], ...]:
        """Distinct centres of the terms, in order of first appearance."""
        return tuple(dict.fromkeys(t.centre_a0 for t in self.terms))

    @property
    def is_single_centre(self) -> bool:
        return len(self.centres_a0) == 1

    @property
    def max_n(self) -> int:
        return max(t.n for t in self.terms)

    @property
    def is_stationary(self) -> bool:
        """True when every term has the same energy, so |psi|^2 does not change in time."""
        return len({t.n for t in self.terms}) == 1

    def phase_factors(self) -> np.ndarray:
        """exp(-i E_n t) of every term at `time_au`."""
        return np.array([np.exp(-1j * energy_hartree(t.n, self.Z, self.reduced_mass_ratio)
                                * self.time_au) for t in self.terms])

    def at_time(self, time_au: float) -> State:
        """The same state at another time (atomic units)."""
        return replace(self, time_au=float(time_au))

    # -- evaluation --------------------------------------------------------
    def psi(self, x, y, z) -> np.ndarray:
        """Complex psi (a0^-3/2) at Cartesian points given in a0.

        Examples
        --------
        >>> import numpy as np
        >>> s = eigenstate(1, 0, 0)
        >>> bool(np.isclose(s.psi(0.0, 0.0, 0.0), 1 / np.sqrt(np.pi)))
        True
        """
        x, y, z = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x, y, z)))
        total = np.zeros(x.shape, dtype=complex)
        for term, phase in zip(self.terms, self.phase_factors()):
            cx, cy, cz = term.centre_a0
            total += (term.coefficient * phase) * psi_nlm_xyz(
                term.n, term.l, term.m, x - cx, y - cy, z - cz, self.Z, self.reduced_mass_ratio)
        return total

    def density(self, x, y, z) -> np.ndarray:
        """|psi|^2 in a0^-3."""
        return np.abs(self.psi(x, y, z)) ** 2

    def extent_a0(self) -> float:
        """A length (a0) on the order of the largest term: max n^2 / (Z mu/m_e) plus centre offset."""
        reach = max(t.n for t in self.terms) ** 2 / (self.Z * self.reduced_mass_ratio)
        offset = max(math.dist(c, _ORIGIN) for c in self.centres_a0)
        return reach + offset


def _overlap_matrix(terms: Sequence[Term], Z: float, mu: float) -> np.ndarray:
    """<term_i | term_j> without coefficients.  Same-centre pairs are exact (orthonormal);
    pairs on different centres use a Becke quadrature."""
    k = len(terms)
    s = np.eye(k, dtype=complex)
    multi = [(i, j) for i in range(k) for j in range(i + 1, k)
             if terms[i].centre_a0 != terms[j].centre_a0]
    same = [(i, j) for i in range(k) for j in range(i + 1, k)
            if terms[i].centre_a0 == terms[j].centre_a0
            and (terms[i].n, terms[i].l, terms[i].m) == (terms[j].n, terms[j].l, terms[j].m)]
    for i, j in same:
        s[i, j] = s[j, i] = 1.0
    if multi:
        centres = list(dict.fromkeys(t.centre_a0 for t in terms))
        scale = max(t.n for t in terms) ** 2 / (Z * mu)
        grid = space_grid(centres, radial_scale_a0=scale)
        for i, j in multi:
            a, b = terms[i], terms[j]

            def integrand(x, y, z, a=a, b=b):
                pa = psi_nlm_xyz(a.n, a.l, a.m, x - a.centre_a0[0], y - a.centre_a0[1],
                                 z - a.centre_a0[2], Z, mu)
                pb = psi_nlm_xyz(b.n, b.l, b.m, x - b.centre_a0[0], y - b.centre_a0[1],
                                 z - b.centre_a0[2], Z, mu)
                return np.conj(pa) * pb

            s[i, j] = integrate(integrand, grid)
            s[j, i] = np.conj(s[i, j])
    return s


def _normalised(terms: Sequence[Term], Z: float, mu: float, time_au: float, label: str) -> State:
    terms = tuple(terms)
    c = np.array([t.coefficient for t in terms])
    largest = float(np.max(np.abs(c))) if len(c) else 0.0
    if not largest:
        raise ValueError("the superposition has zero norm: its coefficients cancel")
    c = c / largest  # so that the squares of huge or tiny coefficients neither overflow nor underflow
    norm2 = float(np.real(np.conj(c) @ _overlap_matrix(terms, Z, mu) @ c))
    if norm2 <= 1e-12:
        raise ValueError("the superposition has zero norm: its coefficients cancel")
    scale = 1.0 / (largest * math.sqrt(norm2))
    return State(tuple(replace(t, coefficient=t.coefficient * scale) for t in terms),
                 Z=Z, reduced_mass_ratio=mu, time_au=time_au, label=label)


def eigenstate(n: int, l: int, m: int, Z: float = 1.0, reduced_mass_ratio: float = 1.0,
               centre_a0: Sequence[float] = _ORIGIN, label: str | None = None) -> State:
    """The complex eigenstate |n l m> (Condon-Shortley phase).

    Examples
    --------
    >>> eigenstate(3, 2, -1).label
    '3,2,-1'
    """
    return State((Term(n, l, m, 1.0, tuple(centre_a0)),), Z=Z,
                 reduced_mass_ratio=reduced_mass_ratio,
                 label=label if label is not None else f"{n},{l},{m}")


def _real_terms(n: int, l: int, m: int) -> list[tuple[complex, int]]:
    """Coefficients (c, m') of the real orbital (n, l, m) over complex |n l m'>."""
    check_quantum_numbers(n, l, m)
    if m == 0:
        return [(1.0, 0)]
    am = abs(m)
    sign = (-1) ** am
    r2 = 1.0 / math.sqrt(2.0)
    if m > 0:
        return [(r2, -am), (sign * r2, am)]
    return [(1j * r2, -am), (-1j * sign * r2, am)]


def real_orbital(n: int, l: int, m: int, Z: float = 1.0, reduced_mass_ratio: float = 1.0,
                 centre_a0: Sequence[float] = _ORIGIN, label: str | None = None) -> State:
    """The real orbital of index m (cos for m > 0, sin for m < 0); see the module notes.

    Examples
    --------
    >>> import numpy as np
    >>> px = real_orbital(2, 1, 1)
    >>> v = px.psi(1.0, 0.0, 0.0)
    >>> bool(abs(v.imag) < 1e-15 and v.real > 0)  # positive lobe on +x
    True
    """
    terms = [Term(n, l, mp, c, tuple(centre_a0)) for c, mp in _real_terms(n, l, m)]
    return State(tuple(terms), Z=Z, reduced_mass_ratio=reduced_mass_ratio,
                 label=label if label is not None else f"real({n},{l},{m})")


def superpose(parts: Iterable[tuple[complex, State]], time_au: float = 0.0,
              label: str = "") -> State:
    """Normalised linear combination sum_k c_k |state_k>.

    All parts must share Z and the reduced mass.  Terms on different centres
    are normalised with their numerical overlap.

    Raises
    ------
    ValueError
        If the parts disagree on Z or mass, or the combination has zero norm.

    Examples
    --------
    >>> s = superpose([(1, eigenstate(1, 0, 0)), (1, eigenstate(2, 1, 0))])
    >>> round(abs(s.terms[0].coefficient) ** 2, 12)
    0.5
    """
    parts = list(parts)
    if not parts:
        raise ValueError("a superposition needs at least one part")
    z_values = {p.Z for _, p in parts}
    mu_values = {p.reduced_mass_ratio for _, p in parts}
    if len(z_values) > 1 or len(mu_values) > 1:
        raise ValueError("all parts of a superposition must share Z and the reduced mass")
    terms: dict[tuple, complex] = {}
    for c, part in parts:
        for t in part.terms:
            key = (t.n, t.l, t.m, t.centre_a0)
            terms[key] = terms.get(key, 0.0) + complex(c) * t.coefficient
    merged = [Term(n, l, m, c, centre) for (n, l, m, centre), c in terms.items() if c != 0]
    if not merged:
        raise ValueError("the superposition has zero norm: its coefficients cancel")
    return _normalised(merged, z_values.pop(), mu_values.pop(), float(time_au), label)
