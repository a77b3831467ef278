"""Mesh step, arrays: one body as plain arrays (vertices, faces, colours, vertex data), no mesh library.

The format writers (:mod:`~orbitalrender.mesh.ply`, :mod:`~orbitalrender.mesh.obj`,
:mod:`~orbitalrender.mesh.stl`, :mod:`~orbitalrender.mesh.threemf`) take bodies in this
form, so a plain export never loads trimesh (about 0.4-0.7 s of start-up, with the
parts of scipy it imports); print preparation and sign splits work on trimesh meshes
and pass through :func:`as_arrays` and :func:`as_trimesh`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

__all__ = ["SUPPORT_RGBA", "MeshArrays", "as_arrays", "as_trimesh", "extent"]

#: Colour of struts and bases (sRGB, 0-255): a neutral mid grey, so they read as "not the orbital".
SUPPORT_RGBA = (150, 150, 150, 255)


@dataclass(frozen=True)
class MeshArrays:
    """One body of a mesh file.

    Attributes
    ----------
    vertices : ndarray, shape (V, 3)
        Positions, in the unit of the file.
    faces : ndarray of int, shape (F, 3)
        Vertex indices, counter-clockwise seen from outside.
    rgba : ndarray of uint8, shape (V, 4), optional
        sRGB colour and alpha of each vertex.
    normals : ndarray, shape (V, 3), optional
        Unit outward normal of each vertex.
    attributes : mapping of str to ndarray, shape (V,)
        Further per-vertex numbers (``phase`` in rad, ``density`` in a0^-3).
    """

    vertices: np.ndarray
    faces: np.ndarray
    rgba: np.ndarray | None = None
    normals: np.ndarray | None = None
    attributes: Mapping[str, np.ndarray] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "attributes", MappingProxyType(dict(self.attributes)))


def extent(vertices: np.ndarray) -> np.ndarray:
    """The sides (x, y, z) of the bounding box of `vertices` (V, 3); zeros when there are none.

    One reduction per column: ``np.ptp(v, axis=0)`` on a (V, 3) array walks it with a
    stride of three and is about 20 times slower at V = 270 000 (measured with numpy 2.4).

    Examples
    --------
    >>> extent(np.array([[0.0, 1, 2], [3, -1, 2]])).tolist()
    [3.0, 2.0, 0.0]
    """
    vertices = np.asarray(vertices, dtype=float).reshape(-1, 3)
    if not len(vertices):
        return np.zeros(3)
    return np.array([np.ptp(vertices[:, k]) for k in range(3)])


def as_arrays(mesh) -> MeshArrays:
    """The arrays of a trimesh mesh: vertices, faces, vertex colours (when it has them),
    vertex normals (trimesh's face-averaged ones where none were given) and attributes."""
    rgba = np.asarray(mesh.visual.vertex_colors, dtype=np.uint8) if mesh.visual.kind == "vertex" else None
    return MeshArrays(np.asarray(mesh.vertices, dtype=float), np.asarray(mesh.faces, dtype=np.int64), rgba,
                      np.asarray(mesh.vertex_normals, dtype=float), dict(mesh.vertex_attributes))


def as_trimesh(body: MeshArrays):
    """A trimesh mesh holding the same arrays (no processing, no validation)."""
    import trimesh

    mesh = trimesh.Trimesh(body.vertices, body.faces, vertex_normals=body.normals, vertex_colors=body.rgba,
                           process=False, validate=False)
    mesh.vertex_attributes.update(body.attributes)
    return mesh
