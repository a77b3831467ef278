"""``orbitalrender mesh``: a STATE's probability surface as a mesh file (mesh step), ready to print.

The format follows the suffix of ``--out`` (.ply, .obj, .stl, .glb, .3mf).  The options
are those of :class:`orbitalrender.jobs.MeshOptions`; the work is
:func:`orbitalrender.jobs.mesh_job`.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import UserInputError
from ..jobs.mesh import MeshOptions, check_mesh, mesh_job
from ..jobs.shared import box_of, dtype_of, parse_states, require_lattice_memory_of
from .common import add_command, field_source, flag_name

__all__ = ["register", "run"]


def register(subparsers) -> None:
    add_command(
        subparsers, "mesh", MeshOptions, run,
        help="write the probability surface as a PLY, OBJ, STL, GLB or 3MF mesh",
        description="Write the surface enclosing a probability FRACTION of a STATE as a mesh file, "
                    "coloured by the phase of psi; optionally scaled and prepared for 3D printing.",
        preload=("orbitalrender.mesh.pipeline", "orbitalrender.surface.extract"),
        out_required=True)


def run(options: MeshOptions, args: argparse.Namespace) -> int:
    from ..atomic import check_writable
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
    require_lattice_memory_of(options)
    from ..surface.extract import sample_for_surface, surface_at_level
    from ..surface.level import level_for_fraction

    if options.field is not None:
        lattice, _ = field_source(options)
        level = level_for_fraction(lattice, options.fraction)
    else:
        state = parse_states(options.states, options)[0]
        check_mesh(options, options.out, name, state=state)
        level = level_for_fraction(state, options.fraction)
        lattice = sample_for_surface(state, level, options.resolution, box_of(options, state),
                                     dtype_of(options))
    # a sampled lattice was budgeted with its surface above; a field file was not
    surface = surface_at_level(lattice, level, memory_checked=options.field is None)
    report = mesh_job(surface, options.out, options, lattice=lattice)
    if options.report:
        write_report(options.report, report)
    _print_summary(report, report["files"])
    return 0


def _print_summary(report: dict, files: list[str]) -> None:
    print(f"wrote {', '.join(files)}: {report['vertices']} vertices, {report['faces']} faces, "
          f"{report['components']} component(s), units {report['units']}")
    if "extent_mm" in report:
        x, y, z = report["extent_mm"]
        ox, oy, oz = report["orbital_extent_mm"]
        print(f"printed size {x:.1f} x {y:.1f} x {z:.1f} mm (largest side {report['size_mm']:.1f} mm) at "
              f"{report['mm_per_a0']:.4g} mm per a0; the orbital itself {ox:.1f} x {oy:.1f} x {oz:.1f} mm; "
              f"material {report['material_cm3']:.2f} cm^3")
    for key in ("thin_walls", "narrow_gaps"):
        spots = report.get("printable", {}).get(key)
        if spots and spots["below"]:
            what = "walls thinner" if key == "thin_walls" else "gaps narrower"
            x, y, z = spots["locations_mm"][0]
            print(f"warning: {spots['below']} of {spots['checked']} sampled points have {what} than "
                  f"{spots['limit_mm']:g} mm (worst {spots['minimum_mm']:.2f} mm at "
                  f"({x:.1f}, {y:.1f}, {z:.1f}) mm); check them in the slicer preview", file=sys.stderr)
