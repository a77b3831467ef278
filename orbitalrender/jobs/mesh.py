"""Jobs step for meshes: the options of a mesh file (plain, printable, parts or bodies) and the job.

Lengths are in a0 unless ``units``, ``size_mm`` or ``mm_per_a0`` says otherwise.  ``printable``
joins the pieces into one solid with struts and a base and checks it (see
:mod:`orbitalrender.mesh.printable`); ``parts`` writes the pieces to separate
files instead; ``split`` writes bodies by the sign (real states) or phase band
(complex states) of psi, for two- or more-material printing.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any, ClassVar

from ..errors import UserInputError
from ..mesh.print_options import (
    BASES,
    DEFAULT_MIN_GAP_MM,
    DEFAULT_MIN_THICKNESS_MM,
    DEFAULT_STRUT_FRACTION,
)
from ..state.limits import FRACTION_MAX, SIZE_MM_RANGE
from .option import option
from .shared import (
    FRACTION,
    FRACTION_HELP,
    LENGTH_UNITS,
    PHASE_MAPS,
    FieldOptions,
    FileOptions,
    LatticeOptions,
    StateOptions,
)

__all__ = ["MeshOptions", "BASES", "MESH_SUFFIXES", "check_mesh", "print_options", "mesh_job"]

#: Mesh formats, by suffix; the first is the gallery's default.
MESH_SUFFIXES = (".stl", ".glb", ".ply", ".obj", ".3mf")
#: Largest scale accepted, mm per a0 (our choice: a 3s model at F = 0.9 is then 39 m across,
#: so any larger value is a mistake of unit).
_MAX_MM_PER_A0 = 1000.0


@dataclass(frozen=True)
class MeshOptions(FileOptions, LatticeOptions, FieldOptions, StateOptions):
    """Options of a mesh (gallery kind ``mesh``; the mesh command)."""

    STATE_NARGS: ClassVar[str] = "?"
    states: tuple[str, ...] = ()
    fraction: float = option(FRACTION, FRACTION_HELP, lo=0, hi=FRACTION_MAX, lo_open=True, metavar="F")
    units: str = option("a0", "length unit of the coordinates", type="text", choices=LENGTH_UNITS)
    size_mm: float | None = option(None, "the largest side of what is written, in mm: with printable the "
                                   "whole printed object (base, struts and cut included), else the surface",
                                   lo=SIZE_MM_RANGE[0], hi=SIZE_MM_RANGE[1], unit="mm",
                                   metavar="S")
    mm_per_a0: float | None = option(None, "one scale instead of a size: millimetres per Bohr radius, so "
                                     "models at one scale compare in size (supports are added around the "
                                     "orbital)", lo=0, hi=_MAX_MM_PER_A0, lo_open=True, unit="mm",
                                     metavar="K")
    phase_map: str = option("uniform", "vertex colours: uniform (constant lightness), cvd (red-green "
                            "safe) or sign", type="text", choices=PHASE_MAPS)
    printable: bool = option(False, "join the pieces into one closed solid with struts and a base, and "
                             "check it (needs the size or the scale in mm)", type="bool")
    base: str = option("disc", "base under a printable model", type="text", choices=BASES)
    print_cutaway: bool = option(False, "remove the half y > 0 of a printable model so nested shells are "
                                 "open; the cut face is the base", type="bool", flag="--cutaway")
    parts: bool = option(False, "write each solid piece to its own file FILE_part1.EXT ... instead of "
                         "joining (needs the size or the scale in mm)", type="bool", key="")
    min_thickness_mm: float = option(DEFAULT_MIN_THICKNESS_MM, "report walls thinner than this (common "
                                     "practice for fused-filament printers with a 0.4 mm nozzle)",
                                     lo=0, lo_open=True, unit="mm")
    min_gap_mm: float = option(DEFAULT_MIN_GAP_MM, "report gaps narrower than this (common practice for "
                               "fused-filament printing: narrower gaps fuse)", lo=0, lo_open=True, unit="mm")
    strut_fraction: float = option(DEFAULT_STRUT_FRACTION, "strut diameter as a fraction of the "
                                   "orbital's largest side", lo=0, hi=0.5, lo_open=True)
    split: str | None = option(None, "bodies for multi-material printing: sign (positive and negative "
                               "psi, real states) or phase (phase bands)", type="text",
                               choices=("sign", "phase"))
    bands: int = option(4, "number of phase bands of a split by phase", type="integer", lo=2, hi=24)
    separate: bool = option(False, "write each body to its own file FILE_NAME.EXT (always so for .stl)",
                            type="bool", key="")


def check_mesh(options: MeshOptions, file: str, name: Callable[[str], str], *, state=None,
               one_file: bool = False) -> None:
    """Refuse options that do not go together, naming each as `name(field)` does.

    `state` (if known) is checked against a split by sign; with `one_file` the bodies of a
    split must fit in the one file (an STL file holds one body).
    """
    from ..state.phase import is_real

    if options.phase_map == "sign" and state is not None and not is_real(state):
        raise UserInputError(f"{name('phase_map')} sign needs a real state (psi real up to one global "
                             "phase); use the uniform or cvd map for a complex state")
    in_mm = options.size_mm is not None or options.mm_per_a0 is not None
    if options.size_mm is not None and options.mm_per_a0 is not None:
        raise UserInputError(f"{name('size_mm')} and {name('mm_per_a0')} exclude each other: give the "
                             "printed size or the scale, not both")
    wants = [k for k in ("printable", "parts", "print_cutaway") if getattr(options, k)]
    if wants and not in_mm:
        raise UserInputError(f"{name(wants[0])} needs {name('size_mm')} (the printed size) or "
                             f"{name('mm_per_a0')} (the scale) in millimetres")
    if Path(file).suffix.lower() == ".3mf" and not in_mm:
        raise UserInputError(f"a .3mf file holds millimetres: give {name('size_mm')} (the printed size) or "
                             f"{name('mm_per_a0')} (the scale)")
    if options.print_cutaway and not options.printable:
        raise UserInputError(f"{name('print_cutaway')} is part of {name('printable')}")
    if options.split:
        joined = [k for k in ("printable", "parts") if getattr(options, k)]
        if joined:
            raise UserInputError(f"{name('split')} writes bodies for multi-material printing and does not "
                                 f"go with {name(joined[0])}")
        if options.split == "sign" and state is not None and not is_real(state):
            raise UserInputError(f"{name('split')} sign needs a real state (psi real up to one global "
                                 "phase); split by phase for a complex state")
        if one_file and options.split == "phase":
            raise UserInputError(f"{name('split')} 'phase' needs the lattice, which a gallery does not "
                                 "keep; use the mesh command")
        if one_file and Path(file).suffix.lower() == ".stl":
            raise UserInputError(f"{name('split')} needs a file format that keeps bodies apart: "
                                 ".3mf, .glb, .ply or .obj")


def print_options(options: MeshOptions):
    """The :class:`~orbitalrender.mesh.printable.PrintOptions` of a printable model or its parts."""
    from ..mesh.print_options import PrintOptions

    cut = options.print_cutaway
    return PrintOptions(options.min_thickness_mm, options.min_gap_mm, options.strut_fraction,
                        "none" if cut else options.base, cut)


def mesh_job(surface, path, options: MeshOptions, *, lattice=None) -> dict[str, Any]:
    """Write `surface` as the mesh file(s) `options` ask for at `path`; returns the report.

    `lattice` (the one the surface came from) is needed for a split by phase.
    """
    from ..mesh.pipeline import export_mesh

    joined = options.printable or options.parts
    return export_mesh(surface, path, units=options.units, size_mm=options.size_mm,
                       mm_per_a0=options.mm_per_a0, phase_map=options.phase_map,
                       printable=print_options(options) if joined else None,
                       parts=options.parts, split=options.split, bands=options.bands,
                       separate=options.separate, lattice=lattice)
