"""Mesh step, export: a Surface to a coloured mesh file at a chosen unit or printed size, with a report.

The file format follows the suffix (``.ply``, ``.obj``, ``.stl``, ``.glb``, ``.3mf``;
one module per format beside this one).  Coordinates are in a0 unless another
length unit is asked for; ``size_mm`` instead scales the surface so that the
largest side of its bounding box is that many millimetres (the unit printer
slicers assume).  Every file is written through :func:`orbitalrender.atomic.atomic_path`
and checked by reading it back (vertex and face counts, enclosed volume) before it
replaces an earlier file: PLY, OBJ and STL with this package's own readers, GLB and 3MF
with trimesh's.  A plain export (no print preparation, no split) works on
:class:`~orbitalrender.mesh.arrays.MeshArrays` and never imports trimesh.  The report's
figures of a file that holds the surface as it is (no print preparation) follow from the
surface's own topology and the scale: counts and Euler characteristics are unchanged,
volumes scale by factor^3.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from ..atomic import atomic_path
from ..colormap import PHASE_SCHEMES, psi_to_rgb
from ..errors import UserInputError
from ..state.limits import SIZE_MM_RANGE
from ..state.phase import sign_rotation
from ..state.units import a0_to
from ..surface.model import Surface
from ..surface.topology import Topology, mesh_topology, topology, volume_spread
from . import glb, obj, ply, stl, threemf
from .arrays import MeshArrays, as_arrays, as_trimesh, extent

__all__ = [
    "MESH_SUFFIXES",
    "mesh_suffix",
    "check_size_mm",
    "check_mm_per_a0",
    "length_scale",
    "surface_arrays",
    "surface_mesh",
    "encode_bodies",
    "write_bodies",
    "file_mesh",
    "mesh_summary",
    "surface_report",
]

#: File suffix -> the format module that encodes it.
MESH_SUFFIXES = {m.SUFFIX: m for m in (ply, obj, stl, glb, threemf)}
_MM3_PER_CM3 = 1000.0
#: Largest change of the enclosed volume between the bodies and the file read back,
#: relative to the sum of the unsigned tetrahedron volumes: float32 coordinates round at
#: 6e-8 relative, so this leaves a wide margin for storage while a mis-scaled, mirrored or
#: garbled file fails it (the counts catch lost faces).
_VOLUME_TOLERANCE = 1e-5


def mesh_suffix(path: str | os.PathLike) -> str:
    """The lower-case suffix of `path`, or UserInputError if it is not a mesh format we write.

    Examples
    --------
    >>> mesh_suffix("lobes.STL")
    '.stl'
    """
    suffix = Path(path).suffix.lower()
    if suffix not in MESH_SUFFIXES:
        raise UserInputError(f"cannot tell the mesh format of {os.fspath(path)!r}: the name must end in "
                             f"{', '.join(MESH_SUFFIXES)}")
    return suffix


def length_scale(vertices_a0: np.ndarray, units: str = "a0", size_mm: float | None = None, *,
                 mm_per_a0: float | None = None) -> tuple[float, str]:
    """(factor, unit): multiply a0 coordinates by `factor` to get lengths in `unit`.

    With `size_mm` the unit is ``"mm"`` and the factor makes the largest side of the
    bounding box of `vertices_a0` equal to `size_mm`; with `mm_per_a0` (a scale common
    to any number of models, so their sizes compare) the unit is ``"mm"`` and the factor
    is that scale; otherwise the unit is `units` (a0, angstrom, nm, pm) at its physical
    value.  `size_mm` and `mm_per_a0` exclude each other.

    Examples
    --------
    >>> import numpy as np
    >>> length_scale(np.array([[-2.0, 0, 0], [2.0, 1, 1]]), size_mm=40.0)
    (10.0, 'mm')
    >>> length_scale(np.zeros((1, 3)), mm_per_a0=2.5)
    (2.5, 'mm')
    >>> round(length_scale(np.zeros((1, 3)), "angstrom")[0], 6)
    0.529177
    """
    if size_mm is not None and mm_per_a0 is not None:
        raise UserInputError("give either the printed size in mm or the scale in mm per a0, not both")
    if mm_per_a0 is not None:
        return check_mm_per_a0(mm_per_a0), "mm"
    if size_mm is None:
        try:
            return a0_to(units), units
        except ValueError as exc:
            raise UserInputError(str(exc)) from None
    size_mm = check_size_mm(size_mm)
    largest = float(np.max(extent(vertices_a0)))
    if largest <= 0:
        raise UserInputError("the surface has no extent to scale")
    return size_mm / largest, "mm"


def check_size_mm(size_mm: float) -> float:
    """`size_mm` as a float, or UserInputError if it is not a length in SIZE_MM_RANGE (mm).

    Examples
    --------
    >>> check_size_mm(60)
    60.0
    """
    size_mm = float(size_mm)
    lo, hi = SIZE_MM_RANGE  # (sizes outside once overflowed or divided by zero downstream)
    if not lo <= size_mm <= hi:
        raise UserInputError(f"the printed size must be {lo:g} to {hi:g} millimetres (no printer makes "
                             f"a smaller or larger object), got {size_mm:g}")
    return size_mm


def check_mm_per_a0(mm_per_a0: float) -> float:
    """`mm_per_a0` as a float, or UserInputError if it is not a positive, finite scale.

    Examples
    --------
    >>> check_mm_per_a0(2)
    2.0
    """
    mm_per_a0 = float(mm_per_a0)
    if not (mm_per_a0 > 0 and math.isfinite(mm_per_a0)):
        raise UserInputError(f"the scale must be a positive number of millimetres per a0, got {mm_per_a0:g}")
    return mm_per_a0


def surface_arrays(surface: Surface, factor: float = 1.0, scheme: str = "uniform") -> MeshArrays:
    """The surface as mesh arrays with coordinates times `factor`, phase colours (RGBA
    uint8), the surface's normals (from the exact density gradient; a uniform scale leaves
    them unchanged) and vertex attributes ``phase`` (rad) and ``density`` (|psi|^2, a0^-3).

    Before the ``"sign"`` map the global phase is removed by the one rule of
    :func:`orbitalrender.state.phase.sign_rotation` (a complex state is refused), so the
    colours agree with the sign map of figures and sections.

    Examples
    --------
    >>> import numpy as np
    >>> from orbitalrender.surface.model import Surface
    >>> v = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
    >>> f = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])
    >>> s = Surface(v, f, v, np.ones(4, complex), 0.1, None, None, None, (2, 2, 2), (1, 1, 1))
    >>> m = surface_arrays(s, factor=2.0)
    >>> m.vertices.max(), m.rgba.shape, sorted(m.attributes)
    (np.float64(2.0), (4, 4), ['density', 'phase'])
    """
    if scheme not in PHASE_SCHEMES:
        raise UserInputError(f"unknown phase colour map {scheme!r}: use one of {', '.join(PHASE_SCHEMES)}")
    rotation = sign_rotation(surface.state, surface.psi) if scheme == "sign" else 1.0 + 0.0j
    rgb = psi_to_rgb(surface.psi, scheme, rotation=rotation)
    rgba = np.empty((len(rgb), 4), dtype=np.uint8)
    rgba[:, :3] = np.clip(np.round(rgb * 255.0), 0, 255)
    rgba[:, 3] = 255
    return MeshArrays(np.asarray(surface.vertices_a0, float) * factor, np.asarray(surface.faces, np.int64),
                      rgba, np.asarray(surface.normals, float),
                      {"phase": surface.phase.astype(np.float32),
                       "density": (surface.magnitude ** 2).astype(np.float32)})


def surface_mesh(surface: Surface, factor: float = 1.0, scheme: str = "uniform"):
    """:func:`surface_arrays` as a trimesh mesh (``visual.vertex_colors``, ``vertex_normals``
    and ``vertex_attributes`` ``phase`` and ``density``), for print preparation and splits.

    Examples
    --------
    >>> from orbitalrender import eigenstate
    >>> from orbitalrender.surface.extract import extract_surface
    >>> mesh = surface_mesh(extract_surface(eigenstate(1, 0, 0), 0.5, resolution=16))
    >>> mesh.is_watertight, mesh.vertex_attributes["phase"].dtype
    (True, dtype('float32'))
    """
    return as_trimesh(surface_arrays(surface, factor, scheme))


def encode_bodies(bodies: Sequence[MeshArrays], suffix: str, names: Sequence[str] | None = None,
                  comment: str = "", units: str = "") -> bytes:
    """The file contents for `bodies` in the format of `suffix` (see :data:`MESH_SUFFIXES`)."""
    if suffix == ".glb":
        return glb.encode_glb(bodies, names=names, units=units)
    if suffix == ".obj":
        return obj.encode_obj(bodies, comment=comment, names=names)
    if suffix == ".ply":
        return ply.encode_ply(bodies, comment=comment)
    if suffix == ".3mf":
        return threemf.encode_3mf(bodies, names=names, units=units, title=comment)
    return stl.encode_stl(bodies, comment=comment)


#: Formats read back by this package's readers; the others by trimesh's.
_READERS = {".ply": ply.read_ply, ".obj": obj.read_obj, ".stl": stl.read_stl}


def _reload(path: Path, suffix: str) -> MeshArrays:
    """The file read back as one mesh (all bodies together)."""
    if suffix in _READERS:
        return _READERS[suffix](path.read_bytes())
    import trimesh

    loaded = trimesh.load(path, file_type=suffix[1:], process=False, force="mesh")
    if not isinstance(loaded, trimesh.Trimesh):
        raise OSError(f"{path} did not read back as a triangle mesh")
    return MeshArrays(np.asarray(loaded.vertices, float), np.asarray(loaded.faces, np.int64))


def write_bodies(path: str | os.PathLike, bodies: Sequence, names: Sequence[str] | None = None,
                 comment: str = "", units: str = "", check: Callable | None = None,
                 verify: bool = True) -> MeshArrays | None:
    """Write `bodies` to `path` (format from the suffix) and return the file as read back.

    Parameters
    ----------
    path : path-like
        The file; its suffix gives the format.
    bodies : sequence of MeshArrays or trimesh.Trimesh
        What to write (trimesh meshes are taken through
        :func:`~orbitalrender.mesh.arrays.as_arrays`).
    names, comment, units : optional
        Body names (OBJ, GLB, 3MF), the header comment and the unit recorded in the file.
    check : callable, optional
        Called with the file as read back (a trimesh mesh, STL corners merged); may raise
        to refuse the file.
    verify : bool
        Read the file back (default).  ``verify=False`` skips it and returns None; it is
        refused together with a `check`.

    Returns
    -------
    MeshArrays or None
        Vertices and faces as read back from the file (for STL, three corners per face).

    Notes
    -----
    The file is written to a temporary name beside `path` and read back; its vertex and
    face counts must match what was written (STL stores each triangle's corners
    separately, so there only faces are counted) and so must its enclosed volume.  Only
    then does it replace `path`: on any failure an earlier file at `path` is left as it was.
    """
    suffix = mesh_suffix(path)
    if check is not None and not verify:
        raise ValueError("a check needs the file read back (verify=True)")
    bodies = [b if isinstance(b, MeshArrays) else as_arrays(b) for b in bodies]
    data = encode_bodies(bodies, suffix, names=names, comment=comment, units=units)
    vertices = sum(len(b.vertices) for b in bodies)
    faces = sum(len(b.faces) for b in bodies)
    with atomic_path(path) as tmp:
        tmp.write_bytes(data)
        if not verify:
            return None
        loaded = _reload(tmp, suffix)
        if len(loaded.faces) != faces or (suffix != ".stl" and len(loaded.vertices) != vertices):
            raise OSError(f"{path} read back with {len(loaded.vertices)} vertices and "
                          f"{len(loaded.faces)} faces instead of {vertices} and {faces}")
        written = [volume_spread(b.vertices, b.faces) for b in bodies]
        volume, spread = volume_spread(loaded.vertices, loaded.faces)
        expected = sum(v for v, _ in written)
        if abs(volume - expected) > _VOLUME_TOLERANCE * max(spread, sum(s for _, s in written)):
            raise OSError(f"{path} read back enclosing {volume:.9g} instead of {expected:.9g} "
                          "cubic units")
        if check is not None:
            check(file_mesh(loaded, suffix))
    return loaded


def file_mesh(loaded: MeshArrays, suffix: str):
    """A mesh read back by :func:`write_bodies` as a trimesh mesh, the corners of an STL
    merged into shared vertices (as slicers do)."""
    mesh = as_trimesh(MeshArrays(loaded.vertices, loaded.faces))
    if suffix == ".stl":
        mesh.merge_vertices()
    return mesh


def mesh_summary(figures: Topology, factor: float, vertices: int, faces: int) -> dict:
    """Counts, components, Euler characteristics (largest part first), watertightness and
    volume of a written mesh whose lengths are a0 times `factor`.

    `figures` is the topology of the mesh in a0 (volumes in a0^3); the volume is returned
    in a0^3 and in the file's unit^3.  Watertight means closed with a consistent winding.
    """
    order = sorted(range(figures.components), key=lambda k: -figures.face_counts[k])
    return {
        "vertices": int(vertices),
        "faces": int(faces),
        "components": int(figures.components),
        "euler_characteristics": [int(figures.euler_characteristics[k]) for k in order],
        "watertight": bool(figures.closed and figures.oriented),
        "volume_a0_3": float(figures.volume_a0_3),
        "volume_units3": float(figures.volume_a0_3) * factor**3,
    }


def surface_report(surface: Surface, factor: float, unit: str, size_mm: float | None = None,
                   written=None) -> dict:
    """The JSON-ready report of an export: the surface's provenance and the written mesh's
    geometry (top level), the surface's own topology (``surface``, in a0, from
    :func:`orbitalrender.surface.topology.topology`).

    In millimetres (after a printed size `size_mm` or a scale) it also has
    ``mm_per_a0``; ``extent_mm``, the sides of the bounding box of the file written
    (struts, base and cut included) and ``size_mm``, the largest of them;
    ``size_requested_mm`` (`size_mm`, or None at a given scale); ``orbital_extent_mm``,
    the sides of the whole surface's own bounding box at that scale; and
    ``material_cm3``, the solid volume of the written model.

    `written` is the mesh written (trimesh mesh or MeshArrays) when it is not the surface
    itself scaled by `factor` (a printable model with struts and base); its figures are
    then computed from it.
    Otherwise they follow from the surface's topology, computed once.
    """
    figures = topology(surface)
    extent_a0 = extent(surface.vertices_a0)
    if written is None:
        summary = mesh_summary(figures, factor, len(surface.vertices_a0), len(surface.faces))
        extent_units = extent_a0 * factor
        if size_mm is not None:  # factor = size_mm / largest side (length_scale; never 0)
            # the same to a rounding, with the largest side exactly the size asked for
            # (largest * (size / largest) can be one unit in the last place off)
            extent_units = extent_a0 / extent_a0.max() * float(size_mm)
    else:
        model = mesh_topology(np.asarray(written.vertices) / factor, written.faces)
        summary = mesh_summary(model, factor, len(written.vertices), len(written.faces))
        extent_units = extent(written.vertices)
    report = {
        "state": surface.state.label if surface.state is not None else None,
        "fraction_requested": surface.fraction_requested,
        "fraction_enclosed": surface.fraction_enclosed,
        "fraction_error": surface.fraction_error,
        "level": surface.level,
        "lattice_shape": list(surface.lattice_shape),
        "spacing_a0": list(surface.spacing_a0),
        "units": unit,
        "units_per_a0": factor,
        "extent_a0": [float(e) for e in extent_a0],
    }
    report.update(summary)
    report["surface"] = figures.as_dict()
    if unit == "mm":
        report["mm_per_a0"] = factor
        report["extent_mm"] = [float(e) for e in extent_units]
        report["size_mm"] = max(report["extent_mm"])
        report["size_requested_mm"] = None if size_mm is None else float(size_mm)
        report["orbital_extent_mm"] = [e * factor for e in report["extent_a0"]]
        report["material_cm3"] = report["volume_units3"] / _MM3_PER_CM3
    return report
