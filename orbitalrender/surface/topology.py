"""Surface step, report: connected parts of a surface, their Euler characteristic, genus and volume.

Every quantity is computed from the triangle mesh itself: parts are the connected
components of the face graph (faces sharing a vertex), the Euler characteristic of
a part is V - E + F, its genus (2 - chi) / 2 when it is closed, its volume the
divergence-theorem sum over its outward triangles.

References
----------
.. [1] The Euler-Poincare formula chi = V - E + F = 2 - 2g for a closed orientable
       surface of genus g; e.g. M. do Carmo, *Differential Geometry of Curves and
       Surfaces*, Prentice-Hall (1976), section 4-5.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from .model import Surface

__all__ = ["Topology", "topology", "component_labels", "split_components"]


@dataclass(frozen=True)
class Topology:
    """What a surface is made of.

    Attributes
    ----------
    components : int
        Number of connected parts.
    euler_characteristics : tuple of int
        V - E + F of each part.
    genus : tuple of (int or None)
        (2 - chi) / 2 of each closed part; None for a part with a boundary.
    volumes_a0_3 : tuple of float
        Volume enclosed by each part (a0^3); positive for outward faces.
    volume_a0_3 : float
        Their sum (a nested shell counts with its own sign: an inner shell of a hollow
        part, seen from inside, is subtracted by its orientation).
    area_a0_2 : float
        Total surface area (a0^2).
    closed : bool
        Every edge is shared by exactly two faces.
    regions : int
        Connected pieces of the enclosed solid: parts with a positive volume (outer
        boundaries).  A hollow shell has two surface parts but is one region.
    """

    components: int
    euler_characteristics: tuple[int, ...]
    genus: tuple[int | None, ...]
    volumes_a0_3: tuple[float, ...]
    volume_a0_3: float
    area_a0_2: float
    closed: bool
    regions: int

    def as_dict(self) -> dict:
        """JSON-ready dictionary (plain ints, floats, lists and bools)."""
        return {
            "components": int(self.components),
            "euler_characteristics": [int(c) for c in self.euler_characteristics],
            "genus": [None if g is None else int(g) for g in self.genus],
            "volumes_a0_3": [float(v) for v in self.volumes_a0_3],
            "volume_a0_3": float(self.volume_a0_3),
            "area_a0_2": float(self.area_a0_2),
            "closed": bool(self.closed),
            "regions": int(self.regions),
        }


def component_labels(surface: Surface) -> tuple[int, np.ndarray]:
    """Number of connected parts and the part index of every vertex.

    Parts are numbered in the order their first vertex appears.
    """
    faces = surface.faces
    nv = len(surface.vertices_a0)
    rows = np.concatenate([faces[:, 0], faces[:, 1], faces[:, 2]])
    cols = np.concatenate([faces[:, 1], faces[:, 2], faces[:, 0]])
    graph = coo_matrix((np.ones(len(rows), dtype=np.int8), (rows, cols)), shape=(nv, nv))
    count, labels = connected_components(graph, directed=False)
    # relabel in order of first appearance, and drop vertices used by no face
    used = np.zeros(nv, dtype=bool)
    used[faces.ravel()] = True
    _, first = np.unique(labels[used], return_index=True)
    order = np.argsort(first)
    remap = np.full(count, -1)
    remap[np.unique(labels[used])[order]] = np.arange(len(order))
    out = remap[labels]
    out[~used] = -1
    return len(order), out


def _edges(faces: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unique undirected edges and how many faces share each."""
    e = np.concatenate([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]])
    e.sort(axis=1)
    uniq, counts = np.unique(e, axis=0, return_counts=True)
    return uniq, counts


def topology(surface: Surface) -> Topology:
    """Components, Euler characteristics, genus, volumes, area and closedness of a surface.

    Examples
    --------
    A closed tetrahedron is one part of genus 0:

    >>> import numpy as np
    >>> v = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
    >>> f = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])
    >>> s = Surface(v, f, v, np.ones(4, complex), 1.0, None, None, None, (2, 2, 2), (1, 1, 1))
    >>> t = topology(s)
    >>> t.components, t.genus, round(t.volume_a0_3, 6), t.closed, t.regions
    (1, (0,), 0.166667, True, 1)
    """
    faces = surface.faces
    verts = surface.vertices_a0
    count, labels = component_labels(surface)
    face_label = labels[faces[:, 0]]
    a, b, c = verts[faces[:, 0]], verts[faces[:, 1]], verts[faces[:, 2]]
    signed = np.einsum("ij,ij->i", a, np.cross(b, c)) / 6.0
    area = 0.5 * np.linalg.norm(np.cross(b - a, c - a), axis=1)
    edges, shared = _edges(faces)
    edge_label = labels[edges[:, 0]]
    open_edges = shared != 2
    n_vertices = np.bincount(labels[labels >= 0], minlength=count)
    n_edges = np.bincount(edge_label, minlength=count)
    n_faces = np.bincount(face_label, minlength=count)
    closed_part = np.bincount(edge_label[open_edges], minlength=count) == 0
    chi = n_vertices - n_edges + n_faces
    volumes = np.bincount(face_label, weights=signed, minlength=count)
    genus = tuple(int((2 - x) // 2) if ok else None for x, ok in zip(chi, closed_part))
    return Topology(components=count, euler_characteristics=tuple(int(x) for x in chi), genus=genus,
                    volumes_a0_3=tuple(float(v) for v in volumes), volume_a0_3=float(volumes.sum()),
                    area_a0_2=float(area.sum()), closed=bool(closed_part.all()),
                    regions=int(np.count_nonzero(volumes > 0)))


def split_components(surface: Surface) -> list[Surface]:
    """One Surface per connected part, vertices re-indexed, in the order of `component_labels`.

    Level, fractions and lattice information are those of the whole surface.
    """
    count, labels = component_labels(surface)
    face_label = labels[surface.faces[:, 0]]
    parts = []
    for k in range(count):
        keep = np.flatnonzero(labels == k)
        index = np.full(len(labels), -1, dtype=np.int64)
        index[keep] = np.arange(len(keep))
        parts.append(replace(surface, vertices_a0=surface.vertices_a0[keep],
                             faces=index[surface.faces[face_label == k]],
                             normals=surface.normals[keep], psi=surface.psi[keep]))
    return parts
