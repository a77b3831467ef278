"""Mesh step, boolean union: closed pieces joined into one manifold solid (manifold3d), welded for writing.

Used by print preparation (:mod:`orbitalrender.mesh.printable`) to join the pieces of
an orbital with its struts and base.
"""

from __future__ import annotations

import manifold3d
import numpy as np
import trimesh
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

__all__ = ["solid_union"]


def _manifold(mesh: trimesh.Trimesh) -> manifold3d.Manifold:
    return manifold3d.Manifold(manifold3d.Mesh(vert_properties=np.asarray(mesh.vertices, np.float32),
                                               tri_verts=np.asarray(mesh.faces, np.uint32)))


def solid_union(pieces: list[trimesh.Trimesh], size: float, keep_below_y: float | None = None
           ) -> trimesh.Trimesh:
    """Boolean union of closed `pieces` (manifold3d), optionally cut to y <= `keep_below_y`.

    The result is simplified, and corners closer than 1e-5 of the model's size are welded
    (0.6 um at 60 mm, our choice: far below any printer's resolution, far above float32
    rounding): see :func:`_weld`.
    """
    solid = manifold3d.Manifold.batch_boolean([_manifold(p) for p in pieces], manifold3d.OpType.Add)
    if keep_below_y is not None:
        # keep the half-space y <= keep_below_y: trim_by_plane keeps the side the normal points to
        solid = solid.trim_by_plane((0.0, -1.0, 0.0), -keep_below_y)
    solid = solid.simplify(1e-5 * size)
    if solid.status() != manifold3d.Error.NoError:
        raise RuntimeError(f"the boolean union failed: {solid.status()}")
    out = solid.to_mesh64()
    return _weld(np.asarray(out.vert_properties[:, :3], float), np.asarray(out.tri_verts, np.int64),
                 1e-5 * size)


def _weld(vertices: np.ndarray, faces: np.ndarray, tolerance: float) -> trimesh.Trimesh:
    """Merge corners closer than `tolerance` and drop the faces that collapse.

    Where a strut's edge meets a lobe the union can leave corners a rounding step apart;
    written as float32 (every STL) they coincide, and a reader that joins equal corners
    would see edges of four faces.  Merging them is an edge collapse: the faces that had
    both ends of the short edge vanish, and their neighbours close the gap.
    """
    pairs = cKDTree(vertices).query_pairs(tolerance, output_type="ndarray")
    if len(pairs):
        graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])),
                           shape=(len(vertices), len(vertices)))
        _, label = connected_components(graph, directed=False)
        first = np.full(label.max() + 1, -1)
        first[label[::-1]] = np.arange(len(vertices))[::-1]  # lowest index of each group
        faces = first[label][faces]
        faces = faces[(faces[:, 0] != faces[:, 1]) & (faces[:, 1] != faces[:, 2])
                      & (faces[:, 0] != faces[:, 2])]
        # two faces on the same three corners (a membrane left by the collapse): drop both
        key = np.sort(faces, axis=1)
        _, index, counts = np.unique(key, axis=0, return_index=True, return_counts=True)
        faces = faces[np.sort(index[counts == 1])]
    mesh = trimesh.Trimesh(vertices, faces, process=False)
    mesh.remove_unreferenced_vertices()
    return mesh
