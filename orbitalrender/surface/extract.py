"""Surface step, second half: the closed isosurface holding a fraction F, with exact psi at its vertices.

The density |psi|^2 has a double zero on every nodal surface, and a lattice samples
such a zero badly: the thin gap between two shells, or the nodal plane between two
lobes, can fall between lattice points and the parts merge.  Marching cubes is
therefore run on a *signed* field wherever the state allows one:

* psi real up to a global phase alpha (real orbitals, real superpositions, a real user
  field): f = Re(psi e^{-i alpha}).  The surface |psi|^2 = t is the union of
  f = +sqrt(t) and f = -sqrt(t), extracted separately, and a node is a sign change of
  f, which linear interpolation on the lattice resolves however thin the gap.
* one centre and every term with the same m (complex eigenstates |n l m>):
  psi = F(r, theta) e^{i m phi} with F real up to a phase; the same is done with
  f = Re(psi e^{-i (alpha + m phi)}), so the spherical and conical nodes of R_nl and
  P_l^m are sign changes too.  (The z axis, a node of codimension 2, cannot be a sign
  change; it is resolved when the tube of low density around it is wider than the
  lattice spacing.)
* anything else: |psi|, whose zeros are generically lines, not surfaces.

For an analytic state the route follows from its terms
(:func:`orbitalrender.state.phase.is_real`, one centre
and one m with coefficients of one phase).  For a user field the test is made on the
lattice: the imaginary part left after the rotation must stay below 1e-3 of sqrt(t)
everywhere, so that the superlevel sets of f and of |psi| differ by less than that.
"""

from __future__ import annotations

import math

import numpy as np
from skimage.measure import marching_cubes

from ..lattice.grid import Box, Lattice
from ..lattice.memory import require_lattice_and_surface_memory, require_surface_memory
from ..lattice.sampler import check_resolution, sample
from ..state.hydrogen import radial_function
from ..state.limits import check_fraction
from ..state.model import State
from ..state.numerics import bracketed_root
from ..state.phase import is_real
from .level import LevelResult, level_for_fraction
from .model import Surface
from .resolution import warn_unresolved_nodes
from .topology import volume_spread

__all__ = ["extract_surface", "surface_at_level", "surface_box", "vertex_normals"]

#: Largest imaginary part, relative to sqrt(level), that still counts as "real".
_REAL_TOLERANCE = 1e-3
#: Relative margin below the level of the lattice columns next to a nodal z axis.
_AXIS_MARGIN = 1e-3
#: Forward-difference step of the exact density gradient, relative to the lattice spacing:
#: small against the curvature of the surface, large against float64 round-off.
_GRADIENT_STEP = 1e-4
#: Radii scanned for the reach of a surface (:func:`surface_box`).
_BOX_SCAN = 4097
#: Longest Newton step onto the exact surface, in lattice spacings.
_MAX_STEP = 0.5


def _peak_phase(values: np.ndarray) -> float:
    """arg psi where |psi| is largest on a coarse subset of the lattice (about 32^3 points)."""
    step = max(1, min(values.shape) // 32)
    sub = values[::step, ::step, ::step]
    return float(np.angle(sub.reshape(-1)[int(np.argmax(np.abs(sub)))]))


def _common_phase(state: State) -> float | None:
    """beta with every coefficient (times its time factor) real after e^{-i beta}, else None."""
    c = np.array([t.coefficient for t in state.terms]) * state.phase_factors()
    beta = float(np.angle(c[int(np.argmax(np.abs(c)))]))
    rotated = c * np.exp(-1j * beta)
    return beta if np.all(np.abs(rotated.imag) <= 1e-12 * np.max(np.abs(c))) else None


def _azimuthal_unwinder(lattice: Lattice, m: int):
    """e^{-i m phi} about the state's centre on slab i of the lattice (1 on the axis)."""
    centre = lattice.state.centres_a0[0]
    xs, ys, _ = lattice.axes()
    dy = (ys - centre[1])[:, None]

    def unwind(i: int) -> np.ndarray:
        w = (xs[i] - centre[0]) - 1j * dy
        mag = np.abs(w)
        return np.where(mag > 0, w / np.where(mag > 0, mag, 1.0), 1.0) ** m

    return unwind


def _rotate_into(values: np.ndarray, factor, out: np.ndarray, limit: float | None) -> bool:
    """out = Re(values * factor(i)) slab by slab; False as soon as |Im| exceeds `limit`.

    A constant factor c + i d is applied as Re = a c - b d, Im = a d + b c on the real and
    imaginary parts (a, b) in float32, without a complex temporary (a third of the time
    of the complex product at N = 256).
    """
    for i in range(values.shape[0]):
        w = np.asarray(factor(i), dtype=np.complex64)
        if w.ndim:
            slab = values[i] * w
            if limit is not None and float(np.max(np.abs(slab.imag))) > limit:
                return False
            out[i] = slab.real
            continue
        a, b, c, d = values[i].real, values[i].imag, np.float32(w.real), np.float32(w.imag)
        if limit is not None:
            imag = a * d
            imag += b * c
            if float(np.max(np.abs(imag))) > limit:
                return False
        np.multiply(a, c, out=out[i])
        if d:
            out[i] -= b * d
    return True


def _signed_field(lattice: Lattice, amplitude: float) -> tuple[np.ndarray, bool]:
    """float32 field for marching cubes and whether it is signed (see the module notes).

    For an analytic state the form of psi is known from its terms; a user field is
    tested point by point.
    """
    v = lattice.values
    f = np.empty(v.shape, dtype=np.float32)
    state = lattice.state
    if state is None:
        rotate = np.exp(-1j * _peak_phase(v))
        if _rotate_into(v, lambda i: rotate, f, _REAL_TOLERANCE * amplitude):
            return f, True
    elif is_real(state):
        rotate = np.exp(-1j * _peak_phase(v))
        _rotate_into(v, lambda i: rotate, f, None)
        return f, True
    elif state.is_single_centre and len({t.m for t in state.terms}) == 1 and state.terms[0].m != 0:
        beta = _common_phase(state)
        if beta is not None:
            unwind, rotate = _azimuthal_unwinder(lattice, state.terms[0].m), np.exp(-1j * beta)
            _rotate_into(v, lambda i: unwind(i) * rotate, f, None)
            _open_axis(lattice, f, amplitude)
            return f, True
    np.abs(v, out=f, casting="same_kind")
    return f, False


def _open_axis(lattice: Lattice, field: np.ndarray, amplitude: float) -> None:
    """Keep the z axis through the centre out of the superlevel set.

    For m != 0 every term vanishes on the axis, so the set is a ring around it; when
    the tube of low density around the axis is thinner than the lattice spacing, the
    lattice columns next to the axis all lie above the level and the hole would close.
    Those columns (the four around the axis, or the one on it) are clamped just below
    the level, which keeps the hole open with a radius of at most one spacing.
    """
    centre = lattice.state.centres_a0[0]
    columns = []
    for axis in (0, 1):
        u = (centre[axis] - lattice.origin_a0[axis]) / lattice.spacing_a0[axis]
        lo = math.floor(u)
        columns.append([i for i in {lo, math.ceil(u)} if 0 <= i < field.shape[axis]])
    below = np.float32(amplitude * (1.0 - _AXIS_MARGIN))
    for i in columns[0]:
        for j in columns[1]:
            np.clip(field[i, j], -below, below, out=field[i, j])


def _crop(mask_of: np.ndarray, amplitude: float) -> tuple[slice, ...] | None:
    """Index box around {field >= amplitude} with one point of margin, or None if no point
    lies strictly above: points exactly at the level (the level of a user field is one of
    its own values) bound no volume, and marching cubes finds no surface through them alone.
    """
    if not float(mask_of.max()) > amplitude:
        return None
    above = mask_of >= amplitude
    columns = above.any(axis=2)  # one pass over the lattice; x and y from its (N, N) result
    box = []
    for axis, hits in enumerate((columns.any(axis=1), columns.any(axis=0), above.any(axis=(0, 1)))):
        hit = np.flatnonzero(hits)
        box.append(slice(max(hit[0] - 1, 0), min(hit[-1] + 2, above.shape[axis])))
    return tuple(box)


def _touches_boundary(field: np.ndarray, amplitude: float) -> bool:
    faces = (field[0], field[-1], field[:, 0], field[:, -1], field[:, :, 0], field[:, :, -1])
    return any(float(face.max()) >= amplitude for face in faces)


def _march(field: np.ndarray, amplitude: float, lattice: Lattice):
    """Vertices (a0), outward faces and lattice normals of {field >= amplitude}, or None."""
    box = _crop(field, amplitude)
    if box is None:
        return None
    verts, faces, normals, _ = marching_cubes(field[box], amplitude, gradient_direction="ascent")
    offset = np.array([s.start for s in box], dtype=float)
    spacing = np.asarray(lattice.spacing_a0)
    verts = np.asarray(lattice.origin_a0) + (verts.astype(np.float64) + offset) * spacing
    faces = faces.astype(np.int64)
    if volume_spread(verts, faces)[0] < 0:  # keep outward (counter-clockwise from outside)
        faces = faces[:, ::-1].copy()
    return verts, faces, normals.astype(np.float64)


def vertex_normals(vertices_a0: np.ndarray, faces: np.ndarray) -> np.ndarray:
    """Unit vertex normals from the mesh: area-weighted sum of the adjacent face normals.

    Faces are taken as counter-clockwise seen from outside, so the normals point out.

    Examples
    --------
    >>> import numpy as np
    >>> v = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
    >>> f = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])
    >>> bool(np.allclose(vertex_normals(v, f)[3], [0, 0, 1], atol=0.5))
    True
    """
    a, b, c = (vertices_a0[faces[:, i]] for i in range(3))
    face_n = np.cross(b - a, c - a)  # length = twice the area
    out = np.zeros_like(vertices_a0, dtype=float)
    for axis in range(3):
        for corner in range(3):
            out[:, axis] += np.bincount(faces[:, corner], weights=face_n[:, axis],
                                        minlength=len(vertices_a0))
    norm = np.linalg.norm(out, axis=1, keepdims=True)
    return out / np.where(norm > 0, norm, 1.0)


def _exact_vertices(state: State, verts: np.ndarray, level: float, spacing_a0: float,
                    fallback: np.ndarray):
    """Vertices moved onto the exact surface, psi there and outward unit normals.

    Marching cubes places a vertex by linear interpolation along a lattice edge, which
    for a density falling like e^{-r} puts it slightly inside.  One Newton step on
    log|psi|^2 - log(level) along the exact gradient (forward differences of the exact
    density) moves it onto the surface to second order; steps longer than half a
    lattice spacing (near a node, where the gradient is unreliable) are not taken.
    psi is then evaluated exactly at the final positions.
    """
    h = _GRADIENT_STEP * spacing_a0
    x, y, z = verts[:, 0], verts[:, 1], verts[:, 2]
    rho = state.density(x, y, z)
    grad = np.stack([state.density(x + h, y, z) - rho, state.density(x, y + h, z) - rho,
                     state.density(x, y, z + h) - rho], axis=1) / h
    norm = np.linalg.norm(grad, axis=1, keepdims=True)
    good = (norm[:, 0] > 0) & np.isfinite(norm[:, 0]) & (rho > 0)
    safe = np.where(good[:, None], norm, 1.0)
    normals = np.where(good[:, None], -grad / safe, fallback)
    # Newton on log(rho): step = -log(rho / level) * rho * grad / |grad|^2
    with np.errstate(divide="ignore", invalid="ignore"):
        step = (-np.log(np.where(good, rho, 1.0) / level) * np.where(good, rho, 0.0))[:, None] \
            * grad / safe**2
    length = np.linalg.norm(step, axis=1)
    take = good & np.isfinite(length) & (length <= _MAX_STEP * spacing_a0)
    moved = verts + np.where(take[:, None], step, 0.0)
    return moved, state.psi(moved[:, 0], moved[:, 1], moved[:, 2]), normals


def _interpolated_psi(lattice: Lattice, verts: np.ndarray) -> np.ndarray:
    """Trilinear interpolation of the lattice values at the vertices."""
    from scipy import ndimage  # here: only user fields and phase bands need it (0.1 s to load)

    idx = ((verts - np.asarray(lattice.origin_a0)) / np.asarray(lattice.spacing_a0)).T
    re = ndimage.map_coordinates(lattice.values.real, idx, order=1, mode="nearest")
    im = ndimage.map_coordinates(lattice.values.imag, idx, order=1, mode="nearest")
    return re.astype(np.float64) + 1j * im.astype(np.float64)


def surface_at_level(lattice: Lattice, level: LevelResult, *, memory_checked: bool = False) -> Surface:
    """The closed surface |psi|^2 = level.level on `lattice`.

    Parameters
    ----------
    lattice : Lattice
        Sampled psi; with ``lattice.state`` set, psi and the normals at the vertices
        come from the state itself.
    level : LevelResult
        From :func:`level_for_fraction`.
    memory_checked : bool
        True when this step was budgeted together with the lattice before the lattice was
        made (:func:`~orbitalrender.lattice.memory.require_lattice_and_surface_memory`):
        the step is then not checked again on its own, which would count the lattice, now
        allocated, against the budget a second time and could refuse a resolution that
        the first check offered.

    Returns
    -------
    Surface

    Raises
    ------
    ValueError
        If no lattice point reaches the level (empty surface) or the superlevel set
        reaches the edge of the lattice (the surface would be cut open by the box).
    MemoryLimitError
        If the work arrays of this step would not fit in the memory free now.

    Warns
    -----
    LatticeResolutionWarning
        If the lattice step is coarser than the state's radial node spacing inside the
        surface (:mod:`orbitalrender.surface.resolution`).
    """
    if lattice.state is not None:
        warn_unresolved_nodes(lattice.state, level.fraction_requested, lattice.spacing_a0,
                              lattice.values.shape)
    if not memory_checked:
        require_surface_memory(lattice.shape, lattice.values.dtype)
    amplitude = math.sqrt(level.level)
    field, signed = _signed_field(lattice, amplitude)
    parts = []
    for sign in ((1.0, -1.0) if signed else (1.0,)):
        if sign < 0:
            np.negative(field, out=field)
        if _touches_boundary(field, amplitude):
            raise ValueError(
                f"the surface holding {level.fraction_requested:g} of the probability reaches the "
                "edge of the lattice and would be cut open; use a larger box")
        part = _march(field, amplitude, lattice)
        if part is not None:
            parts.append(part)
    del field
    if not parts:
        raise ValueError(f"no lattice point reaches the level for F = {level.fraction_requested:g}; "
                         "the surface is empty at this resolution (raise the resolution or F)")
    offsets = np.cumsum([0] + [len(p[0]) for p in parts[:-1]])
    verts = np.concatenate([p[0] for p in parts])
    faces = np.concatenate([p[1] + o for p, o in zip(parts, offsets)])
    lattice_normals = np.concatenate([p[2] for p in parts])
    norm = np.linalg.norm(lattice_normals, axis=1, keepdims=True)
    lattice_normals = lattice_normals / np.where(norm > 0, norm, 1.0)
    if not np.all(norm > 0):  # a flat spot of the lattice field: take the mesh normal there
        lattice_normals = np.where(norm > 0, lattice_normals, vertex_normals(verts, faces))
    if lattice.state is not None:
        verts, psi, normals = _exact_vertices(lattice.state, verts, level.level,
                                              min(lattice.spacing_a0), lattice_normals)
    else:
        psi, normals = _interpolated_psi(lattice, verts), lattice_normals
    return Surface(vertices_a0=verts, faces=faces, normals=normals, psi=psi, level=level.level,
                   fraction_requested=level.fraction_requested,
                   fraction_enclosed=level.fraction_enclosed, fraction_error=level.fraction_error,
                   lattice_shape=lattice.shape, spacing_a0=lattice.spacing_a0, state=lattice.state)


def surface_box(state: State, level: float, resolution: int = 128) -> Box | None:
    """The smallest cube about the centre of a one-centre state sure to hold {|psi|^2 >= level}.

    |psi| at distance r is at most sum_k |c_k| |R_k(r)| sqrt((2 l_k + 1) / (4 pi)), since
    |Y_l^m| <= sqrt((2l + 1) / (4 pi)) (Unsold's theorem, e.g. DLMF 14.30.9); the cube
    reaches the largest r where that bound reaches sqrt(level), plus two lattice
    spacings, so the surface is closed inside it and the lattice is spent where the
    surface is.  None for a state with several centres.

    Examples
    --------
    >>> import math
    >>> from orbitalrender.state.model import eigenstate
    >>> level = math.exp(-2 * 2.0) / math.pi  # 1s density at r = 2 a0
    >>> round(surface_box(eigenstate(1, 0, 0), level, resolution=101).half_width_a0, 3)  # 2 * 100/96
    2.083
    """
    if not state.is_single_centre:
        return None
    amplitude = math.sqrt(level)
    mu = state.reduced_mass_ratio

    def bound(r):
        return sum(abs(t.coefficient) * np.abs(radial_function(t.n, t.l, r, state.Z, mu))
                   * math.sqrt((2 * t.l + 1) / (4 * math.pi)) for t in state.terms)

    far = state.extent_a0()
    while float(np.max(bound(np.linspace(far, 2 * far, 64)))) >= amplitude:
        far *= 2.0
    r = np.linspace(0.0, 2 * far, _BOX_SCAN)
    above = np.flatnonzero(bound(r) >= amplitude)
    if above.size == 0:
        return None
    k = int(above[-1])
    reach = float(bracketed_root(lambda x: float(bound(x)) - amplitude, r[k], r[k + 1]))
    half = reach * (resolution - 1) / (resolution - 1 - 4)  # two spacings beyond the reach
    return Box(state.centres_a0[0], half)


def sample_for_surface(state: State, level: LevelResult, resolution: int = 128,
                       box: Box | None = None, dtype=np.complex64) -> Lattice:
    """The lattice :func:`extract_surface` meshes for `state` at `level`: in `box`, or by
    default in :func:`surface_box` (one centre) or :func:`default_box` (several).

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> from orbitalrender.surface.level import level_for_fraction
    >>> s = eigenstate(1, 0, 0)
    >>> lat = sample_for_surface(s, level_for_fraction(s, 0.9), resolution=33)
    >>> lat.shape, round(lat.extent_a0()[0][1], 3)  # 2.6612 a0 x 32/28: two spacings to spare
    ((33, 33, 33), 3.041)
    """
    resolution = check_resolution(resolution)
    if box is None:
        box = surface_box(state, level.level, resolution)
    return sample(state, resolution=resolution, box=box, dtype=dtype)


def extract_surface(source: State | Lattice, fraction: float, resolution: int = 128,
                    box: Box | None = None, dtype=np.complex64) -> Surface:
    """The closed surface that encloses probability `fraction`, psi exact at every vertex.

    Parameters
    ----------
    source : State or Lattice
        A state (sampled here with :func:`orbitalrender.lattice.sampler.sample`) or an
        already sampled lattice.  A lattice that knows its state gets the analytic level
        and exact vertex psi; a user field gets the lattice level and interpolated psi.
    fraction : float
        F in (0, 1): the surface is |psi|^2 = t with P(|psi|^2 >= t) = F.
    resolution : int
        Lattice points per axis when `source` is a state.
    box : Box, optional
        Lattice cube when `source` is a state.  By default, for a state with one centre,
        the smallest cube sure to hold the surface (:func:`surface_box`), so that all the
        lattice is spent on it; otherwise :func:`default_box`.
    dtype : numpy dtype
        Lattice precision when `source` is a state.

    Returns
    -------
    Surface
        Vertices in a0, outward faces and unit normals, psi at the vertices, the level
        and the enclosed fraction (computed by quadrature, not from the mesh).

    Raises
    ------
    ValueError
        For F outside (0, 1), an empty surface, or a surface cut by the edge of the box.
    MemoryLimitError
        If the lattice and the surface step together would not fit in the memory free
        now (checked before the lattice is allocated).

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> s = extract_surface(eigenstate(1, 0, 0), 0.9, resolution=32)
    >>> r = np.linalg.norm(s.vertices_a0, axis=1)      # the 90 % sphere: 2.6612 a0
    >>> bool(abs(r.mean() - 2.6612) < 0.03)
    True
    """
    fraction = check_fraction(fraction)
    if isinstance(source, State):
        resolution = check_resolution(resolution)
        # both steps are refused together, before the lattice is allocated
        require_lattice_and_surface_memory(resolution, dtype)
        level = level_for_fraction(source, fraction)
        return surface_at_level(sample_for_surface(source, level, resolution, box, dtype), level,
                                memory_checked=True)
    if isinstance(source, Lattice):
        if box is not None:
            raise ValueError("a box can only be given with a state; a lattice has its own")
        lattice = source
        # the level of a user field works on a full-size density too: refuse before it
        require_surface_memory(lattice.shape, lattice.values.dtype)
    else:
        raise TypeError(f"expected a State or a Lattice, got {type(source).__name__}")
    return surface_at_level(lattice, level_for_fraction(lattice, fraction))
