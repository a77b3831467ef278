"""``orbitalrender mesh``: a STATE's probability surface as a mesh file (mesh step), ready to print.

The format follows the suffix of ``--out`` (.ply, .obj, .stl, .glb).  The options
are those of :class:`orbitalrender.jobs.MeshOptions`; the work is
:func:`orbitalrender.jobs.mesh_job`.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import UserInputError
from ..jobs.mesh import MeshOptions, check_mesh, mesh_job
from ..jobs.shared import box_of, dtype_of, parse_states
from .common import add_command, field_source, flag_name

__all__ = ["register", "run"]


def register(subparsers) -> None:
    p = add_command(
        subparsers, "mesh", MeshOptions, run,
        help="write the probability surface as a PLY, OBJ, STL or GLB mesh",
        description="Write the surface enclosing a probability FRACTION of a STATE as a mesh file, "
                    "coloured by the phase of psi; optionally scaled and prepared for 3D printing.",
        preload=("orbitalrender.mesh.pipeline", "orbitalrender.surface.extract"))
    next(a for a in p._actions if a.dest == "out").required = True


def run(options: MeshOptions, args: argparse.Namespace) -> int:
    from ..atomic import check_writable
    from ..lattice.memory import require_lattice_memory, surface_bytes_per_point
    from ..mesh.export import mesh_suffix
    from ..picture.output import write_report

    if bool(options.field) == bool(options.states):
        raise UserInputError("give either a STATE or --field FILE")
    mesh_suffix(options.out)
    check_writable(options.out)
    if options.report:
        check_writable(options.report)
    name = flag_name(MeshOptions)
    check_mesh(options, options.out, name)
    dtype = dtype_of(options)
    require_lattice_memory(options.resolution, dtype, extra_bytes_per_point=surface_bytes_per_point(dtype),
                           what="lattice with its surface")
    from ..surface.extract import sample_for_surface, surface_at_level
    from ..surface.level import level_for_fraction

    if options.field is not None:
        lattice, _ = field_source(options)
        level = level_for_fraction(lattice, options.fraction)
    else:
        state = parse_states(options.states, options)[0]
        check_mesh(options, options.out, name, state=state)
        level = level_for_fraction(state, options.fraction)
        lattice = sample_for_surface(state, level, options.resolution, box_of(options, state), dtype)
    surface = surface_at_level(lattice, level)
    report = mesh_job(surface, options.out, options, lattice=lattice)
    if options.report:
        write_report(options.report, report)
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
