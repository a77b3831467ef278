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

Wall thickness and gaps are checked by :mod:`orbitalrender.mesh.walls`.

The struts and base are not part of the orbital: they are grey in coloured
files, with NaN phase and density.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import trimesh
from scipy.spatial import cKDTree

from ..errors import UserInputError
from .arrays import SUPPORT_RGBA
from .bodies import concatenate, face_components, submesh
from .export import check_size_mm
from .print_options import DEFAULT_PRINT_OPTIONS, PrintOptions
from .union import solid_union
from .walls import contains_point, crossings

__all__ = [
    "Support",
    "PrintedModel",
    "solid_parts",
    "make_printable",
    "single_solid_problems",
    "require_single_solid",
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
class PrintedModel:
    """The prepared solid (mm, lowest point at z = 0, axis at x = y = 0) and how it was made."""

    mesh: trimesh.Trimesh
    parts_joined: int
    supports: tuple[Support, ...]
    cutaway: bool
    #: Factor applied to the input mesh's coordinates to reach the printed size asked for (else 1).
    scale: float = 1.0


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
        owner = next((j for j in outers if volumes[j] > -v and contains_point(comps[j], point[0])), None)
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
    t = crossings(mesh, origin, direction)
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


#: The turn that lays a cutaway model on its cut face: the face's outward normal +y to -z.
_CUT_TURN = trimesh.geometry.align_vectors([0.0, 1.0, 0.0], [0.0, 0.0, -1.0])
#: Relative error of the printed size at which the search for the scale stops (our choice:
#: far inside the 1 % promised, and reached in two to four steps) and the most steps it takes.
_SIZE_TOLERANCE = 1e-6
_SIZE_STEPS = 12


@dataclass(frozen=True)
class _Plan:
    """The closed pieces whose union is the model (orbital parts, base, struts, joint balls),
    the supports among them, the axis and the orbital's largest side (mm)."""

    pieces: tuple[trimesh.Trimesh, ...]
    supports: tuple[Support, ...]
    axis_xy: np.ndarray
    size: float


def _plan(parts: list[trimesh.Trimesh], options: PrintOptions) -> _Plan:
    """Base, struts and joints for `parts` (mm), sized from the orbital's largest side:

    * strut diameter: `strut_fraction` of it, never below `min_thickness_mm`;
    * base thickness: 4 % of it, never below twice `min_thickness_mm` (our choice: stiff,
      not heavy); base width: 60 % of it, never narrower than the model's footprint;
    * gap between base and model: 8 % of it (our choice: the base reads as a stand), never
      below twice `min_gap_mm`, so it does not fuse shut.
    """
    corners = np.vstack([p.bounds for p in parts])
    bounds = np.array([corners.min(axis=0), corners.max(axis=0)])
    size = float(np.max(bounds[1] - bounds[0]))
    diameter = max(options.strut_fraction * size, options.min_thickness_mm)
    axis_xy = 0.5 * (bounds[0, :2] + bounds[1, :2])
    pieces = list(parts)
    base_support = None
    z_bottom = None
    if options.base != "none" and not options.cutaway:
        thickness = max(0.04 * size, 2 * options.min_thickness_mm)
        base_mesh, base_support = _base(bounds, size, thickness, options.base,
                                        gap=max(0.08 * size, 2 * options.min_gap_mm))
        pieces.append(base_mesh)
        z_bottom = base_support.start_mm[2] + thickness / 2
    supports = _plan_struts(parts, axis_xy, diameter, z_bottom)
    pieces.extend(_strut(np.array(s.start_mm), np.array(s.end_mm), s.diameter_mm) for s in supports)
    # a ball where radial struts leave the axis, so no two cylinder walls meet at a tangent
    for centre in sorted({s.start_mm for s in supports if s.kind == "radial"}):
        supports.append(Support("joint", centre, centre, _JOINT_RATIO * diameter))
        ball = trimesh.creation.icosphere(2, radius=_JOINT_RATIO * diameter / 2)
        pieces.append(_twisted(ball.apply_translation(centre), centre))
    if base_support is not None:
        supports.append(base_support)
    return _Plan(tuple(pieces), tuple(supports), axis_xy, size)


def _planned_extent(plan: _Plan, cutaway: bool) -> np.ndarray:
    """Sides (mm) of the bounding box of the model that `plan` joins, without joining it.

    The union of closed pieces has the bounding box of all of them.  A cut to
    y <= axis keeps, of each piece, the corners on the kept side and the points where its
    edges cross the cut plane, and these span the bounding box of the cut piece.
    """
    if not cutaway:
        return np.ptp(np.vstack([p.bounds for p in plan.pieces]), axis=0)
    y = float(plan.axis_xy[1])
    points = []
    for piece in plan.pieces:
        v = piece.vertices
        points.append(v[v[:, 1] <= y])
        a, b = v[piece.edges[:, 0]], v[piece.edges[:, 1]]
        crossing = (a[:, 1] - y) * (b[:, 1] - y) < 0
        a, b = a[crossing], b[crossing]
        points.append(a + ((y - a[:, 1]) / (b[:, 1] - a[:, 1]))[:, None] * (b - a))
    return np.ptp(np.vstack(points) @ _CUT_TURN[:3, :3].T, axis=0)


def _scale_for_size(parts: list[trimesh.Trimesh], options: PrintOptions, size_mm: float) -> float:
    """The factor on `parts` that makes the largest side of the whole printed model `size_mm`.

    The printed size is a continuous, increasing, piecewise linear function of the factor
    (each support is a fixed fraction of the orbital's size or a fixed minimum), so a
    secant search on it, evaluated from plans without joining them, ends in a few steps.
    """
    def printed(scale: float) -> float:
        scaled = [trimesh.Trimesh(p.vertices * scale, p.faces, process=False) for p in parts]
        return float(np.max(_planned_extent(_plan(scaled, options), options.cutaway)))

    orbital = float(np.max(np.ptp(np.vstack([p.bounds for p in parts]), axis=0)))
    s0 = size_mm / orbital
    f0 = printed(s0)
    s1 = s0 * size_mm / f0
    f1 = printed(s1)
    for _ in range(_SIZE_STEPS):
        if abs(f1 - size_mm) <= _SIZE_TOLERANCE * size_mm:
            return s1
        if f1 == f0:
            break
        s0, f0, s1 = s1, f1, s1 + (size_mm - f1) * (s1 - s0) / (f1 - f0)
        if s1 <= 0:
            raise UserInputError(
                f"a printed size of {size_mm:g} mm leaves no room for the orbital beside a base and struts "
                f"at least {options.min_thickness_mm:g} mm thick; give a larger size")
        f1 = printed(s1)
    if abs(f1 - size_mm) <= 1e-3 * size_mm:  # a kink met late: still well inside 1 %
        return s1
    raise RuntimeError(f"no scale found that prints {size_mm:g} mm (closest {f1:.4g} mm)")


def make_printable(mesh_mm: trimesh.Trimesh, options: PrintOptions = DEFAULT_PRINT_OPTIONS, *,
                   size_mm: float | None = None) -> PrintedModel:
    """Join the pieces of a closed surface mesh (in mm) into one solid with struts and a base.

    Parameters
    ----------
    mesh_mm : trimesh.Trimesh
        The surface, in millimetres, with colours and attributes.
    options : PrintOptions
    size_mm : float, optional
        The largest side of the whole printed object, base, struts and cut included: the
        surface is first scaled by the factor that gives it (``PrintedModel.scale``).
        Without it the surface keeps its size and the supports are added around it.

    Returns
    -------
    PrintedModel
        The solid, moved so that it stands on z = 0 with the axis at x = y = 0.  Vertices
        of the orbital keep their colour, phase and density (nearest surface vertex);
        strut and base vertices are grey with NaN phase and density.

    Notes
    -----
    Check the result with :func:`require_single_solid`: a sealed cavity (nested
    shells without ``cutaway``) is reported there.  Supports are sized from the
    orbital's own largest side (see :func:`_plan`), so at a common scale each model of
    a set gets struts in proportion to itself, never thinner than the printable minimum.
    """
    parts = solid_parts(mesh_mm)
    scale = 1.0
    if size_mm is not None:
        scale = _scale_for_size(parts, options, check_size_mm(size_mm))
        mesh_mm = mesh_mm.copy()
        mesh_mm.vertices = mesh_mm.vertices * scale
        for part in parts:
            part.vertices = part.vertices * scale
    plan = _plan(parts, options)
    axis_xy = plan.axis_xy
    solid = solid_union(list(plan.pieces), plan.size, keep_below_y=axis_xy[1] if options.cutaway else None)
    if options.cutaway:
        solid.apply_transform(_CUT_TURN)  # lay the cut face (normal +y) on the bed
    low = solid.bounds[0]
    centre = 0.5 * (solid.bounds[0] + solid.bounds[1])
    shift = np.array([-centre[0], -centre[1], -low[2]])
    if not options.cutaway:
        shift[:2] = -axis_xy
    solid.apply_translation(shift)
    moved = mesh_mm.copy()
    if options.cutaway:
        moved.apply_transform(_CUT_TURN)
    moved.apply_translation(shift)
    _transfer_colours(moved, solid, tolerance=1e-3 * plan.size)
    if options.cutaway:
        supports = ()  # their coordinates no longer apply after the cut and turn
    else:
        supports = tuple(Support(s.kind, tuple(np.add(s.start_mm, shift).tolist()),
                                 tuple(np.add(s.end_mm, shift).tolist()), s.diameter_mm)
                         for s in plan.supports)
    return PrintedModel(solid, len(parts), supports, options.cutaway, scale)


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
