"""State step, global phase: when psi counts as real up to one global phase, and the rotation that removes it.

One rule serves every output that shows or uses the sign of psi: the sign colour
map of 3D renders, sections and mesh vertex colours, the sign split of meshes, and
the ``is_real`` of reports.

A field is real up to a global phase when psi = e^{i theta} f with f real.  Since
sum(psi^2) = e^{2 i theta} sum(f^2) and sum(f^2) > 0, the angle
theta = arg(sum psi^2) / 2 is fixed modulo pi by the values themselves; the field
counts as real when the imaginary part of psi e^{-i theta} stays within
:data:`REAL_TOLERANCE` of max |psi| everywhere.

Sign convention: psi is rotated by the smallest angle that makes it real, theta in
(-pi/2, pi/2] (the half-open end keeps the choice unique).  A psi that is real as
written keeps its sign, so ``-1*3dz2`` stays negative on its lobes;
``i*2pz`` becomes +2p_z, ``(0.6+0.8i)*2pz`` becomes +2p_z, and ``-i*2pz``, whose
angle -pi/2 lies just outside the range, becomes -2p_z.

For an analytic state the rule is applied to psi at fixed probe points spread
over the state (:func:`state_rotation`), so every output of one state uses the
same rotation whatever part of space it shows; a user field is judged by its own
values (:func:`real_rotation`).
"""

from __future__ import annotations

import math

import numpy as np

from .model import State

__all__ = ["REAL_TOLERANCE", "nearest_real_rotation", "real_rotation", "state_rotation", "is_real",
           "sign_rotation"]

#: psi counts as real up to a global phase when, after the rotation, its imaginary part is
#: below this share of max |psi| everywhere.  It lies far above float64 round-off of an
#: exact psi (1e-15) and above the float32 round-off of a complex64 lattice and of its
#: trilinear interpolation (6e-8), and far below any phase a picture can show (one entry
#: of the 720-entry colour table is 2 pi / 720 = 8.7e-3 rad).
REAL_TOLERANCE = 1e-5
#: An angle theta within this many radians above -pi/2 is taken as +pi/2: arg(sum psi^2)
#: of psi = -i f comes out as +-pi from the sign of a round-off zero, and both ends must
#: give the same rotation.  Far above the round-off of the angle (~1e-15 rad), far below
#: the phase of any coefficient written with a few digits.
_END_RAD = 1e-9
#: Values handled at a time, which bounds the temporaries for a large lattice (16 MiB).
_CHUNK = 1 << 20


def _chunks(psi: np.ndarray):
    """The finite values of `psi` (flattened), a bounded block at a time."""
    flat = np.asarray(psi).reshape(-1)
    for start in range(0, flat.size, _CHUNK):
        block = flat[start:start + _CHUNK].astype(complex, copy=False)
        yield block[np.isfinite(block)]


def _probe_points(state: State, count: int = 257) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Fixed pseudo-random points spread over the extent of the state (seeded: the same
    points on every run)."""
    rng = np.random.default_rng(20261201)
    p = rng.normal(size=(count, 3)) * state.extent_a0() * 0.5
    return p[:, 0], p[:, 1], p[:, 2]


def nearest_real_rotation(psi: np.ndarray) -> complex:
    """The unit phasor u = e^{i theta}, theta in (-pi/2, pi/2], that makes psi * conj(u) as
    real as one global phase can (largest sum of Re^2), whether or not psi is real.

    Non-finite values are ignored; u = 1 when sum psi^2 is exactly 0 (psi vanishes).  Where
    no angle is truly preferred (a ring e^{i phi}) the angle found is that of round-off.

    Examples
    --------
    >>> import numpy as np
    >>> u = nearest_real_rotation(np.array([1.0, -2.0, 0.5]) * np.exp(0.7j))
    >>> round(float(np.angle(u)), 12)
    0.7
    """
    total = sum(np.sum(np.square(block)) for block in _chunks(psi))
    if total == 0:
        return 1.0 + 0.0j
    theta = 0.5 * float(np.angle(total))
    if theta <= -0.5 * math.pi + _END_RAD:
        theta += math.pi
    if theta == 0.0:
        return 1.0 + 0.0j
    if abs(theta - 0.5 * math.pi) <= _END_RAD:  # a quarter turn, exactly (cos(pi/2) is 6e-17)
        return 1j
    return complex(math.cos(theta), math.sin(theta))


def real_rotation(psi: np.ndarray) -> complex | None:
    """The unit phasor u = e^{i theta}, theta in (-pi/2, pi/2], for which psi * conj(u) is
    real, or None when psi is not real up to one global phase.

    Non-finite values (outside a user lattice) are ignored; psi that vanishes everywhere
    counts as real (u = 1).

    Parameters
    ----------
    psi : array_like, complex
        Values of one field at any set of points.

    Returns
    -------
    complex or None

    Examples
    --------
    >>> import numpy as np
    >>> f = np.array([1.0, -2.0, 0.5])
    >>> real_rotation(-f), real_rotation(1j * f)
    ((1+0j), 1j)
    >>> print(real_rotation(np.array([1.0, 1j])))
    None
    """
    peak = max((float(np.max(np.abs(b))) for b in _chunks(psi) if b.size), default=0.0)
    if peak == 0.0:
        return 1.0 + 0.0j
    u = nearest_real_rotation(psi)
    if any(np.max(np.abs((b * np.conj(u)).imag)) > REAL_TOLERANCE * peak for b in _chunks(psi) if b.size):
        return None
    return u


def state_rotation(state: State) -> complex | None:
    """:func:`real_rotation` of `state`'s psi at fixed probe points spread over the state.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate, real_orbital, superpose
    >>> state_rotation(superpose([(1j, real_orbital(2, 1, 0))]))
    1j
    >>> print(state_rotation(eigenstate(2, 1, 1)))
    None
    """
    return real_rotation(state.psi(*_probe_points(state)))


def is_real(state: State) -> bool:
    """True when psi of `state` is real up to one global phase at every point (at its time).

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> is_real(eigenstate(3, 2, 0)), is_real(eigenstate(2, 1, 1))
    (True, False)
    """
    return state_rotation(state) is not None


def sign_rotation(state: State | None, psi: np.ndarray | None = None, *,
                  what: str = "the sign map", instead: str = "use the uniform or cvd map") -> complex:
    """The rotation that every sign-showing output removes before reading the sign of psi.

    Parameters
    ----------
    state : State or None
        The analytic state (its rotation is :func:`state_rotation`); None for a user field.
    psi : ndarray, optional
        The field's own values, judged when there is no state.
    what, instead : str
        What needs the sign, and what to use for a complex psi, for the message.

    Raises
    ------
    ValueError
        When psi is complex: one line naming `what` and what to use instead.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> sign_rotation(eigenstate(2, 1, 0))
    (1+0j)
    """
    u = state_rotation(state) if state is not None else real_rotation(np.asarray(psi))
    if u is None:
        name = f"state {state.label!r}" if state is not None else "the field"
        raise ValueError(f"{what} needs psi real up to one global phase, but {name} is complex: "
                         f"{instead}")
    return u
