"""The state step's hybrid orbitals: sp, sp2, sp3, sp3d and sp3d2 sets on one shell.

Each member is a normalised real superposition of the real orbitals of one shell n
(the real orbitals and their signs are those of :mod:`orbitalrender.state.model`), so
in a hydrogen-like atom it is a stationary state with the energy E_n.

Construction (derived here, not typed in as decimals).  A member pointing along the
unit vector u is::

    h_u = sum_l sqrt(w_l) * sum_m C_lm(u) |n l m>_real,   C_lm(u) = S_lm(u) / sqrt(sum_m' S_lm'(u)^2)

where S_lm is the real spherical harmonic of index m and w_l the share of l character
of that member.  By the addition theorem sum_m S_lm(u) S_lm(v) = (2l+1)/(4 pi) P_l(u.v),
so <h_u | h_v> = sum_l w_l P_l(u.v), and every member is positive along its own u.
For the equivalent sets w_l = (number of l orbitals used) / (number of members):

=====  ==============================  ==========================================
set    w_s, w_p, w_d                   directions (in this order)
=====  ==============================  ==========================================
sp     1/2, 1/2                        +z, -z
sp2    1/3, 2/3                        +x, then 120 and 240 degrees in the xy plane
sp3    1/4, 3/4                        (1,1,1), (1,-1,-1), (-1,1,-1), (-1,-1,1)
sp3d   axial 0, 1/2, 1/2 (d_z2);       +z, -z, then +x, 120, 240 degrees
       equatorial 1/3, 2/3, 0
sp3d2  1/6, 1/2, 1/3 (d_z2, d_x2-y2)   +x, -x, +y, -y, +z, -z
=====  ==============================  ==========================================

The radial functions R_nl of this project are positive at the nucleus, so far out they
have the sign (-1)^(n-l-1) (2s and 3p are negative beyond their last node).  The textbook
tables assume radial parts positive where the density is largest, i.e. far out; so that
each member's large outer lobe points along its u and is positive, member coefficients on
shell n are those of :func:`hybrid_coefficients` times (-1)^(n-l-1) for the l part.

sp3d is the one set whose members are not all equivalent: the axial pair are
(p_z +- d_z2)/sqrt(2) and the equatorial three are sp2 hybrids in the xy plane.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import cache

import numpy as np

from .model import State, real_orbital, superpose

__all__ = ["HYBRID_SETS", "HybridSet", "hybrid_coefficients", "hybrid_member", "hybrid_members",
           "parse_hybrid"]

_L_OF = {"s": 0, "p": 1, "d": 2}
# Largest |coefficient| that is rounding of an exact zero (cos 90 degrees and the like).
_ROUNDING = 1e-14


@dataclass(frozen=True)
class HybridSet:
    """One hybrid set: its basis of real orbitals, member directions and l shares.

    Attributes
    ----------
    name : str
        ``sp``, ``sp2``, ``sp3``, ``sp3d`` or ``sp3d2``.
    basis : tuple of str
        Real-orbital suffixes (keys of ``notation.REAL_LABELS``) the set is built from.
    directions : tuple of (x, y, z)
        Direction of each member's major lobe (not necessarily unit length).
    shares : tuple of (w_s, w_p, w_d)
        Share of s, p and d character of each member; each row sums to 1.
    """

    name: str
    basis: tuple[str, ...]
    directions: tuple[tuple[float, float, float], ...]
    shares: tuple[tuple[float, float, float], ...]

    @property
    def lowest_n(self) -> int:
        """The lowest shell that has every orbital of the basis (2 for s/p, 3 with d)."""
        return 1 + max(_L_OF[b[0]] for b in self.basis)

    @property
    def size(self) -> int:
        return len(self.directions)


def _in_plane(count: int) -> tuple[tuple[float, float, float], ...]:
    """`count` directions in the xy plane, the first along +x, 360/count degrees apart."""
    return tuple((math.cos(2 * math.pi * k / count), math.sin(2 * math.pi * k / count), 0.0)
                 for k in range(count))


def _equivalent(name: str, basis: tuple[str, ...], directions) -> HybridSet:
    """A set of equivalent members: w_l = (orbitals of that l in the basis) / members."""
    count = len(directions)
    share = tuple(sum(1 for b in basis if _L_OF[b[0]] == l) / count for l in range(3))
    return HybridSet(name, basis, tuple(directions), (share,) * count)


_AXES = ((1.0, 0.0, 0.0), (-1.0, 0.0, 0.0), (0.0, 1.0, 0.0), (0.0, -1.0, 0.0),
         (0.0, 0.0, 1.0), (0.0, 0.0, -1.0))

#: The hybrid sets by name.
HYBRID_SETS: dict[str, HybridSet] = {
    s.name: s for s in (
        _equivalent("sp", ("s", "pz"), _AXES[4:]),
        _equivalent("sp2", ("s", "px", "py"), _in_plane(3)),
        _equivalent("sp3", ("s", "px", "py", "pz"),
                    ((1.0, 1.0, 1.0), (1.0, -1.0, -1.0), (-1.0, 1.0, -1.0), (-1.0, -1.0, 1.0))),
        HybridSet("sp3d", ("s", "px", "py", "pz", "dz2"), _AXES[4:] + _in_plane(3),
                  ((0.0, 0.5, 0.5),) * 2 + ((1 / 3, 2 / 3, 0.0),) * 3),
        _equivalent("sp3d2", ("s", "px", "py", "pz", "dz2", "dx2-y2"), _AXES),
    )
}


def _real_harmonic_direction(l: int, direction: np.ndarray) -> dict[int, float]:
    """C_lm(u) for every real index m: the real harmonics at u, scaled to unit length.

    The real orbital |l+1, l, m> is evaluated at u (|u| = 1); its radial factor is the
    same for every m and nonzero there (that shell has no radial node), so scaling the
    vector over m to unit length leaves S_lm(u) / sqrt(sum_m S_lm(u)^2).
    """
    x, y, z = direction
    values = {m: float(np.real(real_orbital(l + 1, l, m).psi(x, y, z))) for m in range(-l, l + 1)}
    norm = math.sqrt(sum(v * v for v in values.values()))
    return {m: v / norm for m, v in values.items()}


@cache
def hybrid_coefficients(name: str) -> tuple[tuple[str, ...], np.ndarray]:
    """The coefficient matrix of a hybrid set over its basis of real orbitals.

    Parameters
    ----------
    name : str
        A key of :data:`HYBRID_SETS`.

    Returns
    -------
    basis : tuple of str
        Real-orbital suffixes, the columns.
    matrix : ndarray, shape (members, len(basis))
        Row k holds the coefficients of member k + 1; the rows are orthonormal.

    Examples
    --------
    >>> basis, c = hybrid_coefficients("sp3")
    >>> basis, c[0].round(6).tolist()
    (('s', 'px', 'py', 'pz'), [0.5, 0.5, 0.5, 0.5])
    >>> basis, c = hybrid_coefficients("sp3d")
    >>> c[0].round(6).tolist()  # axial +z: (p_z + d_z2) / sqrt(2)
    [0.0, 0.0, 0.0, 0.707107, 0.707107]
    """
    from .notation import REAL_LABELS

    hset = HYBRID_SETS[name]
    rows = []
    for direction, shares in zip(hset.directions, hset.shares):
        u = np.asarray(direction, dtype=float)
        u = u / np.linalg.norm(u)
        coef = {}
        for l, share in enumerate(shares):
            if share:
                for m, c in _real_harmonic_direction(l, u).items():
                    coef[(l, m)] = math.sqrt(share) * c
        row = [coef.get(REAL_LABELS[b], 0.0) for b in hset.basis]
        left_out = sum(v * v for k, v in coef.items()
                       if k not in {REAL_LABELS[b] for b in hset.basis})
        if left_out > _ROUNDING:
            raise AssertionError(f"{name}: a member needs orbitals outside its basis")
        rows.append(row)
    matrix = np.array(rows)
    matrix[np.abs(matrix) < _ROUNDING] = 0.0
    return hset.basis, matrix


def _shell_n(hset: HybridSet, n: int | None) -> int:
    if n is None:
        return hset.lowest_n
    if n < hset.lowest_n:
        raise ValueError(f"{n}{hset.name} does not exist: {hset.name} needs n >= {hset.lowest_n}")
    return n


def hybrid_member(name: str, k: int, n: int | None = None, *, Z: float = 1.0,
                  reduced_mass_ratio: float = 1.0) -> State:
    """Member k (1-based) of a hybrid set on shell n (default: the lowest possible).

    Examples
    --------
    >>> h = hybrid_member("sp", 1)
    >>> h.label, h.is_stationary, bool(h.psi(0, 0, 5.0).real > -h.psi(0, 0, -5.0).real > 0)
    ('sp[1]', True, True)
    """
    if name not in HYBRID_SETS:
        raise ValueError(f"unknown hybrid set {name!r}; known: {', '.join(HYBRID_SETS)}")
    hset = HYBRID_SETS[name]
    if not 1 <= k <= hset.size:
        raise ValueError(f"{name} has members [1] to [{hset.size}], got [{k}]")
    shell = _shell_n(hset, n)
    from .notation import REAL_LABELS

    basis, matrix = hybrid_coefficients(name)
    prefix = "" if n is None else str(shell)
    parts = []
    for b, c in zip(basis, matrix[k - 1]):
        l, m = REAL_LABELS[b]
        if c:
            outer_sign = (-1) ** (shell - l - 1)  # sign of R_nl beyond its last node
            parts.append((outer_sign * c, real_orbital(shell, l, m, Z, reduced_mass_ratio)))
    return superpose(parts, label=f"{prefix}{name}[{k}]")


def hybrid_members(name: str, n: int | None = None, *, Z: float = 1.0,
                   reduced_mass_ratio: float = 1.0) -> tuple[State, ...]:
    """Every member of a hybrid set, in the order of :data:`HYBRID_SETS`.

    Examples
    --------
    >>> [h.label for h in hybrid_members("sp2", 3)]
    ['3sp2[1]', '3sp2[2]', '3sp2[3]']
    """
    if name not in HYBRID_SETS:
        raise ValueError(f"unknown hybrid set {name!r}; known: {', '.join(HYBRID_SETS)}")
    return tuple(hybrid_member(name, k, n, Z=Z, reduced_mass_ratio=reduced_mass_ratio)
                 for k in range(1, HYBRID_SETS[name].size + 1))


_HYBRID = re.compile(r"^(\d+)?(sp[0-9a-z]*)(?:\[(\d+)\])?$")


def parse_hybrid(text: str) -> tuple[str, int | None, int | None] | None:
    """(set name, shell n or None, member k or None) if `text` is a hybrid label, else None.

    Raises ValueError for a hybrid-looking label that names no known set.

    Examples
    --------
    >>> parse_hybrid("3sp3[2]"), parse_hybrid("sp3d2"), parse_hybrid("2pz")
    (('sp3', 3, 2), ('sp3d2', None, None), None)
    """
    mt = _HYBRID.match(re.sub(r"\s+", "", text))
    if mt is None:
        return None
    if mt[2] not in HYBRID_SETS:
        raise ValueError(f"unknown hybrid label {mt[2]!r}; known: {', '.join(HYBRID_SETS)}"
                         " (a member as sp3[1])")
    return mt[2], None if mt[1] is None else int(mt[1]), None if mt[3] is None else int(mt[3])
