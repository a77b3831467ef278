"""The Lattice: a complex field on a regular 3D grid, with its spacing, origin and source.

Index order is (x, y, z): ``values[i, j, k]`` is psi at
``origin + (i * dx, j * dy, k * dz)``, all lengths in a0.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..state.model import State

__all__ = ["Lattice", "Box"]


@dataclass(frozen=True)
class Box:
    """An axis-aligned cube: centre and half-width, in a0."""

    centre_a0: tuple[float, float, float]
    half_width_a0: float

    def __post_init__(self) -> None:
        if not (self.half_width_a0 > 0 and np.isfinite(self.half_width_a0)):
            raise ValueError(f"the box half-width must be positive, got {self.half_width_a0}")
        object.__setattr__(self, "centre_a0", tuple(float(c) for c in self.centre_a0))


@dataclass(frozen=True, eq=False)
class Lattice:
    """psi sampled on a regular grid.

    Attributes
    ----------
    values : ndarray, complex, shape (Nx, Ny, Nz)
        psi in a0^-3/2 (any consistent unit for a user field).
    origin_a0 : tuple of float
        Coordinates of ``values[0, 0, 0]``.
    spacing_a0 : tuple of float
        Grid steps along x, y, z.
    state : State or None
        The analytic state the values came from; None for a user field.
    """

    values: np.ndarray
    origin_a0: tuple[float, float, float]
    spacing_a0: tuple[float, float, float]
    state: State | None = None

    def __post_init__(self) -> None:
        if self.values.ndim != 3:
            raise ValueError(f"a lattice needs a 3D array, got shape {self.values.shape}")
        if min(self.values.shape) < 2:
            raise ValueError(f"a lattice needs at least 2 points per axis, got {self.values.shape}")
        spacing = tuple(float(s) for s in np.broadcast_to(self.spacing_a0, (3,)))
        if not all(s > 0 and np.isfinite(s) for s in spacing):
            raise ValueError(f"lattice spacing must be positive, got {spacing}")
        object.__setattr__(self, "spacing_a0", spacing)
        object.__setattr__(self, "origin_a0", tuple(float(o) for o in self.origin_a0))

    @property
    def shape(self) -> tuple[int, int, int]:
        return tuple(self.values.shape)

    @property
    def voxel_volume_a0_3(self) -> float:
        return float(np.prod(self.spacing_a0))

    def axes(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """1D coordinate arrays (a0) along x, y and z."""
        return tuple(o + h * np.arange(n) for o, h, n in
                     zip(self.origin_a0, self.spacing_a0, self.values.shape))

    def density(self) -> np.ndarray:
        """|psi|^2 as float of the same precision as the values."""
        v = self.values
        return v.real * v.real + v.imag * v.imag

    def extent_a0(self) -> tuple[tuple[float, float], ...]:
        """(min, max) coordinate along each axis."""
        return tuple((o, o + h * (n - 1)) for o, h, n in
                     zip(self.origin_a0, self.spacing_a0, self.values.shape))
