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
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import connected_components

from .model import Surface

__all__ = ["Topology", "topology", "mesh_topology", "volume_spread", "component_labels", "split_components"]


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
    face_counts : tuple of int
        Triangles of each part.
    oriented : bool
        The winding is consistent: no two faces walk a shared edge the same way.
    """

    components: int
    euler_characteristics: tuple[int, ...]
    genus: tuple[int | None, ...]
    volumes_a0_3: tuple[float, ...]
    volume_a0_3: float
    area_a0_2: float
    closed: bool
    regions: int
    face_counts: tuple[int, ...]
    oriented: bool

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
            "face_counts": [int(k) for k in self.face_counts],
            "oriented": bool(self.oriented),
        }


def component_labels(surface: Surface) -> tuple[int, np.ndarray]:
    """Number of connected parts and the part index of every vertex.

    Parts are numbered in the order their first vertex appears; a vertex used by no face
    gets -1.
    """
    nv = len(surface.vertices_a0)
    lo, hi, _, _ = _edges(surface.faces, nv)
    return _vertex_parts(lo, hi, surface.faces, nv)


def _vertex_parts(lo: np.ndarray, hi: np.ndarray, faces: np.ndarray, nv: int) -> tuple[int, np.ndarray]:
    """Parts of the graph of the edges (lo, hi), lo ascending: the count, and the part of
    each vertex numbered by first appearance (-1 for a vertex no face uses)."""
    # lo is sorted (the edges come from sorted keys), so the rows of a CSR graph are
    # runs of it; "weak" components of the directed edges are the undirected ones
    indptr = np.zeros(nv + 1, dtype=np.int64)
    np.cumsum(np.bincount(lo, minlength=nv), out=indptr[1:])
    graph = csr_matrix((np.ones(len(lo), dtype=np.int8), hi, indptr), shape=(nv, nv))
    _, labels = connected_components(graph, directed=True, connection="weak")
    # scipy numbers the components in the order of their lowest vertex (it starts a
    # search from each unlabelled vertex in turn); dropping the labels of vertices no face
    # uses keeps that order, which is the order of first appearance
    used = np.zeros(nv, dtype=bool)
    used[faces.ravel()] = True
    keep = np.zeros(int(labels.max()) + 1 if nv else 0, dtype=bool)
    keep[labels[used]] = True
    remap = np.where(keep, np.cumsum(keep) - 1, -1)
    out = remap[labels]
    out[~used] = -1
    return int(keep.sum()), out


def _edges(faces: np.ndarray, nv: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
    """Unique undirected edges (lower, higher vertex), how many faces share each, and whether
    the winding is consistent (no directed edge walked twice).

    Each side of a face is one int64 key 2 (lower nv + higher) + (1 if it runs from the
    higher vertex to the lower); one sort of the 3F keys groups the copies of an edge, so
    the cost is that of sorting integers instead of rows, and two equal neighbours in the
    sorted keys are the same edge walked the same way.
    """
    ahead = np.roll(faces, -1, axis=1)
    key = ((np.minimum(faces, ahead) * nv + np.maximum(faces, ahead)) * 2 + (faces > ahead)).ravel()
    key.sort()
    same = key[1:] == key[:-1]
    consistent = not bool(same.any())
    key >>= 1
    start = np.flatnonzero(np.concatenate(([True], key[1:] != key[:-1])))
    shared = np.diff(np.append(start, len(key)))
    unique = key[start]
    return unique // nv, unique % nv, shared, consistent


def _volumes_and_areas(verts: np.ndarray, faces: np.ndarray) -> tuple[np.ndarray, float]:
    """Signed volume of each face's tetrahedron with the origin, and the total area.

    With u = b - a and w = c - a, |u x w| is twice the area and a . (u x w) = a . (b x c)
    six times the signed volume.
    """
    a = verts[faces[:, 0]].T
    u = verts[faces[:, 1]].T - a
    w = verts[faces[:, 2]].T - a
    n0 = u[1] * w[2] - u[2] * w[1]
    n1 = u[2] * w[0] - u[0] * w[2]
    n2 = u[0] * w[1] - u[1] * w[0]
    signed = (a[0] * n0 + a[1] * n1 + a[2] * n2) / 6.0
    return signed, 0.5 * float(np.sqrt(n0 * n0 + n1 * n1 + n2 * n2).sum())


def volume_spread(vertices: np.ndarray, faces: np.ndarray) -> tuple[float, float]:
    """Enclosed (signed) volume of a triangle mesh and the sum of the unsigned volumes of its
    tetrahedra with the origin, which bounds the round-off of the first.

    Examples
    --------
    >>> import numpy as np
    >>> v = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
    >>> f = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])
    >>> [round(x, 6) for x in volume_spread(v, f)]
    [0.166667, 0.166667]
    """
    signed, _ = _volumes_and_areas(np.asarray(vertices, dtype=np.float64), np.asarray(faces))
    return float(signed.sum()), float(np.abs(signed).sum())


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
    return mesh_topology(surface.vertices_a0, surface.faces)


def mesh_topology(vertices: np.ndarray, faces: np.ndarray) -> Topology:
    """:func:`topology` of any triangle mesh given as vertex and face arrays.

    Volumes and area are in the unit of `vertices` cubed and squared.  The cost is one
    sort of the 3F edge keys and one pass over the edges for the parts (linear apart
    from that integer sort).

    Examples
    --------
    >>> import numpy as np
    >>> v = np.array([[0, 0, 0], [2, 0, 0], [0, 2, 0], [0, 0, 2]], float)
    >>> f = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])
    >>> t = mesh_topology(v, f)
    >>> t.euler_characteristics, round(t.volume_a0_3, 6), t.face_counts, t.oriented
    ((2,), 1.333333, (4,), True)
    """
    faces = np.asarray(faces, dtype=np.int64)
    verts = np.asarray(vertices, dtype=np.float64)
    nv = len(verts)
    lo, hi, shared, consistent = _edges(faces, nv)
    count, labels = _vertex_parts(lo, hi, faces, nv)
    face_label = labels[faces[:, 0]]
    signed, area = _volumes_and_areas(verts, faces)
    edge_label = labels[lo]
    n_vertices = np.bincount(labels[labels >= 0], minlength=count)
    n_edges = np.bincount(edge_label, minlength=count)
    n_faces = np.bincount(face_label, minlength=count)
    closed_part = np.bincount(edge_label[shared != 2], minlength=count) == 0
    chi = n_vertices - n_edges + n_faces
    volumes = np.bincount(face_label, weights=signed, minlength=count)
    genus = tuple(int((2 - x) // 2) if ok else None for x, ok in zip(chi, closed_part))
    return Topology(components=count, euler_characteristics=tuple(int(x) for x in chi), genus=genus,
                    volumes_a0_3=tuple(float(v) for v in volumes), volume_a0_3=float(volumes.sum()),
                    area_a0_2=area, closed=bool(closed_part.all()),
                    regions=int(np.count_nonzero(volumes > 0)),
                    face_counts=tuple(int(k) for k in n_faces),
                    oriented=consistent)


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
