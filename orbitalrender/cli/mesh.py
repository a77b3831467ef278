"""``orbitalrender mesh``: a STATE's probability surface as a mesh file (mesh step), ready to print.

The format follows the suffix of ``--out`` (.ply, .obj, .stl, .glb).  Lengths are
in a0 unless ``--units`` or ``--size-mm`` says otherwise.  ``--printable`` joins the
pieces into one solid with struts and a base and checks it (see
:mod:`orbitalrender.mesh.printable`); ``--parts`` writes the pieces to separate
files instead; ``--split`` writes bodies by the sign (real states) or phase band
(complex states) of psi, for two- or more-material printing.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

from ..atomic import check_writable
from ..colormap import PHASE_SCHEMES
from ..errors import UserInputError
from ..lattice.memory import require_lattice_memory, surface_bytes_per_point
from ..mesh.export import length_scale, mesh_suffix
from ..mesh.pipeline import export_mesh
from ..mesh.print_options import (
    BASES,
    DEFAULT_MIN_GAP_MM,
    DEFAULT_MIN_THICKNESS_MM,
    DEFAULT_STRUT_FRACTION,
    PrintOptions,
)
from ..picture.output import write_report
from ..state.limits import check_fraction
from ..state.phase import is_real
from ..state.units import LENGTH_UNITS_PER_A0
from .common import add_lattice_arguments, add_state_arguments, box_from_args, lattice_dtype, state_from_args

__all__ = ["register", "run"]

_DEFAULT_RESOLUTION = 128


def register(subparsers) -> None:
    p = subparsers.add_parser(
        "mesh", help="write the probability surface as a PLY, OBJ, STL or GLB mesh",
        description="Write the surface enclosing a probability FRACTION of a STATE as a mesh file, "
                    "coloured by the phase of psi; optionally scaled and prepared for 3D printing.")
    add_state_arguments(p)
    p.add_argument("--fraction", type=float, required=True, metavar="F",
                   help="probability enclosed by the surface, between 0 and 1 (e.g. 0.9)")
    add_lattice_arguments(p, _DEFAULT_RESOLUTION)
    p.add_argument("--out", required=True, metavar="FILE",
                   help="output file; the suffix .ply, .obj, .stl or .glb sets the format")
    p.add_argument("--units", choices=tuple(LENGTH_UNITS_PER_A0), default="a0",
                   help="length unit of the coordinates (default a0)")
    p.add_argument("--size-mm", type=float, default=None, metavar="S",
                   help="scale so the largest side of the bounding box is S mm (coordinates in mm)")
    p.add_argument("--phase-map", choices=PHASE_SCHEMES, default="uniform",
                   help="vertex colours: uniform (constant lightness), cvd (red-green safe) or sign")
    p.add_argument("--report", metavar="FILE.json", help="write a JSON report of the mesh")
    g = p.add_argument_group("printing (needs --size-mm)")
    g.add_argument("--printable", action="store_true",
                   help="join the pieces into one closed solid with struts and a base, and check it")
    g.add_argument("--base", choices=BASES, default="disc", help="base under the model (default disc)")
    g.add_argument("--cutaway", action="store_true",
                   help="remove the half y > 0 so nested shells are open; the cut face is the base")
    g.add_argument("--parts", action="store_true",
                   help="write each solid piece to its own file FILE_part1.EXT ... instead of joining")
    g.add_argument("--min-thickness-mm", type=float, default=DEFAULT_MIN_THICKNESS_MM,
                   help=f"report walls thinner than this (default {DEFAULT_MIN_THICKNESS_MM:g} mm, "
                        "common practice for fused-filament printers)")
    g.add_argument("--min-gap-mm", type=float, default=DEFAULT_MIN_GAP_MM,
                   help=f"report gaps narrower than this (default {DEFAULT_MIN_GAP_MM:g} mm)")
    g.add_argument("--strut-fraction", type=float, default=DEFAULT_STRUT_FRACTION,
                   help=f"strut diameter as a fraction of the size (default {DEFAULT_STRUT_FRACTION:g})")
    s = p.add_argument_group("bodies for multi-material printing")
    s.add_argument("--split", choices=("sign", "phase"), default=None,
                   help="sign: positive and negative psi (real states); phase: --bands phase bands")
    s.add_argument("--bands", type=int, default=4, help="number of phase bands for --split phase (default 4)")
    s.add_argument("--separate", action="store_true",
                   help="write each body to its own file FILE_NAME.EXT (always so for .stl)")
    p.set_defaults(run=run)


def _check_options(args: argparse.Namespace) -> tuple[Path, str]:
    """Refuse inconsistent options before any work; returns the output path and its suffix."""
    out = Path(args.out)
    suffix = mesh_suffix(out)
    check_writable(out)
    if args.report:
        check_writable(args.report)
    check_fraction(args.fraction, "--fraction")
    if args.size_mm is not None:
        length_scale(np.array([[0.0, 0, 0], [1.0, 0, 0]]), size_mm=args.size_mm)  # validates S
    wants_print = args.printable or args.parts or args.cutaway
    if wants_print and args.size_mm is None:
        raise UserInputError("printing options need --size-mm, the printed size in millimetres")
    if args.split and (args.printable or args.parts):
        raise UserInputError("--split writes bodies for multi-material printing and cannot be combined "
                             "with --printable or --parts")
    if args.cutaway and not args.printable:
        raise UserInputError("--cutaway is part of --printable")
    dtype = lattice_dtype(args)
    require_lattice_memory(args.resolution, dtype, extra_bytes_per_point=surface_bytes_per_point(dtype),
                           what="lattice with its surface")
    return out, suffix


def run(args: argparse.Namespace) -> int:
    out, _ = _check_options(args)
    state = state_from_args(args)
    options = None
    if args.printable or args.parts:
        options = PrintOptions(args.min_thickness_mm, args.min_gap_mm, args.strut_fraction,
                               "none" if args.cutaway else args.base, args.cutaway)
    if args.split == "sign" and not is_real(state):
        raise UserInputError("--split sign needs a real state (psi real up to one global phase); "
                             "use --split phase for a complex state")
    from ..surface.extract import sample_for_surface, surface_at_level  # the surface step
    from ..surface.level import level_for_fraction

    box = box_from_args(args, state)
    dtype = lattice_dtype(args)
    level = level_for_fraction(state, args.fraction)
    lattice = sample_for_surface(state, level, args.resolution, box, dtype)
    surface = surface_at_level(lattice, level)
    report = export_mesh(surface, out, units=args.units, size_mm=args.size_mm,
                         phase_map=args.phase_map, printable=options,
                         parts=args.parts, split=args.split, bands=args.bands,
                         separate=args.separate, lattice=lattice)
    if args.report:
        write_report(args.report, report)
    _print_summary(report, report["files"])
    return 0


def _print_summary(report: dict, files: list[str]) -> None:
    print(f"wrote {', '.join(files)}: {report['vertices']} vertices, {report['faces']} faces, "
          f"{report['components']} component(s), units {report['units']}")
    if "material_cm3" in report:
        print(f"material {report['material_cm3']:.2f} cm^3 at a largest extent of {report['size_mm']:g} mm")
    for key in ("thin_walls", "narrow_gaps"):
        spots = report.get("printable", {}).get(key)
        if spots and spots["below"]:
            what = "walls thinner" if key == "thin_walls" else "gaps narrower"
            x, y, z = spots["locations_mm"][0]
            print(f"warning: {spots['below']} of {spots['checked']} sampled points have {what} than "
                  f"{spots['limit_mm']:g} mm (worst {spots['minimum_mm']:.2f} mm at "
                  f"({x:.1f}, {y:.1f}, {z:.1f}) mm); check them in the slicer preview", file=sys.stderr)
