"""Mesh step, bodies: pieces of trimesh meshes and their concatenation, keeping colours and attributes.

trimesh's own splitting and concatenation drop custom vertex attributes (``phase``,
``density``); these keep them, so every body written carries its phase.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import trimesh

__all__ = ["submesh", "face_components", "concatenate"]


def submesh(mesh: trimesh.Trimesh, face_index: np.ndarray) -> trimesh.Trimesh:
    """The faces `face_index` of `mesh` as a new mesh, keeping vertex colours and vertex attributes.

    Examples
    --------
    >>> import trimesh
    >>> len(submesh(trimesh.creation.box(), [0, 1]).vertices)
    4
    """
    faces = np.asarray(mesh.faces)[np.asarray(face_index)]
    used, inverse = np.unique(faces, return_inverse=True)
    part = trimesh.Trimesh(mesh.vertices[used], inverse.reshape(-1, 3), process=False, validate=False)
    if mesh.visual.kind == "vertex":
        part.visual.vertex_colors = mesh.visual.vertex_colors[used]
    for key, value in mesh.vertex_attributes.items():
        part.vertex_attributes[key] = np.asarray(value)[used]
    return part


def face_components(mesh: trimesh.Trimesh) -> list[np.ndarray]:
    """Face indices of each edge-connected component, largest first.

    Examples
    --------
    >>> import trimesh
    >>> box = trimesh.creation.box()
    >>> two = trimesh.util.concatenate([box, box.copy().apply_translation([3, 0, 0])])
    >>> [len(c) for c in face_components(two)]
    [12, 12]
    """
    labels = trimesh.graph.connected_component_labels(mesh.face_adjacency, node_count=len(mesh.faces))
    order = np.argsort(labels, kind="stable")
    groups = np.split(order, np.flatnonzero(np.diff(labels[order])) + 1)
    return sorted(groups, key=len, reverse=True)


def concatenate(meshes: Sequence[trimesh.Trimesh]) -> trimesh.Trimesh:
    """One mesh from several, keeping vertex colours and the vertex attributes they share.

    Examples
    --------
    >>> import numpy as np, trimesh
    >>> a = trimesh.creation.box()
    >>> a.vertex_attributes["phase"] = np.zeros(8)
    >>> both = concatenate([a, a.copy()])
    >>> len(both.faces), both.vertex_attributes["phase"].shape
    (24, (16,))
    """
    if len(meshes) == 1:
        return meshes[0].copy()
    out = trimesh.util.concatenate(list(meshes))
    shared = set(meshes[0].vertex_attributes).intersection(*(m.vertex_attributes for m in meshes[1:]))
    for key in sorted(shared):
        out.vertex_attributes[key] = np.concatenate([np.asarray(m.vertex_attributes[key]) for m in meshes])
    return out
