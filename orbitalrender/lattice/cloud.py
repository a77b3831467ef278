"""The lattice step's point sampler: points drawn exactly from |psi|^2, with no box.

Every term c_i |n_i l_i m_i> of a State (at its own centre) has a density that can be
drawn exactly: r from the radial density r^2 R_nl(r)^2 by inverse CDF, cos(theta)
from |Y_l^m|^2 by inverse CDF, phi uniform.  When all terms share one centre, n, l and
|m| (eigenstates, real orbitals) the density factorises and only phi needs a rejection
step, from uniform with a tight bound (kept share 1/2 for a real orbital, so the
cos^2(m phi) or sin^2(m phi) factor is drawn exactly at little cost).  Any other state
is drawn by rejection
from the mixture q = sum_i w_i |psi_i|^2 with w_i = |c_i| / S, S = sum_i |c_i|: by the
Cauchy-Schwarz inequality

    |sum_i c_i psi_i|^2 <= (sum_i |c_i|^2 / w_i) (sum_i w_i |psi_i|^2) = S^2 q,

so a point from q kept with probability |psi|^2 / (S^2 q) is a point from |psi|^2
(psi normalised), and the expected share kept is 1 / S^2 (1/4 for an sp3 member).
Nothing is cut off at a box.

The inverse CDFs are tables: the CDF at the edges of 2^14 panels by 8-point
Gauss-Legendre per panel (the integrands are polynomials times an exponential, which
that rule integrates to round-off on such narrow panels), inverted by monotone cubic
(PCHIP) interpolation.  The radial table stops where the tail beyond it is below about
1e-15.  The drawn values are exact up to that interpolation: tests/test_lattice_cloud.py
measures |CDF(r(u)) - u| below 1e-9 against the closed-form radial CDF (about 2e-10 for
n up to 6), far below the 1e-3 that a million points can resolve.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache

import numpy as np

from ..state.hydrogen import psi_nlm_xyz, radial_function, spherical_harmonic_xyz
from ..state.model import State
from .grid import Box
from .memory import require_bytes

__all__ = ["Cloud", "Slab", "cloud_bytes", "draw_cloud", "parse_slab", "MAX_POINTS"]

_PANELS = 1 << 14
_GL_X, _GL_W = np.polynomial.legendre.leggauss(8)
#: Probability the radial table may leave beyond its last radius.
_RADIAL_TAIL = 1e-15
#: Proposals per batch: bounds the temporaries, independent of the number of points.
_BATCH = 1 << 17
#: Bytes per kept point: positions (3 float64) and psi (complex128).
_BYTES_PER_POINT = 40
#: Bytes per proposal and term in a batch: psi of the term, |psi|^2 and the sum (complex
#: and float temporaries), plus the coordinates; an upper bound of what numpy allocates.
_BYTES_PER_PROPOSAL_TERM = 64
_BYTES_PER_PROPOSAL = 160
#: Seeds drawn for the caller stay below 2^63, so they can be given back as an option.
_SEED_LIMIT = 2**63
#: Most points one call may ask for (a PLY of this many points is 1.2 GB).
MAX_POINTS = 50_000_000


def _inverse_cdf(pdf, a: float, b: float):
    """Inverse CDF (a scipy PchipInterpolator) of the density `pdf` (vectorised, any
    scale) on [a, b]."""
    from scipy.interpolate import PchipInterpolator  # here: option modules import this one

    edges = np.linspace(a, b, _PANELS + 1)
    half = 0.5 * np.diff(edges)
    nodes = (0.5 * (edges[1:] + edges[:-1]))[:, None] + half[:, None] * _GL_X[None, :]
    cdf = np.concatenate([[0.0], np.cumsum(half * (pdf(nodes) @ _GL_W))])
    cdf /= cdf[-1]
    rising = np.concatenate([[True], np.diff(cdf) > 0])  # flat only where the tail underflows
    return PchipInterpolator(cdf[rising], edges[rising])


@cache
def _radial_table(n: int, l: int):
    """Inverse CDF of r^2 R_nl(r)^2 for Z = 1 and an infinitely heavy nucleus (r in a0)."""
    # The density falls like r^(2n) e^(-2r/n); double the reach until the tail is tiny.
    reach = float(n * n)
    while True:
        r = np.linspace(reach, 2 * reach, 64)
        tail = np.trapezoid(r * r * radial_function(n, l, r) ** 2, r)
        if tail < _RADIAL_TAIL * 1e-3:
            break
        reach *= 1.5
    return _inverse_cdf(lambda x: x * x * radial_function(n, l, x) ** 2, 0.0, reach)


@cache
def _polar_table(l: int, am: int):
    """Inverse CDF of |Y_l^m(cos theta)|^2 in t = cos(theta) on [-1, 1] (same for +-m)."""

    def pdf(t):
        s = np.sqrt(np.clip(1.0 - t * t, 0.0, None))
        return np.abs(spherical_harmonic_xyz(l, am, s, np.zeros_like(t), t)) ** 2

    return _inverse_cdf(pdf, -1.0, 1.0)


def _draw_term(rng: np.random.Generator, n: int, l: int, m: int, count: int,
               length_a0: float) -> np.ndarray:
    """`count` points (count, 3) from |psi_nlm|^2 centred at the origin."""
    r = _radial_table(n, l)(rng.random(count)) * length_a0
    t = _polar_table(l, abs(m))(rng.random(count))
    phi = rng.random(count) * (2.0 * math.pi)
    s = np.sqrt(np.clip(1.0 - t * t, 0.0, None))
    return np.stack([r * s * np.cos(phi), r * s * np.sin(phi), r * t], axis=1)


@dataclass(frozen=True, eq=False)
class Cloud:
    """Points drawn from |psi|^2 and psi at each.

    Attributes
    ----------
    state : State
        What was drawn.
    points_a0 : ndarray, shape (N, 3)
        Positions in a0.
    psi : ndarray of complex, shape (N,)
        psi at each point, a0^-3/2.
    seed : int
        Seed of the numpy Generator (PCG64); the same seed gives the same points.
    proposals : int
        Points drawn in space, kept or not (equal to the count when the density
        factorises: there only phi is redrawn).
    """

    state: State
    points_a0: np.ndarray
    psi: np.ndarray
    seed: int
    proposals: int

    @property
    def count(self) -> int:
        return len(self.points_a0)

    @property
    def accepted_fraction(self) -> float:
        """Share of proposals kept (1 / S^2 on average for the mixture, 1 when the
        density factorises)."""
        return self.count / self.proposals if self.proposals else 1.0

    @property
    def density(self) -> np.ndarray:
        """|psi|^2 at each point, a0^-3."""
        return np.abs(self.psi) ** 2


def cloud_bytes(state: State, count: int) -> int:
    """Peak bytes :func:`draw_cloud` needs for `count` points of `state` (an upper bound)."""
    batch = _BATCH * (_BYTES_PER_PROPOSAL + _BYTES_PER_PROPOSAL_TERM * len(state.terms))
    return int(count * _BYTES_PER_POINT * 2 + batch)  # twice: the last concatenation copies


def _one_shell(state: State) -> bool:
    """True when every term shares one centre, n, l and |m|: then |psi|^2 is
    R_nl^2 |P_l^|m||^2 g(phi) and each factor can be drawn on its own."""
    return len({(t.n, t.l, abs(t.m), t.centre_a0) for t in state.terms}) == 1


def _draw_one_shell(state: State, count: int, rng: np.random.Generator, seed: int) -> Cloud:
    """r and cos(theta) by inverse CDF, phi by rejection from uniform with the tight bound
    of g(phi) = |a_+ e^{i|m|phi} + a_- e^{-i|m|phi}|^2 <= (|a_+| + |a_-|)^2 (2 for a real
    orbital, 1 for an eigenstate, where every phi is kept).  Y_l^{-m} = (-1)^m conj(Y_l^m)
    (Condon-Shortley) gives a_- its sign."""
    first = state.terms[0]
    am = abs(first.m)
    coef = np.array([t.coefficient for t in state.terms]) * state.phase_factors()
    a_plus = sum(c for c, t in zip(coef, state.terms) if t.m == am)
    a_minus = sum(c * (-1) ** am for c, t in zip(coef, state.terms) if t.m == -am and am)
    bound = (abs(a_plus) + abs(a_minus)) ** 2
    length = 1.0 / (state.Z * state.reduced_mass_ratio)
    points, psi = np.empty((count, 3)), np.empty(count, dtype=complex)
    for start in range(0, count, _BATCH):
        size = min(_BATCH, count - start)
        r = _radial_table(first.n, first.l)(rng.random(size)) * length
        t = _polar_table(first.l, am)(rng.random(size))
        phi = np.empty(size)
        todo = np.arange(size)
        while len(todo):
            trial = rng.random(len(todo)) * (2.0 * math.pi)
            g = np.abs(a_plus * np.exp(1j * am * trial) + a_minus * np.exp(-1j * am * trial)) ** 2
            keep = rng.random(len(todo)) * bound <= g
            phi[todo[keep]] = trial[keep]
            todo = todo[~keep]
        s = np.sqrt(np.clip(1.0 - t * t, 0.0, None))
        block = np.stack([r * s * np.cos(phi), r * s * np.sin(phi), r * t], axis=1) + first.centre_a0
        points[start:start + size] = block
        psi[start:start + size] = state.psi(*block.T)
    return Cloud(state, points, psi, seed, count)


def draw_cloud(state: State, count: int, *, seed: int | None = None) -> Cloud:
    """Draw `count` points exactly from |psi|^2 of `state`.

    Parameters
    ----------
    state : State
        Any state: eigenstate, real orbital, superposition, several centres, any time.
    count : int
        Points to keep, 1 to :data:`MAX_POINTS`.
    seed : int, optional
        Seed (>= 0) of ``numpy.random.Generator(PCG64(seed))``.  None takes one from the
        operating system's entropy and records it in the Cloud, so any run can be repeated.

    Returns
    -------
    Cloud

    Raises
    ------
    ValueError
        For `count` out of range.
    MemoryLimitError
        If the points would not fit in memory now (checked before drawing).

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> c = draw_cloud(eigenstate(2, 1, 1), 1000, seed=1)
    >>> c.points_a0.shape, c.accepted_fraction
    ((1000, 3), 1.0)
    """
    if isinstance(count, bool) or int(count) != count or not 1 <= count <= MAX_POINTS:
        raise ValueError(f"the number of points must be an integer from 1 to {MAX_POINTS}, "
                         f"got {count}")
    count = int(count)
    require_bytes(cloud_bytes(state, count), f"a cloud of {count} points")
    if seed is None:
        seed = int(np.random.SeedSequence().entropy) % _SEED_LIMIT
    if isinstance(seed, bool) or int(seed) != seed or seed < 0:
        raise ValueError(f"the seed must be a whole number >= 0, got {seed}")
    seed = int(seed)
    rng = np.random.Generator(np.random.PCG64(seed))
    if _one_shell(state):
        return _draw_one_shell(state, count, rng, seed)
    terms = state.terms
    coef = np.array([t.coefficient for t in terms]) * state.phase_factors()
    weight = np.abs(coef)
    s_total = float(weight.sum())
    weight = weight / s_total
    length = 1.0 / (state.Z * state.reduced_mass_ratio)
    kept_points: list[np.ndarray] = []
    kept_psi: list[np.ndarray] = []
    have = proposals = 0
    while have < count:
        size = _BATCH
        which = rng.choice(len(terms), size=size, p=weight)
        points = np.empty((size, 3))
        for i, t in enumerate(terms):
            picked = which == i
            points[picked] = _draw_term(rng, t.n, t.l, t.m, int(picked.sum()), length) + t.centre_a0
        psi = np.zeros(size, dtype=complex)
        mixture = np.zeros(size)
        for c, w, t in zip(coef, weight, terms):
            part = psi_nlm_xyz(t.n, t.l, t.m, *(points - t.centre_a0).T, state.Z,
                               state.reduced_mass_ratio)
            psi += c * part
            mixture += w * np.abs(part) ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            keep = rng.random(size) * (s_total**2 * mixture) < np.abs(psi) ** 2
        take = np.flatnonzero(keep)[:count - have]
        # proposals used: up to and including the last kept one of this batch
        proposals += (int(take[-1]) + 1) if have + len(take) == count else size
        points, psi = points[take], psi[take]
        kept_points.append(points)
        kept_psi.append(psi)
        have += len(points)
    return Cloud(state, np.concatenate(kept_points), np.concatenate(kept_psi), seed, proposals)


_AXES = "xyz"


@dataclass(frozen=True)
class Slab:
    """The points with |coordinate[axis] - centre_a0| <= half_thickness_a0: a thin section.

    Attributes
    ----------
    axis : {"x", "y", "z"}
        Normal of the slab.
    centre_a0 : float
        Position of the mid-plane along `axis`, a0.
    half_thickness_a0 : float
        Half the thickness, a0 (> 0).
    """

    axis: str
    centre_a0: float
    half_thickness_a0: float

    def __post_init__(self) -> None:
        if self.axis not in _AXES:
            raise ValueError(f"slab axis must be x, y or z, got {self.axis!r}")
        if not math.isfinite(self.centre_a0):
            raise ValueError(f"slab centre must be a finite number of a0, got {self.centre_a0}")
        if not (self.half_thickness_a0 > 0 and math.isfinite(self.half_thickness_a0)):
            raise ValueError(f"slab half-thickness must be a positive number of a0, "
                             f"got {self.half_thickness_a0}")

    def contains(self, points_a0: np.ndarray) -> np.ndarray:
        """Boolean mask of the points (N, 3) inside the slab."""
        along = points_a0[:, _AXES.index(self.axis)]
        return np.abs(along - self.centre_a0) <= self.half_thickness_a0

    def check_within(self, box: Box) -> None:
        """Raise ValueError unless the slab's mid-plane cuts the cube `box`."""
        k = _AXES.index(self.axis)
        lo = box.centre_a0[k] - box.half_width_a0
        hi = box.centre_a0[k] + box.half_width_a0
        if not lo <= self.centre_a0 <= hi:
            raise ValueError(f"the slab {self.axis} = {self.centre_a0:g} lies outside the box, "
                             f"which spans {self.axis} = {lo:.3g} to {hi:.3g} a0")


def parse_slab(text: str) -> Slab:
    """Read ``AXIS=CENTRE,HALF`` (a0), e.g. ``z=0,0.5`` for the points with |z| <= 0.5 a0.

    Examples
    --------
    >>> parse_slab("z=0,0.5")
    Slab(axis='z', centre_a0=0.0, half_thickness_a0=0.5)
    """
    axis, sep, numbers = str(text).replace(" ", "").partition("=")
    values = numbers.split(",")
    try:
        if not sep or len(values) != 2:
            raise ValueError
        centre, half = (float(v) for v in values)
    except ValueError:
        raise ValueError(f"cannot read slab {text!r}: expected AXIS=CENTRE,HALF_THICKNESS in a0, "
                         "e.g. z=0,0.5") from None
    return Slab(axis, centre, half)
