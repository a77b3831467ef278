"""``orbitalrender radial``: R(r), r^2 R(r)^2 and P(r' < r) of one or several states (picture step).

The options are those of :class:`orbitalrender.jobs.RadialOptions`; the work is
:func:`orbitalrender.jobs.radial_job`.
"""

from __future__ import annotations

import argparse

from ..jobs.radial import RadialOptions, radial_job
from ..jobs.shared import parse_states
from ..jobs.write import write_picture
from .common import add_command

__all__ = ["register", "run"]


def register(subparsers) -> None:
    add_command(
        subparsers, "radial", RadialOptions, run,
        help="plot R(r), r^2 R^2 and P(r' < r) with nodes and radii marked",
        description="Plot the radial function R(r), the radial density r^2 R(r)^2 and the "
                    "cumulative probability P(r' < r) of each STATE, with the radial nodes, the "
                    "most probable radius and the radius holding FRACTION marked.",
        preload=("orbitalrender.picture.radialplot", "orbitalrender.picture.output"))


def run(options: RadialOptions, args: argparse.Namespace) -> int:
    from ..atomic import check_writable
    from ..picture.output import check_output_paths, default_output_path

    out = check_output_paths(options.out, options.report)
    states = parse_states(options.states, options)
    if out is None:
        out = default_output_path(" ".join(s.label for s in states), "radial")
        check_writable(out)
    fig, metadata = radial_job(states, options)
    write_picture(fig, out, metadata, dpi=options.dpi, transparent=options.transparent,
                  report=options.report)
    print(f"wrote {out}")
    return 0
