"""``orbitalrender section``: psi on a plane, coloured by phase, with nodal lines (picture step).

The options are those of :class:`orbitalrender.jobs.SectionOptions`; the work is
:func:`orbitalrender.jobs.section_job`.  Every option is checked before any work
is done, and the file is written atomically.
"""

from __future__ import annotations

import argparse

from ..errors import UserInputError
from ..jobs.section import SectionOptions, plane_of, section_job
from ..jobs.shared import parse_states
from ..jobs.write import write_picture
from .common import add_command, field_source

__all__ = ["register", "run"]


def register(subparsers) -> None:
    add_command(
        subparsers, "section", SectionOptions, run,
        help="draw psi on a plane: hue = phase, lightness = density, with nodal lines",
        description="Draw psi of STATE on a plane through it: hue from the phase, lightness from "
                    "|psi|^2, the cut through the surface holding FRACTION, nodal lines and a phase "
                    "legend.",
        preload=("orbitalrender.picture.section", "orbitalrender.picture.section_figure",
                 "orbitalrender.picture.nodal"))


def run(options: SectionOptions, args: argparse.Namespace) -> int:
    from ..atomic import check_writable
    from ..picture.output import check_output_paths, default_output_path

    if bool(options.field) == bool(options.states):
        raise UserInputError("give either a STATE or --field FILE")
    plane_of(options)  # refuse a bad plane before any work
    out = check_output_paths(options.out, options.report)
    if options.field is not None:
        source, label = field_source(options)
    else:
        source = parse_states(options.states, options)[0]
        label = source.label
    if out is None:
        out = default_output_path(label, "section")
        check_writable(out)
    fig, metadata = section_job(source, options, label=label)
    write_picture(fig, out, metadata, dpi=options.dpi, transparent=options.transparent,
                  report=options.report)
    print(f"wrote {out}")
    return 0
