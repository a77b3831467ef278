"""Mesh step, whole: a Surface to written mesh files (plain, printable, parts or bodies) and their report.

The command line (``orbitalrender mesh``), the gallery and Python users all call
:func:`export_mesh`, so the same request gives the same files and the same report
everywhere.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import numpy as np

from ..atomic import output_set, retire_siblings
from ..errors import UserInputError
from ..lattice.grid import Lattice
from ..surface.model import Surface
from .export import (
    file_mesh,
    length_scale,
    mesh_suffix,
    surface_arrays,
    surface_mesh,
    surface_report,
    write_bodies,
)
from .print_options import PrintOptions

__all__ = ["export_mesh", "sibling_path", "SPLITS", "BODY_LABELS"]

SPLITS = ("sign", "phase")
#: The name inside a file of each body of a sign split (its file name keeps the key).
BODY_LABELS = {"positive": "psi>0", "negative": "psi<0"}


def sibling_path(path: str | os.PathLike, name: str) -> Path:
    """FILE_name.EXT beside FILE.EXT.

    Examples
    --------
    >>> sibling_path("out/2pz.stl", "part1").as_posix()
    'out/2pz_part1.stl'
    """
    path = Path(path)
    return path.with_name(f"{path.stem}_{name}{path.suffix}")


def _family_pattern(path: Path) -> str:
    """The names of every file that one mesh export to `path` can write: FILE.EXT itself and
    its siblings FILE_partK.EXT, FILE_bandK.EXT, FILE_positive.EXT and FILE_negative.EXT."""
    stem, suffix = re.escape(path.stem), re.escape(path.suffix)
    return rf"{stem}(_(part\d+|band\d+|positive|negative))?{suffix}"


def _mean_phase(mesh) -> float:
    """Circular mean of the vertex phases of a body (a trimesh mesh), radians."""
    phase = np.asarray(mesh.vertex_attributes["phase"], float)
    return float(np.angle(np.mean(np.exp(1j * phase))))


def export_mesh(surface: Surface, path: str | os.PathLike, *, units: str = "a0",
                size_mm: float | None = None, mm_per_a0: float | None = None, phase_map: str = "uniform",
                printable: PrintOptions | None = None, parts: bool = False,
                split: str | None = None, bands: int = 4, separate: bool = False,
                lattice: Lattice | None = None) -> dict:
    """Write `surface` as a mesh file (format from the suffix of `path`) and return the report.

    Parameters
    ----------
    surface : Surface
        From :func:`orbitalrender.surface.extract.extract_surface`.
    path : path-like
        ``.ply``, ``.obj``, ``.stl``, ``.glb`` or ``.3mf`` (which needs millimetres).
    units : str
        Length unit of the coordinates (a0, angstrom, nm, pm) when neither `size_mm` nor
        `mm_per_a0` is given.
    size_mm : float, optional
        Millimetres of the largest side of what is written: of the whole printed object
        (base, struts and cut included) with `printable`, else of the surface.
    mm_per_a0 : float, optional
        A scale instead of a size, so models at one scale compare; with `printable` the
        supports are added around the orbital at that scale.
    phase_map : str
        Vertex colour scheme (see :mod:`orbitalrender.colormap`).
    printable : PrintOptions, optional
        Join the pieces into one checked solid with struts and a base (needs `size_mm` or
        `mm_per_a0`).
    parts : bool
        Write each solid piece to FILE_partK.EXT instead of joining them; the wall limit
        comes from `printable` (default :class:`PrintOptions`).
    split : {"sign", "phase"}, optional
        Bodies by the sign of psi (real states) or by `bands` phase bands (needs `lattice`).
    separate : bool
        With `split`, one file per body (always so for STL).
    lattice : Lattice, optional
        The lattice the surface came from; needed for ``split="phase"``.

    Notes
    -----
    The files of one export are replaced together (:func:`orbitalrender.atomic.output_set`):
    on a failure the earlier set is kept; after success, files of the same set from an
    earlier export that this one did not write (``FILE_part3.stl`` when there are now two
    parts, body files of another split, FILE.EXT itself after ``parts``) are removed.

    Returns
    -------
    dict
        JSON-ready: the surface's provenance, the written mesh's counts, components, Euler
        characteristics, watertightness and volume, ``files``, and in millimetres also the
        sizes of :func:`~orbitalrender.mesh.export.surface_report`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from orbitalrender import eigenstate
    >>> from orbitalrender.surface.extract import extract_surface
    >>> s = extract_surface(eigenstate(1, 0, 0), 0.9, resolution=32)
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "1s.stl"
    >>> rep = export_mesh(s, out, size_mm=50)
    >>> rep["components"], rep["watertight"], round(max(rep["extent_mm"]), 6)
    (1, True, 50.0)
    """
    path = Path(path)
    suffix = mesh_suffix(path)
    if split is not None and split not in SPLITS:
        raise UserInputError(f"unknown split {split!r}: use one of {', '.join(SPLITS)}")
    factor, unit = length_scale(surface.vertices_a0, units, size_mm, mm_per_a0=mm_per_a0)
    if (printable is not None or parts) and unit != "mm":
        raise UserInputError("printing options need a printed size in mm (size_mm) or a scale in mm "
                             "per a0 (mm_per_a0)")
    if suffix == ".3mf" and unit != "mm":
        raise UserInputError("a .3mf file holds millimetres: give a printed size in mm (size_mm) or a "
                             "scale in mm per a0 (mm_per_a0)")
    if split and (printable is not None or parts):
        raise UserInputError("a split writes bodies for multi-material printing and cannot be "
                             "combined with a printable model or parts")
    if split == "phase" and lattice is None:
        raise UserInputError("a phase split needs the lattice the surface came from")
    with output_set():
        retire_siblings(path, _family_pattern(path))
        return _export(surface, path, suffix, factor, unit, size_mm, phase_map, printable, parts,
                       split, bands, separate, lattice)


def _export(surface: Surface, path: Path, suffix: str, factor: float, unit: str,
            size_mm: float | None, phase_map: str, printable: PrintOptions | None, parts: bool,
            split: str | None, bands: int, separate: bool, lattice: Lattice | None) -> dict:
    """The writing half of :func:`export_mesh`, inside its output set.  Only print preparation
    and splits need trimesh (and load it); a plain file is written from the surface's arrays."""
    label = surface.state.label if surface.state is not None else "user field"
    comment = f"{label}; F = {surface.fraction_requested:g}; units {unit}"
    extra: dict = {}
    files: list[str] = []
    written = None

    def write(target: Path, bodies, names=None, check=None):
        loaded = write_bodies(target, bodies, names=names, comment=comment, units=unit, check=check)
        files.append(str(target))
        return loaded

    if parts:
        from .printable import single_solid_problems, solid_parts
        from .walls import thin_spots

        options = printable if printable is not None else PrintOptions()
        summaries = []
        for i, piece in enumerate(solid_parts(surface_mesh(surface, factor, phase_map)), start=1):
            target = sibling_path(path, f"part{i}")
            read_back = file_mesh(write(target, [piece]), suffix)
            summaries.append({"file": str(target), "problems": single_solid_problems(read_back),
                              "volume_mm3": float(read_back.volume),
                              "thin_walls": thin_spots(read_back, options.min_thickness_mm).as_dict()})
        extra["parts"] = summaries
    elif printable is not None:
        from .printable import make_printable, require_single_solid
        from .walls import thin_spots

        model = make_printable(surface_mesh(surface, factor, phase_map), printable, size_mm=size_mm)
        factor *= model.scale
        written = file_mesh(write(path, [model.mesh], check=require_single_solid), suffix)
        extra["printable"] = {
            "parts_joined": model.parts_joined,
            "cutaway": model.cutaway,
            "supports": [vars(s) for s in model.supports],
            "thin_walls": thin_spots(model.mesh, printable.min_thickness_mm, "wall").as_dict(),
            "narrow_gaps": thin_spots(model.mesh, printable.min_gap_mm, "gap").as_dict(),
        }
    elif split:
        from .split import phase_band_surfaces, split_by_sign

        if split == "sign":
            named = split_by_sign(surface_mesh(surface, factor, phase_map), surface.psi, state=surface.state)
        else:
            named = {f"band{k + 1}": surface_mesh(b, factor, phase_map)
                     for k, b in enumerate(phase_band_surfaces(lattice, surface.level, bands))}
        labels = {name: BODY_LABELS.get(name, name) for name in named}
        if separate or suffix == ".stl":
            for name, body in named.items():
                write(sibling_path(path, name), [body], names=[labels[name]])
        else:
            write(path, list(named.values()), names=list(labels.values()))
        extra["bodies"] = {name: {"label": labels[name], "faces": int(len(b.faces)),
                                  "watertight": bool(b.is_watertight), "mean_phase_rad": _mean_phase(b)}
                           for name, b in named.items()}
    else:
        write(path, [surface_arrays(surface, factor, phase_map)])

    # only a printable model differs from the surface scaled by `factor`
    report = surface_report(surface, factor, unit, size_mm, written=written)
    report.update(extra)
    report["files"] = files
    return report
