"""Lattice sampler: evaluates psi of a State on a regular N^3 grid, in chunks, using exact symmetries.

For a state whose terms all sit at the centre of a box that is symmetric about
that centre, each term |n l m> is evaluated on one octant only and the other
seven are filled from the exact reflections (Condon-Shortley phase)::

    psi(x, y, -z) = (-1)^(l+m) psi(x, y, z)
    psi(x, -y, z) = conj(psi(x, y, z))
    psi(-x, y, z) = (-1)^m conj(psi(x, y, z))

Any other state is evaluated slab by slab.  Either way the work arrays are
bounded by a fixed chunk of points, so the peak memory is the output plus one
octant plus a few tens of MiB.
"""

from __future__ import annotations

import numpy as np

from ..state.hydrogen import psi_nlm_xyz
from ..state.model import State
from ..state.radial import radius_holding
from .grid import Box, Lattice
from .memory import require_lattice_memory

__all__ = ["default_box", "sample", "BOX_FRACTION", "BOX_PADDING"]

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


def _evaluate_slabs(fn, xs, ys, zs, out: np.ndarray, scale: complex = 1.0,
                    accumulate: bool = False) -> None:
    """out[i, j, k] (+)= scale * fn(xs[i], ys[j], zs[k]), slab by slab along x."""
    per_slab = len(ys) * len(zs)
    step = max(1, _CHUNK_POINTS // per_slab)
    yy, zz = np.meshgrid(ys, zs, indexing="ij")
    for s in range(0, len(xs), step):
        xv = xs[s:s + step, None, None]
        block = fn(xv, yy[None], zz[None])
        if scale != 1.0:
            block = block * scale
        if accumulate:
            out[s:s + step] += block
        else:
            out[s:s + step] = block


def _mirror_views(out: np.ndarray, half: int):
    """The 8 (target view, flips) pairs that cover `out` from an octant of size `half`.

    flips[a] is True where axis a is reflected; the source for a reflected axis is the
    octant reversed along that axis and cut to the length of the negative half.
    """
    n = out.shape[0]
    neg = n // 2
    for fx in (False, True):
        for fy in (False, True):
            for fz in (False, True):
                target = tuple(slice(0, neg) if f else slice(neg, n) for f in (fx, fy, fz))
                yield out[target], (fx, fy, fz)


def _source(octant: np.ndarray, flips, neg: int) -> np.ndarray:
    src = octant
    for axis, f in enumerate(flips):
        if f:
            src = np.flip(src, axis=axis)
            src = src[(slice(None),) * axis + (slice(0, neg),)]
    return src


def _sample_symmetric(state: State, box: Box, resolution: int, out: np.ndarray) -> None:
    n = resolution
    neg = n // 2
    pos = [_axis(box, n, i)[neg:] - box.centre_a0[i] for i in range(3)]
    octant = np.empty((n - neg,) * 3, dtype=out.dtype)
    out[...] = 0
    for term, phase in zip(state.terms, state.phase_factors()):
        c = term.coefficient * phase

        def fn(x, y, z, t=term):
            return psi_nlm_xyz(t.n, t.l, t.m, x, y, z, state.Z, state.reduced_mass_ratio)

        _evaluate_slabs(fn, *pos, octant)
        for view, flips in _mirror_views(out, neg):
            fx, fy, fz = flips
            src = _source(octant, flips, neg)
            sign = 1
            if fx:
                sign *= (-1) ** term.m
            if fz:
                sign *= (-1) ** (term.l + term.m)
            if fx != fy:
                src = np.conj(src)
            view += (sign * c) * src


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
    resolution = int(resolution)
    if resolution < 8:
        raise ValueError(f"resolution must be at least 8, got {resolution}")
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
