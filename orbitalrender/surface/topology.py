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

import numba
import numpy as np

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
    labels, count, *_ = _figures(*_arrays(surface.vertices_a0, surface.faces))
    return int(count), labels


def _arrays(vertices: np.ndarray, faces: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The arrays in the one layout the compiled kernels take (float64 and int64, C order)."""
    return (np.ascontiguousarray(vertices, dtype=np.float64).reshape(-1, 3),
            np.ascontiguousarray(faces, dtype=np.int64).reshape(-1, 3))


@numba.njit(cache=True, nogil=True)
def _find(parent, a):
    """Root of a in the union-find forest, halving the path on the way."""
    while parent[a] != a:
        parent[a] = parent[parent[a]]
        a = parent[a]
    return a


@numba.njit(cache=True, nogil=True)
def _figures(verts, faces):
    """One pass over the faces and one over their sides.

    Returns the part of every vertex (numbered by first appearance, -1 if unused), the
    number of parts, per part the vertex, edge, face and open-edge counts and the signed
    volume, the total area, and whether no side is walked twice the same way.
    """
    nv, nf = verts.shape[0], faces.shape[0]
    parent = np.arange(nv)
    used = np.zeros(nv, dtype=np.bool_)
    for f in range(nf):
        a, b, c = faces[f, 0], faces[f, 1], faces[f, 2]
        used[a] = used[b] = used[c] = True
        for u, v in ((a, b), (b, c)):
            ru, rv = _find(parent, u), _find(parent, v)
            if ru != rv:
                if ru < rv:
                    parent[rv] = ru
                else:
                    parent[ru] = rv
    labels = np.full(nv, -1, dtype=np.int64)
    root_label = np.full(nv, -1, dtype=np.int64)
    count = 0
    for v in range(nv):
        if used[v]:
            r = _find(parent, v)
            if root_label[r] < 0:
                root_label[r] = count
                count += 1
            labels[v] = root_label[r]
    n_vertices = np.zeros(count, dtype=np.int64)
    for v in range(nv):
        if labels[v] >= 0:
            n_vertices[labels[v]] += 1
    # sides bucketed by their lower vertex (a counting sort): each bucket holds the few
    # sides around one vertex, so finding the copies of an edge is a short scan
    start = np.zeros(nv + 1, dtype=np.int64)
    for f in range(nf):
        for k in range(3):
            a, b = faces[f, k], faces[f, (k + 1) % 3]
            start[min(a, b) + 1] += 1
    for v in range(nv):
        start[v + 1] += start[v]
    fill = start[:-1].copy()
    other = np.empty(3 * nf, dtype=np.int64)
    upward = np.empty(3 * nf, dtype=np.bool_)
    for f in range(nf):
        for k in range(3):
            a, b = faces[f, k], faces[f, (k + 1) % 3]
            lo = min(a, b)
            other[fill[lo]] = max(a, b)
            upward[fill[lo]] = a < b
            fill[lo] += 1
    n_edges = np.zeros(count, dtype=np.int64)
    n_open = np.zeros(count, dtype=np.int64)
    consistent = True
    for v in range(nv):
        for i in range(start[v], start[v + 1]):
            first, shared, ups = True, 0, 0
            for j in range(start[v], start[v + 1]):
                if other[j] == other[i]:
                    if j < i:
                        first = False
                        break
                    shared += 1
                    ups += 1 if upward[j] else 0
            if first:
                n_edges[labels[v]] += 1
                if shared != 2:
                    n_open[labels[v]] += 1
                if ups > 1 or shared - ups > 1:
                    consistent = False
    n_faces = np.zeros(count, dtype=np.int64)
    volumes = np.zeros(count)
    area = 0.0
    for f in range(nf):
        a, b, c = faces[f, 0], faces[f, 1], faces[f, 2]
        ux, uy, uz = verts[b, 0] - verts[a, 0], verts[b, 1] - verts[a, 1], verts[b, 2] - verts[a, 2]
        wx, wy, wz = verts[c, 0] - verts[a, 0], verts[c, 1] - verts[a, 1], verts[c, 2] - verts[a, 2]
        nx, ny, nz = uy * wz - uz * wy, uz * wx - ux * wz, ux * wy - uy * wx
        part = labels[a]
        n_faces[part] += 1
        # (b - a) x (c - a) has twice the area as length, and a . it = a . (b x c) is
        # six times the signed volume of the tetrahedron (origin, a, b, c)
        volumes[part] += (verts[a, 0] * nx + verts[a, 1] * ny + verts[a, 2] * nz) / 6.0
        area += 0.5 * np.sqrt(nx * nx + ny * ny + nz * nz)
    return labels, count, n_vertices, n_edges, n_faces, n_open, volumes, area, consistent


@numba.njit(cache=True, nogil=True)
def _volume_spread(verts, faces):
    volume, spread = 0.0, 0.0
    for f in range(faces.shape[0]):
        a, b, c = verts[faces[f, 0]], verts[faces[f, 1]], verts[faces[f, 2]]
        six = (a[0] * (b[1] * c[2] - b[2] * c[1]) + a[1] * (b[2] * c[0] - b[0] * c[2])
               + a[2] * (b[0] * c[1] - b[1] * c[0]))
        volume += six
        spread += abs(six)
    return volume / 6.0, spread / 6.0


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
    volume, spread = _volume_spread(*_arrays(vertices, faces))
    return float(volume), float(spread)


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

    Volumes and area are in the unit of `vertices` cubed and squared.  The cost is linear
    in the number of faces: parts from a union-find over the face sides, edges from the
    sides bucketed by their lower vertex, volumes and area in the same pass over the faces.

    Examples
    --------
    >>> import numpy as np
    >>> v = np.array([[0, 0, 0], [2, 0, 0], [0, 2, 0], [0, 0, 2]], float)
    >>> f = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])
    >>> t = mesh_topology(v, f)
    >>> t.euler_characteristics, round(t.volume_a0_3, 6), t.face_counts, t.oriented
    ((2,), 1.333333, (4,), True)
    """
    _, count, n_vertices, n_edges, n_faces, n_open, volumes, area, consistent = _figures(
        *_arrays(vertices, faces))
    chi = n_vertices - n_edges + n_faces
    closed_part = n_open == 0
    genus = tuple(int((2 - x) // 2) if ok else None for x, ok in zip(chi, closed_part))
    return Topology(components=int(count), euler_characteristics=tuple(int(x) for x in chi), genus=genus,
                    volumes_a0_3=tuple(float(v) for v in volumes), volume_a0_3=float(volumes.sum()),
                    area_a0_2=float(area), closed=bool(closed_part.all()),
                    regions=int(np.count_nonzero(volumes > 0)),
                    face_counts=tuple(int(k) for k in n_faces),
                    oriented=bool(consistent))


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
