"""Lattice sampler: evaluates psi of a State on a regular N^3 grid, in chunks, using exact symmetries.

For a state whose terms all sit at the centre of a box that is symmetric about
that centre, psi is evaluated on one octant only and the other seven are filled
from the exact reflections of each term |n l m> (Condon-Shortley phase)::

    psi(x, y, -z) = (-1)^(l+m) psi(x, y, z)
    psi(x, -y, z) = conj(psi(x, y, z))
    psi(-x, y, z) = (-1)^m conj(psi(x, y, z))

On that path the lattice coordinates from the centre are integers times one
unit, so r^2 takes only about 3 N^2 distinct values: R_nl is tabulated there by
:func:`orbitalrender.state.hydrogen.radial_function`.  One compiled loop (numba)
then forms Y_l^m at each octant point by the recurrence of
:mod:`orbitalrender.state.hydrogen` and writes the eight images at once, so the
work needs no memory beyond the output and the small tables; the tests hold it
equal to direct evaluation to round-off.  Any other state is evaluated slab by
slab with numpy; its work arrays are bounded by a fixed chunk of points, so the
peak memory is the output plus a few tens of MiB.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from ..state.hydrogen import radial_function
from ..state.model import State
from ..state.radial import radius_holding
from .grid import Box, Lattice
from .memory import require_lattice_memory

__all__ = ["default_box", "sample", "check_resolution", "PRECISIONS", "BOX_FRACTION", "BOX_PADDING"]

#: Lattice value types by name (the --precision option and the gallery key).
PRECISIONS = {"single": np.complex64, "double": np.complex128}
#: The default box holds all but this much of each term's radial probability.
BOX_FRACTION = 1.0 - 1e-4
#: ... and is then widened by this factor, so surfaces up to F = 0.999 close inside it.
BOX_PADDING = 1.15
#: Points evaluated at once; bounds the temporaries (about 20 float64 arrays of this size).
_CHUNK_POINTS = 1 << 19
_CHUNK_BYTES = _CHUNK_POINTS * 8 * 20


def default_box(state: State, fraction: float = BOX_FRACTION, padding: float = BOX_PADDING) -> Box:
    """A cube around the state's centres that holds all but 1 - `fraction` of each term.

    The half-width is the largest radius holding `fraction` of any term's radial
    probability, plus the distance of its centre from the middle of the centres,
    times `padding`.

    Examples
    --------
    For 1s, e^{-2x}(1 + 2x + 2x^2) = 1e-4 at x = 6.9641 a0; times 1.15:

    >>> from orbitalrender.state.model import eigenstate
    >>> b = default_box(eigenstate(1, 0, 0))
    >>> b.centre_a0, round(b.half_width_a0, 3)
    ((0.0, 0.0, 0.0), 8.009)
    """
    centres = np.array(state.centres_a0)
    mid = 0.5 * (centres.min(axis=0) + centres.max(axis=0))
    reach = 0.0
    for t in state.terms:
        r = radius_holding(t.n, t.l, fraction, state.Z, state.reduced_mass_ratio)
        offset = float(np.max(np.abs(np.asarray(t.centre_a0) - mid)))
        reach = max(reach, r + offset)
    return Box(tuple(mid), reach * padding)


def _axis(box: Box, resolution: int, i: int) -> np.ndarray:
    """Coordinates exactly symmetric about the box centre along axis i."""
    h = 2.0 * box.half_width_a0 / (resolution - 1)
    return box.centre_a0[i] + h * (np.arange(resolution) - 0.5 * (resolution - 1))


def _evaluate_slabs(fn, xs, ys, zs, out: np.ndarray) -> None:
    """out[i, j, k] = fn(xs[i], ys[j], zs[k]), slab by slab along x."""
    per_slab = len(ys) * len(zs)
    step = max(1, _CHUNK_POINTS // per_slab)
    yy, zz = np.meshgrid(ys, zs, indexing="ij")
    for s in range(0, len(xs), step):
        out[s:s + step] = fn(xs[s:s + step, None, None], yy[None], zz[None])


@numba.njit(cache=True)
def _fill_symmetric(out, xs, ys, zs, ixs, iys, izs, neg, coef, sign, l_, m_, radial_rl, q_mm,
                    legendre_a, legendre_inv):
    """out[...] = sum_t coef[t] psi_t, evaluated on the octant xs x ys x zs (coordinates >= 0
    from the centre, lattice indices neg + a) and written to all eight mirror images.

    psi_t = (R_t(r) / r^l) * (r^l Y_l^m): ixs, iys, izs are the octant coordinates as
    integers in the unit u of the table, r^2 = u^2 (ix^2 + iy^2 + iz^2), and
    radial_rl[t, ix^2 + iy^2 + iz^2] = R_t(r) / r^l.  The solid harmonic is
    Q_l(z, r^2) (x + i y)^|m| with Q_j = q_j(cos theta) r^(j - |m|) from the recurrence of
    state.hydrogen._legendre_q multiplied through by r^(j - |m|):
    Q_j = a_j (z Q_{j-1} - r^2 Q_{j-2} / a_{j-1}).

    The image reflected in x (fx), y (fy), z (fz) is sum_t coef[t] sign[t, fx + 2 fz] v_t,
    with v_t conjugated when fx != fy.  Octant index a on an axis of N points maps to
    N - neg - 1 - a on the reflected side when that is >= 0 (for odd N the centre plane
    a = 0 has no image).
    """
    top = out.shape[0] - neg - 1
    terms = len(coef)
    for a in range(len(xs)):
        x = xs[a]
        i0, i1 = neg + a, top - a
        for b in range(len(ys)):
            y = ys[b]
            j0, j1 = neg + b, top - b
            xy = complex(x, y)
            for c in range(len(zs)):
                z = zs[c]
                k0, k1 = neg + c, top - c
                r2 = x * x + y * y + z * z
                s = ixs[a] * ixs[a] + iys[b] * iys[b] + izs[c] * izs[c]
                # p[pattern], w[pattern]: plain and conjugated sums, pattern = fx + 2 fz
                p0 = p1 = p2 = p3 = w0 = w1 = w2 = w3 = 0j
                for t in range(terms):
                    l, m = l_[t], m_[t]
                    am = abs(m)
                    prev = q_mm[t]
                    q = prev
                    if l > am:
                        q = legendre_a[t, am + 1] * z * prev
                        for j in range(am + 2, l + 1):
                            prev, q = q, legendre_a[t, j] * (z * q - r2 * prev * legendre_inv[t, j - 1])
                    v = complex(q * radial_rl[t, s], 0.0)
                    for _ in range(am):
                        v *= xy
                    if m < 0:
                        v = (-1) ** am * v.conjugate()
                    plain, conj = coef[t] * v, coef[t] * v.conjugate()
                    p0 += sign[t, 0] * plain
                    p1 += sign[t, 1] * plain
                    p2 += sign[t, 2] * plain
                    p3 += sign[t, 3] * plain
                    w0 += sign[t, 0] * conj
                    w1 += sign[t, 1] * conj
                    w2 += sign[t, 2] * conj
                    w3 += sign[t, 3] * conj
                # image (fx, fy, fz): plain sum if fx == fy, conjugated sum otherwise
                out[i0, j0, k0] = p0
                if k1 >= 0:
                    out[i0, j0, k1] = p2
                if j1 >= 0:
                    out[i0, j1, k0] = w0
                    if k1 >= 0:
                        out[i0, j1, k1] = w2
                if i1 >= 0:
                    out[i1, j0, k0] = w1
                    if k1 >= 0:
                        out[i1, j0, k1] = w3
                    if j1 >= 0:
                        out[i1, j1, k0] = p1
                        if k1 >= 0:
                            out[i1, j1, k1] = p3


def _legendre_tables(state: State) -> tuple[np.ndarray, np.ndarray]:
    """Per-term starting values q_mm and recurrence factors a_j of state.hydrogen._legendre_q."""
    terms = state.terms
    q_mm = np.empty(len(terms))
    legendre_a = np.ones((len(terms), max(t.l for t in terms) + 2))
    for idx, t in enumerate(terms):
        am = abs(t.m)
        q = 1.0 / math.sqrt(4.0 * math.pi)
        for k in range(1, am + 1):
            q *= -math.sqrt((2 * k + 1) / (2 * k))
        q_mm[idx] = q
        for j in range(am + 1, t.l + 1):
            legendre_a[idx, j] = math.sqrt((4 * j * j - 1) / (j * j - am * am))
    return q_mm, legendre_a


def _sample_symmetric(state: State, box: Box, resolution: int, out: np.ndarray) -> None:
    neg = resolution // 2
    pos = [_axis(box, resolution, i)[neg:] - box.centre_a0[i] for i in range(3)]
    # Octant coordinates are u * (2a + 1) for even N (u = h/2) and u * a for odd N (u = h),
    # so r^2 / u^2 is an integer and R_nl is needed at only about 3 N^2 radii, not N^3 / 8.
    h = 2.0 * box.half_width_a0 / (resolution - 1)
    octant = np.arange(resolution - neg)
    ints, unit = (2 * octant + 1, 0.5 * h) if resolution % 2 == 0 else (octant, h)
    radii_a0 = unit * np.sqrt(np.arange(3 * int(ints[-1]) ** 2 + 1))
    radial_rl = np.zeros((len(state.terms), len(radii_a0)))
    for idx, t in enumerate(state.terms):
        # R / r^l; at r = 0 (odd N) only l = 0 is nonzero, the solid harmonic vanishes otherwise.
        radial_rl[idx, 1:] = (radial_function(t.n, t.l, radii_a0[1:], state.Z, state.reduced_mass_ratio)
                              / radii_a0[1:] ** t.l)
        if t.l == 0:
            radial_rl[idx, 0] = radial_function(t.n, 0, 0.0, state.Z, state.reduced_mass_ratio)
    coef = np.array([t.coefficient * p for t, p in zip(state.terms, state.phase_factors())])
    # sign[t, fx + 2 fz] = (-1)^(m fx) (-1)^((l + m) fz): the parities in the module notes.
    sign = np.array([[(-1.0) ** (t.m * fx + (t.l + t.m) * fz) for fz in (0, 1) for fx in (0, 1)]
                     for t in state.terms])
    q_mm, legendre_a = _legendre_tables(state)
    _fill_symmetric(out, *pos, ints, ints, ints, neg, coef, sign, np.array([t.l for t in state.terms]),
                    np.array([t.m for t in state.terms]), radial_rl, q_mm, legendre_a, 1.0 / legendre_a)


def check_resolution(resolution: int) -> int:
    """`resolution` as int, or ValueError unless it is a whole number of at least 8 points per axis."""
    if int(resolution) != resolution or resolution < 8:
        raise ValueError(f"resolution must be a whole number of at least 8, got {resolution}")
    return int(resolution)


def sample(state: State, resolution: int = 128, box: Box | None = None,
           dtype=np.complex64) -> Lattice:
    """Evaluate psi on a regular ``resolution^3`` lattice.

    Parameters
    ----------
    state : State
        What to sample.
    resolution : int
        Points per axis, at least 8.
    box : Box, optional
        The cube to fill; by default :func:`default_box`.
    dtype : numpy dtype
        ``np.complex64`` (default) or ``np.complex128``.  The arithmetic is done in
        float64 either way.

    Returns
    -------
    Lattice
        Values with ``origin_a0`` at the lower corner and equal spacing on all axes.

    Raises
    ------
    MemoryLimitError
        If the lattice would not fit in the memory free now (checked before allocating).

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> lat = sample(eigenstate(2, 1, 0), resolution=33)
    >>> lat.shape
    (33, 33, 33)
    >>> bool(abs((lat.density().sum() * lat.voxel_volume_a0_3) - 1) < 1e-3)
    True
    """
    resolution = check_resolution(resolution)
    dtype = np.dtype(dtype)
    if dtype not in (np.complex64, np.complex128):
        raise ValueError(f"dtype must be complex64 or complex128, got {dtype}")
    require_lattice_memory(resolution, dtype, _CHUNK_BYTES)
    box = box if box is not None else default_box(state)
    out = np.empty((resolution,) * 3, dtype=dtype)
    if state.is_single_centre and np.allclose(state.centres_a0[0], box.centre_a0, atol=0.0):
        _sample_symmetric(state, box, resolution, out)
    else:
        axes = [_axis(box, resolution, i) for i in range(3)]
        _evaluate_slabs(state.psi, *axes, out)
    h = 2.0 * box.half_width_a0 / (resolution - 1)
    origin = tuple(c - box.half_width_a0 for c in box.centre_a0)
    return Lattice(out, origin, (h, h, h), state)
