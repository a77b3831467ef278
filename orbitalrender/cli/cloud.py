"""``orbitalrender cloud``: points drawn exactly from |psi|^2 as a picture or PLY (lattice, picture steps).

The options are those of :class:`orbitalrender.jobs.CloudOptions`; the work is
:func:`orbitalrender.jobs.cloud_job`.  Every option, the slab and the memory
estimate are checked before any point is drawn, and the file is written
atomically, so a refusal leaves no file.
"""

from __future__ import annotations

import argparse

from ..errors import UserInputError
from ..jobs.cloud import CloudOptions, check_cloud, cloud_job
from ..jobs.shared import parse_states
from ..jobs.write import write_picture
from .common import add_command

__all__ = ["register", "run"]


def register(subparsers) -> None:
    add_command(
        subparsers, "cloud", CloudOptions, run,
        help="draw points exactly from |psi|^2: a dot picture coloured by phase, or a PLY point cloud",
        description="Draw --points points exactly from |psi|^2 of STATE (no box, no cut-off) and "
                    "write them as a picture of phase-coloured dots (.png, .svg, .pdf) or as a PLY "
                    "point cloud with per-point phase and density (.ply).  The report counts the "
                    "points inside the surface enclosing FRACTION.",
        preload=("scipy.interpolate", "orbitalrender.picture.cloud", "orbitalrender.picture.output"),
        out_required=True)


def run(options: CloudOptions, args: argparse.Namespace) -> int:
    from ..atomic import atomic_path, check_writable
    from ..picture.output import write_report

    if not options.states:
        raise UserInputError("give a STATE, e.g. 3dz2 or sp3[1]")
    check_cloud(options, options.out)
    check_writable(options.out)
    if options.report:
        check_writable(options.report)
    state = parse_states(options.states, options)[0]
    check_cloud(options, options.out, state)
    suffix = options.out.rsplit(".", 1)[-1].lower()
    result, metadata = cloud_job(state, options, suffix=f".{suffix}")
    if suffix == "ply":
        with atomic_path(options.out) as tmp:
            tmp.write_bytes(result)
        if options.report:
            write_report(options.report, {**metadata, "file": options.out})
    else:
        write_picture(result, options.out, metadata, dpi=options.dpi, transparent=options.transparent,
                      report=options.report)
    rep = metadata["cloud"]
    print(f"wrote {options.out}: {rep['points']} points (seed {rep['seed']}); "
          f"{rep['fraction_inside']:.4f} of them inside the F = {rep['fraction']:g} surface, "
          f"expected {rep['fraction_expected']:g} +- {rep['standard_error']:.2g}")
    return 0
