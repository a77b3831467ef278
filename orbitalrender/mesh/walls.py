"""Mesh step, wall checks: rays cast against a mesh measure wall thickness and gap width.

A ray from a vertex along the inward normal meets the far side of the wall; along
the outward normal it meets the next surface across a gap.  Every ray-triangle test
is the Moller-Trumbore one (:func:`_ray_triangle`); candidate triangles come from the
mesh's r-tree (:attr:`trimesh.Trimesh.triangles_tree`) or, for a handful of rays, are
all of them.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np
import trimesh

__all__ = ["ThinSpots", "thin_spots", "crossings", "contains_point"]


@dataclass(frozen=True)
class ThinSpots:
    """Result of a wall (``kind="wall"``) or gap (``kind="gap"``) check.

    Attributes
    ----------
    limit_mm : float
        The threshold checked against.
    checked : int
        Vertices sampled.
    below : int
        How many of them have a wall (gap) thinner (narrower) than `limit_mm`.
    minimum_mm : float or None
        The thinnest wall (narrowest gap) found; None when no ray met the surface.
    locations_mm : tuple of (x, y, z)
        The worst sampled vertices below the limit, thinnest first (at most 20).
    """

    kind: str
    limit_mm: float
    checked: int
    below: int
    minimum_mm: float | None
    locations_mm: tuple[tuple[float, float, float], ...] = field(default=())

    def as_dict(self) -> dict:
        return asdict(self)


def _ray_triangle(origins: np.ndarray, directions: np.ndarray, triangles: np.ndarray
                  ) -> tuple[np.ndarray, np.ndarray]:
    """Moller-Trumbore test of ray i against triangle i: (t, hit) with the hit point at
    origins + t * directions, t > 0.  A small tolerance keeps a ray through an edge or a
    corner from slipping between two faces.

    References
    ----------
    .. [1] T. Moller and B. Trumbore, "Fast, minimum storage ray-triangle intersection",
           Journal of Graphics Tools 2(1), 21-28 (1997).
    """
    e1 = triangles[:, 1] - triangles[:, 0]
    e2 = triangles[:, 2] - triangles[:, 0]
    p = np.cross(directions, e2)
    det = np.einsum("ij,ij->i", e1, p)
    scale = np.einsum("ij,ij->i", e1, e1) * np.einsum("ij,ij->i", e2, e2)
    ok = np.abs(det) > 1e-12 * np.sqrt(scale)  # not parallel to the triangle's plane
    inv = np.divide(1.0, det, out=np.zeros_like(det), where=ok)
    s = origins - triangles[:, 0]
    u = np.einsum("ij,ij->i", s, p) * inv
    q = np.cross(s, e1)
    v = np.einsum("ij,ij->i", directions, q) * inv
    t = np.einsum("ij,ij->i", e2, q) * inv
    tol = 1e-9
    return t, ok & (u >= -tol) & (v >= -tol) & (u + v <= 1 + tol) & (t > 0)


def crossings(mesh: trimesh.Trimesh, origin: np.ndarray, direction: np.ndarray) -> np.ndarray:
    """Sorted distances t > 0 at which one ray crosses `mesh` (every triangle tested: for
    a handful of rays this is cheaper than building a spatial index)."""
    count = len(mesh.faces)
    t, hit = _ray_triangle(np.broadcast_to(origin, (count, 3)), np.broadcast_to(direction, (count, 3)),
                           mesh.triangles)
    t = np.sort(t[hit])
    # a ray through an edge or a corner meets each adjacent face: keep one crossing
    if len(t):
        t = t[np.concatenate([[True], np.diff(t) > 1e-9 * max(1.0, float(t[-1]))])]
    return t


def contains_point(mesh: trimesh.Trimesh, point: np.ndarray) -> bool:
    """True if `point` is inside the closed `mesh` (odd number of crossings of a ray from it,
    along a direction of our choice that no symmetric lattice mesh has edges along)."""
    direction = np.array([0.5477, 0.3651, 0.7531])
    return len(crossings(mesh, point, direction / np.linalg.norm(direction))) % 2 == 1


def _first_hits(mesh: trimesh.Trimesh, origins: np.ndarray, directions: np.ndarray, length: float,
                facing: float = 0.5, faces_allowed: np.ndarray | None = None) -> np.ndarray:
    """Distance along each unit ray to the first triangle of `mesh` within `length` (inf if none)
    that faces along the ray's line (|cos| between its normal and the ray >= `facing`).

    Candidates are the triangles whose boxes meet the box of each ray segment (the
    mesh's r-tree); each is tested with :func:`_ray_triangle`.  Segments of bounded
    length keep the candidate sets small, unlike whole rays.  The `facing` test (0.5,
    i.e. within 60 degrees: our choice) keeps the wall across from a point and skips
    faces met at a grazing angle, as in the inside corner where a strut meets a lobe.
    `faces_allowed` (bool per face) restricts the faces that count.
    """
    ends = origins + length * directions
    ids, counts = mesh.triangles_tree.intersection_v(np.minimum(origins, ends), np.maximum(origins, ends))
    ray = np.repeat(np.arange(len(origins)), counts.astype(np.int64))
    ids = ids.astype(np.int64)
    d = directions[ray]
    t, hit = _ray_triangle(origins[ray], d, mesh.triangles[ids])
    facing_ok = np.abs(np.einsum("ij,ij->i", mesh.face_normals[ids], d)) >= facing
    if faces_allowed is not None:
        facing_ok &= faces_allowed[ids]
    hit &= facing_ok & (t <= length)
    distance = np.full(len(origins), np.inf)
    np.minimum.at(distance, ray[hit], t[hit])
    return distance


def thin_spots(mesh: trimesh.Trimesh, limit_mm: float, kind: str = "wall", samples: int = 4000,
               search_factor: float = 3.0) -> ThinSpots:
    """Sample up to `samples` vertices and measure the wall (ray along -normal) or the gap
    (ray along +normal) to the next surface, up to `search_factor` * `limit_mm`; report
    those under `limit_mm`.  Vertices with a NaN ``phase`` attribute (struts, base) are
    not sampled, and gaps are measured to orbital faces only.

    ``minimum_mm`` is the thinnest wall (narrowest gap) found within the search length,
    None if every sampled wall is thicker than that.

    Examples
    --------
    >>> import trimesh
    >>> ball = trimesh.creation.icosphere(3, radius=0.4)  # 0.8 mm across
    >>> spots = thin_spots(ball, 1.0, samples=50)
    >>> spots.below == spots.checked, round(spots.minimum_mm, 1)
    (True, 0.8)
    """
    if kind not in ("wall", "gap"):
        raise ValueError(f"kind must be 'wall' or 'gap', got {kind!r}")
    # only the orbital is checked: struts and base (NaN phase) are sized by construction
    phase = mesh.vertex_attributes.get("phase")
    orbital = (np.isfinite(phase) if phase is not None and len(phase) == len(mesh.vertices)
               else np.ones(len(mesh.vertices), bool))
    candidates = np.flatnonzero(orbital)
    count = min(samples, len(candidates))
    index = candidates[np.unique(np.linspace(0, len(candidates) - 1, count).astype(np.int64))]
    # a gap counts between two orbital faces only, not between the orbital and a strut
    allowed = np.all(orbital[mesh.faces], axis=1) if kind == "gap" else None
    normals = mesh.vertex_normals[index]
    sign = -1.0 if kind == "wall" else 1.0
    eps = 1e-5 * float(np.max(mesh.extents))  # start just off the surface, clear of its own faces
    origins = mesh.vertices[index] + sign * eps * normals
    distance = _first_hits(mesh, origins, sign * normals, search_factor * limit_mm,
                           faces_allowed=allowed) + eps
    under = np.flatnonzero(distance < limit_mm)
    worst = under[np.argsort(distance[under])][:20]
    finite = distance[np.isfinite(distance)]
    return ThinSpots(kind, float(limit_mm), int(len(index)), int(len(under)),
                     float(finite.min()) if len(finite) else None,
                     tuple(tuple(float(c) for c in mesh.vertices[index[k]]) for k in worst))
