"""Mesh step, print preparation: one closed solid that stands, split bodies, and thin-wall checks.

A probability-enclosing surface is often several disjoint pieces: the two lobes
of 2p_z, the lobes and ring of 3d_z2, the nested shells of 2s and 3s.  For
printing they are joined into one solid by thin cylindrical struts:

* an axial strut along z through the centre of the model (x, y at the middle of
  its bounding box), from the base (or the lowest piece) to the middle of the
  highest piece it meets; it pierces an outer shell and reaches the shell or
  ball inside it;
* for each piece the axis misses, horizontal struts from the axis to the middle
  of that piece's wall: four, on the diagonals, for a ring around the axis
  (3d_z2), one toward the piece otherwise (2p_x);
* an optional base under the model, a disc (default) or a square plate, joined
  by the axial strut.

The join is a true boolean union (manifold3d), so
the result is one closed, consistently oriented manifold.  A shell inside a shell
still encloses a sealed cavity after the union (a second surface inside the
solid); ``cutaway`` removes the half y > 0 (after the struts are added) so the
inside is open, and lays the model on its flat cut face, which then serves as the
base.

Wall thickness and gaps are checked by casting rays from sampled vertices along
the inward (walls) or outward (gaps) normal to the first surface they meet
(:mod:`trimesh.ray`).

The struts and base are not part of the orbital: they are grey in coloured
files, with NaN phase and density.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import manifold3d
import numpy as np
import trimesh
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from ..errors import UserInputError
from .bodies import concatenate, face_components, submesh
from .export import SUPPORT_RGBA
from .print_options import DEFAULT_PRINT_OPTIONS, PrintOptions

__all__ = [
    "Support",
    "ThinSpots",
    "PrintedModel",
    "solid_parts",
    "make_printable",
    "single_solid_problems",
    "require_single_solid",
    "thin_spots",
]

#: Facets around a strut or disc (our choice: smooth at print sizes of a few centimetres).
_SECTIONS = 32
#: Diameter of the ball at a strut junction relative to the strut (our choice: covers the joint).
_JOINT_RATIO = 1.5


@dataclass(frozen=True)
class Support:
    """A strut (``kind`` "axial" or "radial"), a junction ball ("joint") or the base ("disc",
    "plate"), in the model's final coordinates (mm)."""

    kind: str
    start_mm: tuple[float, float, float]
    end_mm: tuple[float, float, float]
    diameter_mm: float


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


@dataclass(frozen=True)
class PrintedModel:
    """The prepared solid (mm, lowest point at z = 0, axis at x = y = 0) and how it was made."""

    mesh: trimesh.Trimesh
    parts_joined: int
    supports: tuple[Support, ...]
    cutaway: bool


def solid_parts(mesh: trimesh.Trimesh) -> list[trimesh.Trimesh]:
    """The solid pieces of a closed mesh: each outward-facing component together with the
    inward-facing components (cavity walls) directly inside it, largest first.

    Raises
    ------
    UserInputError
        If a component is not closed, or a cavity wall lies in no piece.

    Examples
    --------
    >>> import trimesh
    >>> outer = trimesh.creation.icosphere(2, radius=2.0)
    >>> inner = trimesh.creation.icosphere(2, radius=1.0)
    >>> inner.invert()  # doctest: +ELLIPSIS
    <trimesh.Trimesh...>
    >>> ball = trimesh.creation.icosphere(2, radius=0.5)
    >>> parts = solid_parts(trimesh.util.concatenate([outer, inner, ball]))
    >>> [len(p.faces) for p in parts]
    [640, 320]
    """
    comps = [submesh(mesh, faces) for faces in face_components(mesh)]
    for c in comps:
        if not c.is_watertight:
            raise UserInputError("the surface is not closed (it meets the edge of the lattice box), "
                                 "so it cannot be made into a solid; use a larger --box")
    volumes = [float(c.volume) for c in comps]
    outers = sorted((i for i, v in enumerate(volumes) if v > 0), key=lambda i: volumes[i])
    members = {i: [i] for i in outers}
    for i, v in enumerate(volumes):
        if v > 0:
            continue
        point = comps[i].vertices[:1]
        # the smallest outward piece that contains the cavity wall owns it
        owner = next((j for j in outers if volumes[j] > -v and _contains(comps[j], point[0])), None)
        if owner is None:
            raise UserInputError("the surface has an inward-facing part that lies in no solid piece")
        members[owner].append(i)
    solid_volume = {j: sum(volumes[k] for k in members[j]) for j in outers}
    order = sorted(outers, key=lambda j: solid_volume[j], reverse=True)
    return [concatenate([comps[k] for k in members[j]]) for j in order]


def _inside_intervals(mesh: trimesh.Trimesh, origin: np.ndarray, direction: np.ndarray
                      ) -> list[tuple[float, float]]:
    """Parameter intervals (t0, t1), t >= 0, where origin + t * direction lies inside `mesh`."""
    direction = direction / np.linalg.norm(direction)
    t = _crossings(mesh, origin, direction)
    if len(t) % 2:  # an odd count: the ray starts inside
        t = np.concatenate([[0.0], t])
    return [(float(a), float(b)) for a, b in zip(t[::2], t[1::2])]


#: A fixed rotation applied to every strut and joint ball about its own centre (angles in rad,
#: our choice): it keeps their facets from lining up with each other's and with the lattice
#: mesh, where the union would otherwise make corners that coincide without being joined.
_TWIST = trimesh.transformations.euler_matrix(0.3113, 0.1729, 0.4271)


def _twisted(mesh: trimesh.Trimesh, centre: np.ndarray, axis: np.ndarray | None = None
             ) -> trimesh.Trimesh:
    """`mesh` turned by :data:`_TWIST` about `centre`, or (a strut, which must still run from
    its start to its end) by one of its angles about its own `axis`."""
    centre = np.asarray(centre, dtype=float)
    if axis is None:
        turn = (trimesh.transformations.translation_matrix(centre) @ _TWIST
                @ trimesh.transformations.translation_matrix(-centre))
    else:
        turn = trimesh.transformations.rotation_matrix(0.3113, axis, centre)
    return mesh.apply_transform(turn)


def _strut(start: np.ndarray, end: np.ndarray, diameter: float) -> trimesh.Trimesh:
    cylinder = trimesh.creation.cylinder(radius=diameter / 2, segment=np.array([start, end]),
                                         sections=_SECTIONS)
    return _twisted(cylinder, 0.5 * (start + end), axis=end - start)


def _plan_struts(parts: list[trimesh.Trimesh], axis_xy: np.ndarray, diameter: float,
                 z_bottom: float | None) -> list[Support]:
    """Struts that tie every part to one axial strut (and to the base at `z_bottom`)."""
    size = float(np.max(np.ptp(np.vstack([p.bounds for p in parts]), axis=0)))
    # cast along a line a hair off the axis so the ray does not run along mesh edges
    nudge = size * np.array([1.3e-4, 0.7e-4])
    low = min(p.bounds[0, 2] for p in parts) - size
    z_levels: list[float] = []
    radial: list[Support] = []
    for part in parts:
        start = np.array([*(axis_xy + nudge), low])
        hits = _inside_intervals(part, start, np.array([0.0, 0.0, 1.0]))
        if hits:
            z_levels.extend(low + 0.5 * (a + b) for a, b in hits)
            continue
        centre = part.center_mass
        offset = centre[:2] - axis_xy
        if np.linalg.norm(offset) < 0.05 * size:  # a ring around the axis: four diagonal struts
            directions = [np.array([sx, sy]) / math.sqrt(2) for sx in (-1, 1) for sy in (-1, 1)]
        else:
            directions = [offset / np.linalg.norm(offset)]
        for d in directions:
            origin = np.array([*axis_xy, centre[2] + nudge[0]])
            hits = _inside_intervals(part, origin, np.array([*d, 0.0]))
            if not hits:
                raise UserInputError("cannot reach one piece of the model with a horizontal strut from "
                                     "the z axis; write the pieces separately instead (--parts)")
            t = 0.5 * (hits[0][0] + hits[0][1])
            radial.append(Support("radial", tuple(origin), tuple(origin + t * np.array([*d, 0.0])),
                                  diameter))
            z_levels.append(float(centre[2]))
    z_levels.extend(s.start_mm[2] for s in radial)
    supports = []
    bottom = min(z_levels) if z_bottom is None else z_bottom
    top = max(z_levels)
    if top > bottom and (len(parts) > 1 or z_bottom is not None):
        supports.append(Support("axial", (*axis_xy, bottom), (*axis_xy, top), diameter))
    return supports + radial


def _base(bounds: np.ndarray, size: float, thickness: float, kind: str, gap: float
          ) -> tuple[trimesh.Trimesh, Support]:
    centre_xy = 0.5 * (bounds[0, :2] + bounds[1, :2])
    footprint = float(np.max(bounds[1, :2] - bounds[0, :2]))
    # wide enough to stand: at least 60 % of the largest extent (our choice), never narrower than the model
    width = max(0.6 * size, footprint)
    z_top = bounds[0, 2] - gap
    centre = np.array([*centre_xy, z_top - thickness / 2])
    if kind == "disc":
        solid = trimesh.creation.cylinder(radius=width / 2, height=thickness, sections=2 * _SECTIONS)
    else:
        solid = trimesh.creation.box(extents=(width, width, thickness))
    solid.apply_translation(centre)
    return solid, Support(kind, (*centre_xy, z_top - thickness), (*centre_xy, z_top), width)


def _manifold(mesh: trimesh.Trimesh) -> manifold3d.Manifold:
    return manifold3d.Manifold(manifold3d.Mesh(vert_properties=np.asarray(mesh.vertices, np.float32),
                                               tri_verts=np.asarray(mesh.faces, np.uint32)))


def _solid(pieces: list[trimesh.Trimesh], size: float, keep_below_y: float | None = None
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


def make_printable(mesh_mm: trimesh.Trimesh, options: PrintOptions = DEFAULT_PRINT_OPTIONS) -> PrintedModel:
    """Join the pieces of a closed surface mesh (in mm) into one solid with struts and a base.

    Parameters
    ----------
    mesh_mm : trimesh.Trimesh
        The surface, already scaled to millimetres, with colours and attributes.
    options : PrintOptions

    Returns
    -------
    PrintedModel
        The solid, moved so that it stands on z = 0 with the axis at x = y = 0.  Vertices
        of the orbital keep their colour, phase and density (nearest surface vertex);
        strut and base vertices are grey with NaN phase and density.

    Notes
    -----
    Check the result with :func:`require_single_solid`: a sealed cavity (nested
    shells without ``cutaway``) is reported there.
    """
    parts = solid_parts(mesh_mm)
    bounds = mesh_mm.bounds
    size = float(np.max(bounds[1] - bounds[0]))
    diameter = max(options.strut_fraction * size, options.min_thickness_mm)
    axis_xy = 0.5 * (bounds[0, :2] + bounds[1, :2])
    pieces = [p for p in parts]
    base_support = None
    use_base = options.base != "none" and not options.cutaway
    if use_base:
        thickness = max(0.04 * size, 2 * options.min_thickness_mm)  # our choice: stiff, not heavy
        base_mesh, base_support = _base(bounds, size, thickness, options.base, gap=0.08 * size)
        pieces.append(base_mesh)
        z_bottom = base_support.start_mm[2] + thickness / 2
    else:
        z_bottom = None
    supports = _plan_struts(parts, axis_xy, diameter, z_bottom)
    pieces.extend(_strut(np.array(s.start_mm), np.array(s.end_mm), s.diameter_mm) for s in supports)
    # a ball where radial struts leave the axis, so no two cylinder walls meet at a tangent
    joints = {s.start_mm for s in supports if s.kind == "radial"}
    for centre in joints:
        supports.append(Support("joint", centre, centre, _JOINT_RATIO * diameter))
        ball = trimesh.creation.icosphere(2, radius=_JOINT_RATIO * diameter / 2)
        pieces.append(_twisted(ball.apply_translation(centre), centre))
    solid = _solid(pieces, size, keep_below_y=axis_xy[1] if options.cutaway else None)
    if options.cutaway:
        # lay the cut face (normal +y) on the bed
        solid.apply_transform(trimesh.geometry.align_vectors([0.0, 1.0, 0.0], [0.0, 0.0, -1.0]))
    low = solid.bounds[0]
    centre = 0.5 * (solid.bounds[0] + solid.bounds[1])
    shift = np.array([-centre[0], -centre[1], -low[2]])
    if not options.cutaway:
        shift[:2] = -axis_xy
    solid.apply_translation(shift)
    moved = mesh_mm.copy()
    if options.cutaway:
        moved.apply_transform(trimesh.geometry.align_vectors([0.0, 1.0, 0.0], [0.0, 0.0, -1.0]))
    moved.apply_translation(shift)
    _transfer_colours(moved, solid, tolerance=1e-3 * size)
    if base_support is not None:
        supports = [*supports, base_support]
    if options.cutaway:
        supports = []  # their coordinates no longer apply after the cut and turn
    else:
        supports = [Support(s.kind, tuple(np.add(s.start_mm, shift).tolist()),
                            tuple(np.add(s.end_mm, shift).tolist()), s.diameter_mm) for s in supports]
    return PrintedModel(solid, len(parts), tuple(supports), options.cutaway)


def _transfer_colours(source: trimesh.Trimesh, target: trimesh.Trimesh, tolerance: float) -> None:
    """Give `target` vertices on `source` its colours and attributes; the rest are supports."""
    distance, nearest = cKDTree(source.vertices).query(target.vertices)
    on_surface = distance <= tolerance
    rgba = np.tile(np.array(SUPPORT_RGBA, dtype=np.uint8), (len(target.vertices), 1))
    if source.visual.kind == "vertex":
        rgba[on_surface] = source.visual.vertex_colors[nearest[on_surface]]
    target.visual.vertex_colors = rgba
    for key, value in source.vertex_attributes.items():
        values = np.full(len(target.vertices), np.nan, dtype=np.float32)
        values[on_surface] = np.asarray(value)[nearest[on_surface]]
        target.vertex_attributes[key] = values


def single_solid_problems(mesh: trimesh.Trimesh) -> list[str]:
    """Why `mesh` is not one closed, consistently oriented solid of positive volume ([] if it is).

    Examples
    --------
    >>> import trimesh
    >>> single_solid_problems(trimesh.creation.box())
    []
    >>> box = trimesh.creation.box()
    >>> single_solid_problems(trimesh.util.concatenate([box, box.copy().apply_translation([3, 0, 0])]))
    ['it has 2 separate surfaces (disjoint pieces or a sealed cavity)']
    """
    problems = []
    if not mesh.is_watertight:
        problems.append("it is not closed (some edges do not join exactly two faces)")
    if not mesh.is_winding_consistent:
        problems.append("its faces are not consistently oriented")
    bodies = len(face_components(mesh)) if len(mesh.faces) else 0
    if bodies != 1:
        problems.append(f"it has {bodies} separate surfaces (disjoint pieces or a sealed cavity)")
    if not (len(mesh.faces) and mesh.volume > 0):
        problems.append("its volume is not positive")
    return problems


def require_single_solid(mesh: trimesh.Trimesh) -> None:
    """Raise UserInputError with the reasons if `mesh` is not one printable solid."""
    problems = single_solid_problems(mesh)
    if problems:
        hint = ""
        if any("sealed cavity" in p for p in problems):
            hint = ("; a shell inside a shell stays a sealed cavity: open it with --cutaway "
                    "or write the pieces separately with --parts")
        raise UserInputError("the model is not one printable solid: " + "; ".join(problems) + hint)


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


def _crossings(mesh: trimesh.Trimesh, origin: np.ndarray, direction: np.ndarray) -> np.ndarray:
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


def _contains(mesh: trimesh.Trimesh, point: np.ndarray) -> bool:
    """True if `point` is inside the closed `mesh` (odd number of crossings of a ray from it,
    along a direction of our choice that no symmetric lattice mesh has edges along)."""
    direction = np.array([0.5477, 0.3651, 0.7531])
    return len(_crossings(mesh, point, direction / np.linalg.norm(direction))) % 2 == 1


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
