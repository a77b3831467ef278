"""The Surface: a triangle mesh in a0 with psi known exactly at every vertex."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..state.model import State

__all__ = ["Surface"]


@dataclass(frozen=True, eq=False)
class Surface:
    """A density isosurface |psi|^2 = level.

    Attributes
    ----------
    vertices_a0 : ndarray, float64, (V, 3)
        Vertex positions in a0.
    faces : ndarray, int64, (F, 3)
        Triangles, counter-clockwise seen from outside (normals point outward,
        toward lower density).
    normals : ndarray, float64, (V, 3)
        Unit outward vertex normals.
    psi : ndarray, complex128, (V,)
        psi at each vertex: evaluated exactly for an analytic state, interpolated
        for a user field.
    level : float
        The density level, a0^-3.
    fraction_requested : float or None
        F asked for.
    fraction_enclosed : float or None
        Probability inside {|psi|^2 >= level}, computed independently of the mesh.
    fraction_error : float or None
        Estimated uncertainty of `fraction_enclosed` (user fields), else None.
    lattice_shape : tuple of int
        Shape of the lattice the mesh came from.
    spacing_a0 : tuple of float
        Its spacing.
    state : State or None
        The analytic state, None for a user field.
    """

    vertices_a0: np.ndarray
    faces: np.ndarray
    normals: np.ndarray
    psi: np.ndarray
    level: float
    fraction_requested: float | None
    fraction_enclosed: float | None
    fraction_error: float | None
    lattice_shape: tuple[int, int, int]
    spacing_a0: tuple[float, float, float]
    state: State | None = None

    @property
    def phase(self) -> np.ndarray:
        """arg psi at each vertex, radians in (-pi, pi]."""
        return np.angle(self.psi)

    @property
    def magnitude(self) -> np.ndarray:
        """|psi| at each vertex, a0^-3/2."""
        return np.abs(self.psi)
