"""Picture step, planar cut: psi on a plane, coloured by phase, with nodal lines and the F contour.

A :class:`Plane` is ``n . r = offset`` with two in-plane unit axes (u, v) that
become the picture's horizontal and vertical axes.  :func:`cross_section`
evaluates psi on a square grid of pixel centres in that plane -- exactly, from
the state, for analytic sources; by trilinear interpolation for a user lattice
-- and :func:`section_figure` draws it:

* hue from the phase of psi (:mod:`orbitalrender.picture.colormap`), lightness
  from |psi|^2 (white where it vanishes, darker where it is large; linear, or
  logarithmic over a stated number of decades; see :func:`shade`);
* the contour |psi|^2 = t where t is the density level whose 3D superlevel set
  holds the fraction F (:func:`orbitalrender.surface.level.level_for_fraction`),
  i.e. the cut through the F surface -- not a contour holding F of the plane;
* nodal lines (see :func:`nodal_lines` for the method);
* the nuclei that lie in the plane, as small crosses;
* a phase legend and the shading scale beside the picture.

Lines are matplotlib vector artists, so SVG and PDF keep them as paths; the
coloured density is one embedded raster image.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import matplotlib.figure
import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.lines import Line2D
from scipy.ndimage import map_coordinates
from skimage.measure import find_contours

from ..lattice.grid import Lattice
from ..lattice.memory import require_bytes
from ..lattice.sampler import default_box
from ..state.model import State
from ..state.notation import pretty_label
from ..state.units import a0_to
from ..surface.level import level_for_fraction
from .colormap import PHASE_SCHEMES, linear_to_srgb, phase_to_rgb, real_rotation, srgb_to_linear
from .legend import draw_phase_legend, unit_label

__all__ = [
    "PLANE_NAMES",
    "DENSITY_SCALES",
    "MIN_PIXELS",
    "MAX_PIXELS",
    "Plane",
    "Section",
    "plane",
    "cross_section",
    "nodal_lines",
    "level_contour",
    "density_weight",
    "shade",
    "draw_section",
    "section_figure",
    "section_metadata",
]

PLANE_NAMES = ("xy", "xz", "yz")
DENSITY_SCALES = ("linear", "log")
#: Pixels per side accepted: below 16 no line can be resolved, above 4096 one section
#: holds more than 16 million exact psi evaluations (tens of seconds).
MIN_PIXELS, MAX_PIXELS = 16, 4096
#: Points of psi evaluated at once (temporary arrays of psi_nlm_xyz stay near 100 MB).
_CHUNK_POINTS = 1 << 20
#: Peak memory of a section and its picture per pixel: psi, density and weight, and the
#: float64 RGB arrays of the colour lookup and shading (tracemalloc peak about 200 B at
#: 1024 x 1024 px, drawing included; 320 leaves a margin).
_BYTES_PER_PIXEL = 320
#: psi counts as real on the plane (after one global phase) when its imaginary part is
#: below this fraction of max |psi| everywhere: far above float64 round-off of psi and
#: above the float32 round-off of a complex64 lattice (6e-8), far below any true phase.
_REAL_TOLERANCE = 1e-5
#: A point of a zero line of Re or Im is on a node when |psi| there is below this share of
#: |psi| at the corners of its pixel cell.  On a true node |psi| vanishes to first order
#: across the cell, on a zero of the real part alone it stays comparable to its corners;
#: 0.25 sits between the two (our choice; see nodal_lines).
_NODE_RATIO = 0.25
#: With exact psi: bisection steps on a pixel edge (2^-40 of a pixel, far below any
#: drawing precision) and the share of |psi| at the edge ends that |psi| at the zero
#: found may keep on a node (on a true node it is ~1e-12; where Re and Im only come
#: close it stays of order 1e-3 to 1).
_BISECTIONS = 40
_EXACT_NODE_RATIO = 1e-6
#: Nodal runs shorter than this many contour vertices are dropped (isolated zeros).
_MIN_RUN = 3
#: Magnitude of psi (a0^-3/2) in the region holding a state of principal number n is
#: about (Z mu / n^2)^(3/2) (normalisation over a volume of about (n^2 / Z mu)^3); a plane
#: whose largest |psi| is below this share of that is treated as a nodal plane.
_ZERO_SHARE = 1e-12
#: Shading (see shade): linear-light factor of the map colour at the densest pixels.
_DARKEST = 0.35
#: Dash pattern of nodal lines (offset, (on, off) in points).
_NODE_DASH = (0, (4.0, 2.0))
#: Neutral grey (sRGB) of the shading scale bar: about the lightness of the uniform map.
_NEUTRAL = (0.68, 0.68, 0.68)
#: The default window holds all but this share of every term's radial probability ...
_WINDOW_FRACTION = 0.99
#: ... times this margin.
_WINDOW_PADDING = 1.1


@dataclass(frozen=True)
class Plane:
    """The plane ``normal . r = offset_a0`` and its picture axes.

    Attributes
    ----------
    normal : tuple of float
        Unit normal.
    offset_a0 : float
        Signed distance of the plane from the origin along `normal`, a0.
    u, v : tuple of float
        Unit in-plane axes: the picture's horizontal and vertical directions.
    name : str
        ``"xy"``, ``"xz"``, ``"yz"`` or ``""`` for a plane given by its normal.
    """

    normal: tuple[float, float, float]
    offset_a0: float
    u: tuple[float, float, float]
    v: tuple[float, float, float]
    name: str = ""

    @property
    def axis_names(self) -> tuple[str, str]:
        """Names of the picture axes: e.g. ("x", "z") for the xz plane, else ("u", "v")."""
        return (self.name[0], self.name[1]) if self.name else ("u", "v")

    def point(self, s_a0, t_a0, origin_a0: Sequence[float]) -> tuple[np.ndarray, ...]:
        """Cartesian x, y, z (a0) of ``origin + s u + t v`` (broadcast over s and t)."""
        s, t = np.asarray(s_a0, dtype=float), np.asarray(t_a0, dtype=float)
        return tuple(origin_a0[i] + s * self.u[i] + t * self.v[i] for i in range(3))

    def distance_a0(self, point_a0: Sequence[float]) -> float:
        """Signed distance of a point from the plane, a0."""
        return float(np.dot(self.normal, point_a0) - self.offset_a0)

    def foot_a0(self, point_a0: Sequence[float]) -> tuple[float, float, float]:
        """The point of the plane nearest to `point_a0`."""
        d = self.distance_a0(point_a0)
        return tuple(float(p - d * nc) for p, nc in zip(point_a0, self.normal))

    def describe(self, tex: bool = True, units: str = "a0") -> str:
        """Short text for titles (matplotlib mathtext) or, with ``tex=False``, for messages,
        with the offset in `units`.

        Examples
        --------
        >>> plane("xz", 2).describe(tex=False)
        'xz plane, y = 2 a0'
        """
        unit = unit_label(units) if tex else units
        offset = self.offset_a0 * a0_to(units)
        if self.name:
            other = ({"x", "y", "z"} - set(self.name)).pop()
            return f"{self.name} plane, {other} = {offset:.4g} {unit}"
        n = ", ".join(f"{c:.3g}" for c in self.normal)
        return f"plane n = ({n}), n·r = {offset:.4g} {unit}"


def plane(spec: str | Sequence[float], offset_a0: float = 0.0) -> Plane:
    """A :class:`Plane` from a name ("xy", "xz", "yz") or a normal vector, and an offset.

    Parameters
    ----------
    spec : str or sequence of 3 floats
        A coordinate plane, or a normal (any length except zero).  For a name the
        offset is the coordinate not in it (``"xz"``, 1.5 -> the plane y = 1.5 a0) and
        the picture axes are the named ones.  For a normal n the vertical picture axis
        v is +z projected into the plane (+y when n is along z) and u = v x n, so that
        (u, v, n) is right-handed: the picture shows the plane as seen from the side n
        points to.
    offset_a0 : float
        Distance of the plane from the origin along the (unit) normal, a0.

    Examples
    --------
    >>> p = plane("xz", 1.5)
    >>> p.normal, p.u, p.v
    ((0.0, 1.0, 0.0), (1.0, 0.0, 0.0), (0.0, 0.0, 1.0))
    >>> q = plane((0, 2, 0))   # seen from +y: x points left
    >>> q.u, q.v
    ((-1.0, 0.0, 0.0), (0.0, 0.0, 1.0))
    """
    if not math.isfinite(offset_a0):
        raise ValueError(f"the plane offset must be finite, got {offset_a0}")
    if isinstance(spec, str):
        key = spec.strip().lower()
        axes = {"xy": ((0, 0, 1), (1, 0, 0), (0, 1, 0)), "xz": ((0, 1, 0), (1, 0, 0), (0, 0, 1)),
                "yz": ((1, 0, 0), (0, 1, 0), (0, 0, 1))}
        if key not in axes:
            raise ValueError(f"unknown plane {spec!r}: use one of {', '.join(PLANE_NAMES)} "
                             "or give a normal vector")
        n, u, v = (tuple(float(c) for c in a) for a in axes[key])
        return Plane(n, float(offset_a0), u, v, key)
    n = np.asarray(spec, dtype=float)
    if n.shape != (3,) or not np.all(np.isfinite(n)):
        raise ValueError(f"a plane normal needs three finite numbers, got {spec!r}")
    length = float(np.linalg.norm(n))
    if length == 0.0:
        raise ValueError("a plane normal cannot be the zero vector")
    n = n / length
    up = np.array([0.0, 0.0, 1.0]) if abs(n[2]) < 1.0 - 1e-12 else np.array([0.0, 1.0, 0.0])
    v = up - np.dot(up, n) * n
    v /= np.linalg.norm(v)
    u = np.cross(v, n)
    clean = tuple(tuple(float(c) + 0.0 for c in np.where(np.abs(a) < 1e-15, 0.0, a)) for a in (n, u, v))
    return Plane(clean[0], float(offset_a0), clean[1], clean[2], "")


@dataclass(frozen=True, eq=False)
class Section:
    """psi on a square grid of pixel centres of a plane.

    Attributes
    ----------
    psi : ndarray, complex128, (N, N)
        ``psi[j, i]`` at in-plane coordinates ``(u_a0[i], v_a0[j])``; NaN outside a
        user lattice.
    u_a0, v_a0 : ndarray, (N,)
        Pixel-centre coordinates along the picture axes, a0, relative to `centre_a0`.
    centre_a0 : tuple of float
        The 3D point at (u, v) = (0, 0).
    plane : Plane
    state : State or None
        The analytic state, None for a user field.
    exact : bool
        True when psi was evaluated from the state, False when interpolated.
    level : float or None
        Density (a0^-3) of the F surface, None when no fraction was asked for.
    fraction_requested, fraction_enclosed, fraction_error : float or None
        As in :class:`orbitalrender.surface.level.LevelResult`.
    level_method : str or None
        The quadrature that gave `level`.
    """

    psi: np.ndarray
    u_a0: np.ndarray
    v_a0: np.ndarray
    centre_a0: tuple[float, float, float]
    plane: Plane
    state: State | None
    exact: bool
    level: float | None = None
    fraction_requested: float | None = None
    fraction_enclosed: float | None = None
    fraction_error: float | None = None
    level_method: str | None = None

    @property
    def density(self) -> np.ndarray:
        """|psi|^2, a0^-3 (NaN outside a user lattice)."""
        return self.psi.real ** 2 + self.psi.imag ** 2

    @property
    def pixel_a0(self) -> float:
        """Pixel size, a0."""
        return float(self.u_a0[1] - self.u_a0[0])

    @property
    def half_width_a0(self) -> float:
        """Half the side of the square shown (pixel edges), a0."""
        return float(-self.u_a0[0] + 0.5 * self.pixel_a0)

    @property
    def rotation(self) -> complex:
        """Global phase u of the section: 1 when psi is already real here (real orbitals keep
        their conventional sign), else :func:`real_rotation` of the finite values."""
        finite = self.psi[np.isfinite(self.psi)]
        if not finite.size or np.max(np.abs(finite.imag)) <= _REAL_TOLERANCE * np.max(np.abs(finite)):
            return 1.0 + 0.0j
        return real_rotation(finite)

    @property
    def signed(self) -> np.ndarray | None:
        """The real field psi * conj(rotation) when psi is real on the plane up to one
        global phase (real states; eigenstates on planes containing z), else None."""
        rotated = self.psi * np.conj(self.rotation)
        finite = np.isfinite(rotated)
        peak = float(np.max(np.abs(rotated[finite]))) if finite.any() else 0.0
        if peak == 0.0 or np.max(np.abs(rotated.imag[finite])) <= _REAL_TOLERANCE * peak:
            return rotated.real
        return None

    @property
    def is_nodal_plane(self) -> bool:
        """True when psi vanishes on the whole plane (e.g. 2p_z on the xy plane)."""
        finite = self.psi[np.isfinite(self.psi)]
        peak = float(np.max(np.abs(finite))) if finite.size else 0.0
        if self.state is None:
            return peak == 0.0
        typical = (self.state.Z * self.state.reduced_mass_ratio / self.state.max_n ** 2) ** 1.5
        return peak <= _ZERO_SHARE * typical

    def centres_in_plane(self) -> list[tuple[float, float]]:
        """(u, v) in a0 of the state's nuclei lying within half a pixel of the plane."""
        if self.state is None:
            return []
        out = []
        for c in self.state.centres_a0:
            if abs(self.plane.distance_a0(c)) <= 0.5 * self.pixel_a0:
                d = np.asarray(c) - np.asarray(self.centre_a0)
                out.append((float(np.dot(d, self.plane.u)), float(np.dot(d, self.plane.v))))
        return out


def _box_reach(plane_: Plane, half_widths_a0: Sequence[float]) -> float:
    """How far (a0) an axis-aligned box of these half-widths reaches from its middle along the normal."""
    return float(np.dot(np.abs(plane_.normal), half_widths_a0))


def _check_pixels(pixels: int) -> int:
    if isinstance(pixels, bool) or int(pixels) != pixels or not MIN_PIXELS <= pixels <= MAX_PIXELS:
        raise ValueError(f"pixels per side must be a whole number from {MIN_PIXELS} to {MAX_PIXELS}, "
                         f"got {pixels}")
    return int(pixels)


def _interpolate(lattice: Lattice, x, y, z) -> np.ndarray:
    """Trilinear interpolation of a lattice at points (a0); NaN outside it.

    Linear interpolation keeps every value between its neighbours, so it puts no
    sign change where the samples have none.
    """
    idx = [(np.asarray(c) - o) / h for c, o, h in zip((x, y, z), lattice.origin_a0, lattice.spacing_a0)]
    shape = lattice.shape
    inside = np.ones(np.shape(idx[0]), dtype=bool)
    for k in range(3):
        inside &= (idx[k] >= -1e-9) & (idx[k] <= shape[k] - 1 + 1e-9)
    coords = np.stack([np.clip(i, 0, s - 1) for i, s in zip(idx, shape)])
    values = lattice.values
    out = (map_coordinates(values.real.astype(float), coords, order=1)
           + 1j * map_coordinates(values.imag.astype(float), coords, order=1))
    out[~inside] = np.nan + 1j * np.nan
    return out


def cross_section(source: State | Lattice, plane_: Plane, half_width_a0: float | None = None,
                  pixels: int = 400, fraction: float | None = 0.9) -> Section:
    """psi on a square window of `plane_` and the density level of the F surface.

    Parameters
    ----------
    source : State or Lattice
        An analytic state (psi evaluated exactly), or a lattice: one that knows its
        state is treated as that state; a user field is interpolated trilinearly.
    plane_ : Plane
        From :func:`plane`.
    half_width_a0 : float, optional
        Half the side of the square window, a0.  Default: 1.1 times the radius holding
        99 % of the radial probability of the widest term (plus its centre offset), as
        :func:`orbitalrender.lattice.sampler.default_box` computes it; for a user
        lattice, its largest half-width.
    pixels : int
        Pixels per side, 16 to 4096.
    fraction : float or None
        F for the enclosing contour; None for none.

    Returns
    -------
    Section
        The window is centred on the point of the plane nearest to the middle of the
        state's centres (or of the lattice).

    Raises
    ------
    ValueError
        For a plane that misses the state's box or the lattice, a bad size, or F
        outside (0, 1).

    Examples
    --------
    >>> from orbitalrender.state.model import real_orbital
    >>> s = cross_section(real_orbital(2, 1, 0), plane("xz"), 10.0, pixels=32, fraction=None)
    >>> s.psi.shape, round(s.half_width_a0, 6)
    ((32, 32), 10.0)
    """
    pixels = _check_pixels(pixels)
    state = source if isinstance(source, State) else source.state
    if state is not None:
        box = default_box(state)
        middle, half_widths = box.centre_a0, (box.half_width_a0,) * 3
        what = "the region holding all but 1e-4 of the state"
        window = default_box(state, _WINDOW_FRACTION, _WINDOW_PADDING).half_width_a0
    else:
        middle = tuple(0.5 * (lo + hi) for lo, hi in source.extent_a0())
        half_widths = tuple(0.5 * (hi - lo) for lo, hi in source.extent_a0())
        what = "the lattice"
        window = max(half_widths)
    distance = plane_.distance_a0(middle)
    if abs(distance) > _box_reach(plane_, half_widths) * (1 + 1e-12):
        raise ValueError(f"the plane ({plane_.describe(tex=False)}) misses {what}: it lies "
                         f"{abs(distance):.4g} a0 from its middle")
    if half_width_a0 is None:
        half_width_a0 = window
    if not (half_width_a0 > 0 and math.isfinite(half_width_a0)):
        raise ValueError(f"the section half-width must be a positive number of a0, got {half_width_a0}")
    centre = plane_.foot_a0(middle)
    step = 2.0 * half_width_a0 / pixels
    coords = -half_width_a0 + step * (np.arange(pixels) + 0.5)
    require_bytes(pixels * pixels * _BYTES_PER_PIXEL, f"a section of {pixels} x {pixels} pixels")
    psi = np.empty((pixels, pixels), dtype=complex)
    rows = max(1, _CHUNK_POINTS // pixels)
    for start in range(0, pixels, rows):  # in blocks of rows: bounded temporary memory
        x, y, z = plane_.point(coords[None, :], coords[start:start + rows, None], centre)
        psi[start:start + rows] = state.psi(x, y, z) if state is not None else _interpolate(source, x, y, z)
    if state is None and not np.isfinite(psi).any():
        raise ValueError("the section window does not overlap the lattice")
    extra = {}
    if fraction is not None:
        result = level_for_fraction(source, fraction)
        extra = {"level": result.level, "fraction_requested": result.fraction_requested,
                 "fraction_enclosed": result.fraction_enclosed,
                 "fraction_error": result.fraction_error, "level_method": result.method}
    return Section(psi, coords.copy(), coords.copy(), centre, plane_, state, state is not None, **extra)


# -- lines --------------------------------------------------------------------------------
def _to_a0(section: Section, rows_cols: np.ndarray) -> np.ndarray:
    """Contour vertices (row, col) in pixel indices -> (u, v) in a0."""
    h = section.pixel_a0
    return np.column_stack([section.u_a0[0] + h * rows_cols[:, 1], section.v_a0[0] + h * rows_cols[:, 0]])


def _bilinear(field: np.ndarray, rows_cols: np.ndarray) -> np.ndarray:
    """`field` (real or complex) at fractional (row, col) positions."""
    r, c = rows_cols[:, 0], rows_cols[:, 1]
    r0 = np.clip(np.floor(r).astype(int), 0, field.shape[0] - 2)
    c0 = np.clip(np.floor(c).astype(int), 0, field.shape[1] - 2)
    fr, fc = r - r0, c - c0
    return ((1 - fr) * (1 - fc) * field[r0, c0] + (1 - fr) * fc * field[r0, c0 + 1]
            + fr * (1 - fc) * field[r0 + 1, c0] + fr * fc * field[r0 + 1, c0 + 1])


def _corner_peak(field: np.ndarray, rows_cols: np.ndarray) -> np.ndarray:
    """Largest |field| at the four grid points around each fractional position."""
    r0 = np.clip(np.floor(rows_cols[:, 0]).astype(int), 0, field.shape[0] - 2)
    c0 = np.clip(np.floor(rows_cols[:, 1]).astype(int), 0, field.shape[1] - 2)
    a = np.abs(field)
    return np.maximum.reduce([a[r0, c0], a[r0, c0 + 1], a[r0 + 1, c0], a[r0 + 1, c0 + 1]])


def _runs(line: np.ndarray, keep: np.ndarray) -> list[np.ndarray]:
    """The pieces of a polyline where `keep` holds, each of at least _MIN_RUN vertices."""
    pieces, start = [], None
    for i, k in enumerate(np.append(keep, False)):
        if k and start is None:
            start = i
        elif not k and start is not None:
            if i - start >= _MIN_RUN:
                pieces.append(line[start:i])
            start = None
    return pieces


def _zero_lines(field: np.ndarray) -> list[np.ndarray]:
    """Zero contours (row, col) of a real field, NaN (outside a lattice) kept out."""
    if not np.any(field > 0) or not np.any(field < 0):
        return []
    mask = np.isfinite(field)
    return find_contours(np.where(mask, field, 0.0), 0.0, mask=None if mask.all() else mask)


def _edge_ends(rows_cols: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The two grid points (row, col) of the pixel-centre edge each contour vertex lies on."""
    r, c = rows_cols[:, 0], rows_cols[:, 1]
    on_row = np.abs(r - np.round(r)) < 1e-9
    a = np.where(on_row[:, None], np.column_stack([np.round(r), np.floor(c)]),
                 np.column_stack([np.floor(r), np.round(c)]))
    b = a + np.where(on_row[:, None], [0.0, 1.0], [1.0, 0.0])
    return a, b


def _exact_psi(section: Section, rows_cols: np.ndarray) -> np.ndarray:
    """psi of the section's state at fractional pixel positions, exactly."""
    uv = _to_a0(section, rows_cols)
    return section.state.psi(*section.plane.point(uv[:, 0], uv[:, 1], section.centre_a0))


def _exact_node_test(section: Section, line: np.ndarray, use_real: bool) -> tuple[np.ndarray, np.ndarray]:
    """For each vertex of a zero line of Re or Im (after the section's rotation): find the zero
    of that part on its grid edge by bisection on the exact psi, and test whether |psi| vanishes
    there too.  Returns (on_node mask, the refined vertices in pixel coordinates)."""
    a, b = _edge_ends(line)
    u = np.conj(section.rotation)

    def part(t):
        v = _exact_psi(section, a + t[:, None] * (b - a)) * u
        return v.real if use_real else v.imag

    lo, hi = np.zeros(len(line)), np.ones(len(line))
    f_lo = part(lo)
    for _ in range(_BISECTIONS):
        mid = 0.5 * (lo + hi)
        f_mid = part(mid)
        same = np.sign(f_mid) == np.sign(f_lo)
        lo, f_lo = np.where(same, mid, lo), np.where(same, f_mid, f_lo)
        hi = np.where(same, hi, mid)
    t = 0.5 * (lo + hi)
    refined = a + t[:, None] * (b - a)
    scale = np.maximum(np.abs(_exact_psi(section, a)), np.abs(_exact_psi(section, b)))
    on_node = np.abs(_exact_psi(section, refined)) <= _EXACT_NODE_RATIO * scale
    return on_node, refined


def nodal_lines(section: Section) -> list[np.ndarray]:
    """Lines of the plane where psi = 0, as (K, 2) arrays of (u, v) in a0.

    Notes
    -----
    Where psi is real on the plane up to one global phase u (real states, and
    eigenstates |n l m> on any plane containing the z axis, where e^{i m phi} is
    +-1), the nodal lines are the zero contour of the signed field Re(psi u*)
    (marching squares, :func:`skimage.measure.find_contours`, linear between pixel
    centres).

    Otherwise psi is genuinely complex on the plane and a nodal line is where
    psi = f e^{i chi} has f changing sign with a smooth chi: both Re and Im vanish
    there.  The zero contours of Re(psi u*) and Im(psi u*) are traced and, of the
    two parts, only the one that crosses zero more steeply is used at each vertex
    (Re when cos^2 chi >= 1/2, read from psi^2), so each node is traced once.  A
    vertex is kept when |psi| vanishes there too:

    * for an analytic state, the zero of that part on the vertex's pixel edge is found
      by bisection on the exact psi, and |psi| there must be below 1e-6 of |psi| at the
      edge ends (on a node it is zero to the bisection tolerance; where Re and Im merely
      come close, as where a small term keeps psi from vanishing, it is not);
    * for a user lattice, |psi| interpolated at the vertex must be below 0.25 of |psi|
      at the corners of its pixel cell (on a node |psi| falls to zero across the cell;
      on a zero of one part alone it stays comparable), which cannot tell a node from a
      near-node narrower than a pixel.

    Isolated zeros (vortex points, such as the z axis piercing the xy plane for
    m != 0) are points, not lines, and are not drawn.
    """
    if section.is_nodal_plane:
        return []
    signed = section.signed
    if signed is not None:
        return [_to_a0(section, line) for line in _zero_lines(signed)]
    rotated = section.psi * np.conj(section.rotation)
    squared = rotated * rotated
    out = []
    for part, use_real in ((rotated.real, True), (rotated.imag, False)):
        for line in _zero_lines(part):
            steeper = (_bilinear(squared, line).real >= 0.0) == use_real
            if section.exact:
                on_node, line = _exact_node_test(section, line, use_real)
            else:
                on_node = np.abs(_bilinear(rotated, line)) <= _NODE_RATIO * _corner_peak(rotated, line)
            out.extend(_to_a0(section, piece) for piece in _runs(line, on_node & steeper))
    return out


def level_contour(section: Section) -> list[np.ndarray]:
    """The cut through the F surface: contour |psi|^2 = level, (K, 2) arrays of (u, v) in a0."""
    if section.level is None:
        return []
    density = section.density
    mask = np.isfinite(density)
    if not np.any(density[mask] >= section.level):
        return []
    lines = find_contours(np.where(mask, density, 0.0), section.level, mask=None if mask.all() else mask)
    return [_to_a0(section, line) for line in lines]


# -- drawing ------------------------------------------------------------------------------
def density_weight(density: np.ndarray, scale: str = "linear", decades: float = 3.0) -> np.ndarray:
    """Opacity in [0, 1] from |psi|^2: ``rho / max`` (linear) or
    ``1 + log10(rho / max) / decades`` clipped at 0 (log); NaN -> 0.

    Examples
    --------
    >>> import numpy as np
    >>> density_weight(np.array([1.0, 0.1, 0.001, 0.0]), "log", 3).round(6).tolist()
    [1.0, 0.666667, 0.0, 0.0]
    """
    if scale not in DENSITY_SCALES:
        raise ValueError(f"unknown density scale {scale!r}: use one of {', '.join(DENSITY_SCALES)}")
    if not (decades > 0 and math.isfinite(decades)):
        raise ValueError(f"the logarithmic range needs a positive number of decades, got {decades}")
    rho = np.where(np.isfinite(density), density, 0.0)
    peak = float(rho.max()) if rho.size else 0.0
    if peak <= 0.0:
        return np.zeros_like(rho)
    if scale == "linear":
        return np.clip(rho / peak, 0.0, 1.0)
    with np.errstate(divide="ignore"):
        return np.clip(1.0 + np.log10(rho / peak) / decades, 0.0, 1.0)


def shade(rgb: np.ndarray, weight: np.ndarray) -> np.ndarray:
    """Map colours `rgb` (sRGB) to paper by a weight w in [0, 1]: white at w = 0, through the
    map colour, to the map colour at ``_DARKEST`` of its linear-light intensity at w = 1.

    In linear light, ``out = (1 - w)^2 white + 2 w (1 - w) c + w^2 k c`` (a quadratic
    Bezier curve from white through c to k c): it mixes with white and scales, so
    the hue is kept; lightness falls smoothly and monotonically with w (no band where
    the full colour is reached); the lightness differences the map itself carries
    (the cvd scheme) are kept as ratios.  k = 0.35 is our choice: the densest pixels
    of the uniform map come out near L* = 50, well apart from white and not muddy.

    Examples
    --------
    >>> import numpy as np
    >>> c = np.array([0.2, 0.5, 0.8])
    >>> shade(c, np.array(0.0)).round(12).tolist()
    [1.0, 1.0, 1.0]
    """
    lin = srgb_to_linear(np.asarray(rgb, dtype=float))
    w = np.clip(np.asarray(weight, dtype=float), 0.0, 1.0)[..., None]
    out = (1.0 - w) ** 2 + (2.0 * w * (1.0 - w) + _DARKEST * w * w) * lin
    return linear_to_srgb(out)


def _section_rgb(section: Section, scheme: str, scale: str, decades: float) -> np.ndarray:
    if scheme == "sign":
        signed = section.signed
        if signed is None:
            raise ValueError("the sign map needs psi real on the plane (up to one global phase); "
                             "this section is complex: use the uniform or cvd map")
        rgb = phase_to_rgb(np.where(signed < 0, np.pi, 0.0), "sign")
    elif scheme in PHASE_SCHEMES:
        rgb = phase_to_rgb(np.angle(np.nan_to_num(section.psi)), scheme)
    else:
        raise ValueError(f"unknown phase colour scheme {scheme!r}: use one of {', '.join(PHASE_SCHEMES)}")
    return shade(rgb, density_weight(section.density, scale, decades))


def _draw_weight_scale(ax, scale: str, decades: float, fontsize: float) -> None:
    """A vertical bar showing how |psi|^2 / max sets the shading (on a neutral grey)."""
    ramp = np.linspace(0.0, 1.0, 256)
    ax.imshow(shade(np.full((256, 1, 3), _NEUTRAL), ramp[:, None]), origin="lower", extent=(0, 1, 0, 1),
              aspect="auto", interpolation="nearest")
    ax.set_xticks([])
    ax.yaxis.tick_right()
    ax.yaxis.set_label_position("right")
    if scale == "linear":
        ax.set_yticks([0.0, 0.5, 1.0], ["0", "0.5", "1"])
        ax.set_ylabel(r"$|\psi|^2$ / max", fontsize=fontsize)
    else:
        whole = int(math.floor(decades))
        ticks = [1.0 - k / decades for k in range(whole + 1)]
        ax.set_yticks(ticks, [f"$10^{{{-k}}}$" if k else "1" for k in range(whole + 1)])
        ax.set_ylabel(r"$|\psi|^2$ / max (log)", fontsize=fontsize)
    ax.tick_params(labelsize=fontsize, length=2)
    for spine in ax.spines.values():
        spine.set_linewidth(0.5)


def draw_section(ax, section: Section, scheme: str = "uniform", scale: str = "linear",
                 decades: float = 3.0, units: str = "a0", nodes: bool = True,
                 fontsize: float = 9.0) -> list[Line2D]:
    """Draw `section` into `ax`: the coloured density, the F contour, nodal lines, nuclei.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    section : Section
    scheme : {"uniform", "cvd", "sign"}
        Phase map; ``"sign"`` only where psi is real on the plane.
    scale : {"linear", "log"}
        Opacity from |psi|^2 / max, linear or logarithmic over `decades`.
    decades : float
        Dynamic range of the logarithmic scale.
    units : {"a0", "angstrom", "nm", "pm"}
        Length unit of the axes.
    nodes : bool
        Draw the nodal lines.
    fontsize : float
        Label size in points.

    Returns
    -------
    list of Line2D
        Proxy artists for a line legend (F contour, nodal line, nucleus), as drawn.
    """
    k = a0_to(units)
    half = section.half_width_a0 * k
    extent = (-half, half, -half, half)
    ax.set_facecolor("white")
    ax.imshow(_section_rgb(section, scheme, scale, decades), origin="lower", extent=extent,
              interpolation="antialiased", zorder=0)
    proxies = []
    lines = level_contour(section)
    if lines:
        ax.add_collection(LineCollection([line * k for line in lines], colors="black",
                                         linewidths=1.1, zorder=3, gid="enclosing-contour"))
        pct = f"{100 * section.fraction_requested:.4g} %"
        proxies.append(Line2D([], [], color="black", lw=1.1, label=f"{pct} surface"))
    lines = nodal_lines(section) if nodes else []
    if lines:
        ax.add_collection(LineCollection([line * k for line in lines], colors="0.2", linewidths=0.8,
                                         linestyles=[_NODE_DASH], zorder=2, gid="nodal-lines"))
        proxies.append(Line2D([], [], color="0.2", lw=0.8, ls=_NODE_DASH, label="nodal line"))
    centres = section.centres_in_plane()
    if centres:
        cu, cv = np.array(centres).T * k
        ax.plot(cu, cv, linestyle="none", marker="+", color="black", markersize=6, mew=1.0, zorder=4)
        proxies.append(Line2D([], [], linestyle="none", marker="+", color="black", markersize=6,
                              mew=1.0, label="nucleus"))
    if section.is_nodal_plane:
        ax.text(0.5, 0.5, r"$\psi = 0$ on this plane" "\n(a nodal plane)", transform=ax.transAxes,
                ha="center", va="center", fontsize=fontsize, color="0.3")
    a, b = section.plane.axis_names
    unit = unit_label(units)
    ax.set_xlabel(f"${a}$ ({unit})", fontsize=fontsize)
    ax.set_ylabel(f"${b}$ ({unit})", fontsize=fontsize)
    ax.set_xlim(-half, half)
    ax.set_ylim(-half, half)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=fontsize - 1, direction="out", length=3)
    return proxies


def _vector_text(values: Sequence[float]) -> str:
    return "(" + ", ".join(f"{c:.3g}" for c in values) + ")"


def section_figure(section: Section, scheme: str = "uniform", scale: str = "linear",
                   decades: float = 3.0, units: str = "a0", nodes: bool = True,
                   title: str | None = None, width_in: float = 6.4,
                   label: str | None = None) -> matplotlib.figure.Figure:
    """A complete figure of `section`: the picture, with phase legend, opacity scale and a
    legend of the lines to its right.

    Parameters are those of :func:`draw_section`; `title` defaults to `label` (default
    the state label, or "user field"), the time if it is not 0, and the plane;
    `width_in` is the figure width in inches (height 0.75 of it).

    Examples
    --------
    >>> from orbitalrender.state.model import real_orbital
    >>> s = cross_section(real_orbital(2, 1, 0, label="2pz"), plane("xz"), 8.0, pixels=32,
    ...                   fraction=None)
    >>> fig = section_figure(s)
    >>> fig.axes[0].get_xlabel()
    '$x$ ($a_0$)'
    """
    fig = matplotlib.figure.Figure(figsize=(width_in, 0.75 * width_in))
    grid = fig.add_gridspec(3, 2, width_ratios=(4.0, 1.25), height_ratios=(1.1, 1.0, 0.8),
                            left=0.1, right=0.95, bottom=0.1, top=0.88, wspace=0.12, hspace=0.3)
    ax = fig.add_subplot(grid[:, 0])
    proxies = draw_section(ax, section, scheme, scale, decades, units, nodes)
    state = section.state
    if label is None:
        label = pretty_label(state.label) if state is not None and state.label else "user field"
    if state is not None and state.time_au != 0.0:
        label += f" at t = {state.time_au:.4g} au"
    if title is None:
        title = f"{label}: {section.plane.describe(units=units)}"
    ax.set_title(title, fontsize=10)
    draw_phase_legend(fig.add_subplot(grid[0, 1]), scheme, fontsize=8)
    bar_slot = grid[1, 1].subgridspec(1, 3, width_ratios=(1.0, 0.35, 1.0))
    _draw_weight_scale(fig.add_subplot(bar_slot[0, 1]), scale, decades, fontsize=7)
    lax = fig.add_subplot(grid[2, 1])
    lax.set_axis_off()
    if proxies:
        lax.legend(handles=proxies, loc="upper center", fontsize=7, frameon=False, handlelength=2.2)
    if not section.plane.name:
        lax.text(0.5, 0.0, f"u = {_vector_text(section.plane.u)}\nv = {_vector_text(section.plane.v)}",
                 transform=lax.transAxes, fontsize=7, color="0.3", ha="center", va="bottom")
    return fig


def section_metadata(section: Section, scheme: str = "uniform", scale: str = "linear",
                     decades: float = 3.0, units: str = "a0", nodes: bool = True,
                     **extra) -> dict:
    """The metadata of a section figure (:func:`orbitalrender.picture.output.figure_metadata`
    keys plus the plane, window, level method, nodal line count and drawing options).

    Parameters are those given to :func:`section_figure`; `extra` is added as is.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> s = cross_section(eigenstate(2, 0, 0), plane("xy"), 6.0, pixels=32, fraction=None)
    >>> md = section_metadata(s)
    >>> md["plane"], md["nodal_lines"], md["resolution"]
    ('xy', 1, 32)
    """
    from .output import figure_metadata

    where = section.plane
    return figure_metadata(
        section.state, section.fraction_requested, section.level, len(section.u_a0), command="section",
        plane=where.name or None, normal=where.normal, offset_a0=where.offset_a0, u_axis=where.u,
        v_axis=where.v, centre_a0=section.centre_a0, half_width_a0=section.half_width_a0,
        pixel_a0=section.pixel_a0, exact=section.exact, fraction_enclosed=section.fraction_enclosed,
        fraction_error=section.fraction_error, level_method=section.level_method,
        nodal_lines=len(nodal_lines(section)) if nodes else 0, nodal_plane=section.is_nodal_plane,
        scale=scale, decades=decades if scale == "log" else None, phase_map=scheme, units=units, **extra)
