"""Picture step, section sampling: psi on a square window of a plane, and the density level of the F surface.

:func:`cross_section` evaluates psi on a square grid of pixel centres in a
:class:`~orbitalrender.picture.plane.Plane` -- exactly, from the state, for
analytic sources; by trilinear interpolation for a user lattice -- and finds the
density level t whose 3D superlevel set holds the fraction F
(:func:`orbitalrender.surface.level.level_for_fraction`), so that the contour
|psi|^2 = t is the cut through the F surface, not a contour holding F of the
plane.  Lines are found by :mod:`orbitalrender.picture.nodal` and drawn by
:mod:`orbitalrender.picture.section_figure`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.ndimage import map_coordinates

from ..lattice.grid import Lattice
from ..lattice.memory import require_bytes
from ..lattice.sampler import default_box
from ..state.model import State
from ..state.phase import nearest_real_rotation, real_rotation
from ..surface.level import level_for_fraction
from .plane import Plane, check_pixels

__all__ = ["Section", "cross_section"]

#: Points of psi evaluated at once (temporary arrays of psi_nlm_xyz stay near 100 MB).
_CHUNK_POINTS = 1 << 20
#: Peak memory of a section and its picture per pixel: psi, density and weight, and the
#: float64 RGB arrays of the colour lookup and shading (tracemalloc peak about 200 B at
#: 1024 x 1024 px, drawing included; 320 leaves a margin).
_BYTES_PER_PIXEL = 320
#: Magnitude of psi (a0^-3/2) in the region holding a state of principal number n is
#: about (Z mu / n^2)^(3/2) (normalisation over a volume of about (n^2 / Z mu)^3); a plane
#: whose largest |psi| is below this share of that is treated as a nodal plane.
_ZERO_SHARE = 1e-12
#: The default window holds all but this share of every term's radial probability ...
_WINDOW_FRACTION = 0.99
#: ... times this margin.
_WINDOW_PADDING = 1.1


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
        """The global phase u that makes psi on this plane as real as it can be
        (:func:`orbitalrender.state.phase.nearest_real_rotation`); the nodal lines are
        traced on psi * conj(u)."""
        return nearest_real_rotation(self.psi)

    @property
    def signed(self) -> np.ndarray | None:
        """The real field psi * conj(u) when psi on this plane is real up to one global phase
        u (:func:`orbitalrender.state.phase.real_rotation`: real states, and eigenstates on
        planes containing z), else None."""
        u = real_rotation(self.psi)
        return None if u is None else (self.psi * np.conj(u)).real

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


def cross_section(source: State | Lattice, plane_: Plane, *, half_width_a0: float | None = None,
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
    >>> from orbitalrender.picture.plane import plane
    >>> from orbitalrender.state.model import real_orbital
    >>> s = cross_section(real_orbital(2, 1, 0), plane("xz"), half_width_a0=10.0, pixels=32, fraction=None)
    >>> s.psi.shape, round(s.half_width_a0, 6)
    ((32, 32), 10.0)
    """
    pixels = check_pixels(pixels)
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


