"""Mesh step, split bodies: a surface divided into separate bodies by the sign or the phase of psi.

:func:`split_by_sign` gives the positive and negative bodies of a real state (each
closed component has one sign); :func:`phase_band_surfaces` cuts {|psi|^2 >= level}
into closed bodies by bands of arg psi, for printing in several colours.
"""

from __future__ import annotations

import math

import numpy as np
import trimesh

from ..errors import UserInputError
from ..lattice.grid import Lattice
from ..state.model import State
from ..state.phase import sign_rotation
from ..surface.extract import _interpolated_psi, _march, _touches_boundary, vertex_normals
from ..surface.model import Surface
from .bodies import face_components, submesh

__all__ = ["split_by_sign", "phase_band_surfaces"]


def split_by_sign(mesh: trimesh.Trimesh, psi: np.ndarray, *,
                  state: State | None = None) -> dict[str, trimesh.Trimesh]:
    """Bodies of a real state's surface by the sign of psi: ``{"positive": ..., "negative": ...}``.

    Each closed component has one sign (psi cannot change sign on a connected piece of
    {|psi|^2 >= level} without passing through zero); the global phase is removed
    first by the one rule of :func:`orbitalrender.state.phase.sign_rotation`, so the
    sign agrees with the sign map of figures, sections and vertex colours.  A sign with
    no component is left out.

    Parameters
    ----------
    mesh : trimesh.Trimesh
        The surface mesh, vertices in the same order as `psi`.
    psi : ndarray, complex, (V,)
    state : State, optional
        The analytic state of the surface (None: judge `psi` itself).

    Raises
    ------
    ValueError
        When psi is complex (not real up to one global phase).
    """
    u = sign_rotation(state, psi, what="a sign split", instead="split by phase")
    real = (np.asarray(psi) * np.conj(u)).real
    groups: dict[str, list[np.ndarray]] = {"positive": [], "negative": []}
    for faces in face_components(mesh):
        vertices = np.unique(mesh.faces[faces])
        groups["positive" if real[vertices].sum() >= 0 else "negative"].append(faces)
    return {name: submesh(mesh, np.concatenate(g)) for name, g in groups.items() if g}


def phase_band_surfaces(lattice: Lattice, level: float, bands: int) -> list[Surface]:
    """Closed bodies of {|psi|^2 >= level} cut by phase into `bands` equal bands, one Surface each.

    Band k holds the points where arg psi lies within pi / bands of its middle
    c_k = 2 pi k / bands.  It is the set where both

        |psi| - sqrt(level) >= 0   and   Re(psi e^{-i c_k}) - |psi| cos(pi / bands) >= 0,

    and marching cubes on the smaller of the two (both in a0^-3/2, continuous) gives
    its closed boundary: the density surface within the band plus the cut faces
    where the phase reaches the band's edges (marching cubes rounds the sharp edge
    where the two meet by about one lattice spacing).  psi at the vertices is evaluated
    exactly when the lattice has a state, else interpolated linearly.

    Parameters
    ----------
    lattice : Lattice
        psi on a lattice that holds the whole surface.
    level : float
        Density level, a0^-3.
    bands : int
        Number of bands, 2 to 24.

    Returns
    -------
    list of Surface
        One per band that is not empty, in order of c_k.
    """
    if not (2 <= int(bands) <= 24):
        raise UserInputError(f"the number of phase bands must be from 2 to 24, got {bands}")
    bands = int(bands)
    values = lattice.values
    magnitude = np.abs(values).astype(np.float32)
    cut = np.float32(math.cos(math.pi / bands))
    inside = magnitude - np.float32(math.sqrt(level))
    # march a hair above zero: on a lattice symmetric about the axis the band edges
    # (phase = c_k +- pi / bands) pass exactly through lattice points, where a field value
    # equal to the level makes marching cubes put several vertices on one point
    threshold = float(np.float32(1e-4 * math.sqrt(level)))
    out = []
    for k in range(bands):
        centre = 2 * math.pi * k / bands
        band = (values * np.complex64(np.exp(-1j * centre))).real - magnitude * cut
        field_ = np.minimum(inside, band.astype(np.float32))
        if _touches_boundary(field_, threshold):
            raise UserInputError("the surface reaches the edge of the lattice; use a larger --box")
        part = _march(field_, threshold, lattice)  # the surface step's marching cubes, outward faces
        if part is None:
            continue
        vertices, faces, _ = part
        psi = (lattice.state.psi(*vertices.T) if lattice.state is not None
               else _interpolated_psi(lattice, vertices))
        out.append(Surface(vertices, faces, vertex_normals(vertices, faces), np.asarray(psi, complex),
                           level, None, None, None, lattice.shape, lattice.spacing_a0, lattice.state))
    return out
