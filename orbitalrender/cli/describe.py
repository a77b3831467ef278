"""``orbitalrender describe``: derived quantities of a STATE or of a field file, printed.

The options are those of :class:`orbitalrender.jobs.DescribeOptions`; the report is
:func:`orbitalrender.jobs.describe_job`, printed as aligned text or one JSON object.
"""

from __future__ import annotations

import argparse

from ..errors import UserInputError
from ..jobs.describe import DescribeOptions, describe_job, format_report, report_json
from ..jobs.shared import parse_states
from .common import add_command, field_source

__all__ = ["register", "run"]


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``describe`` subcommand."""
    add_command(
        subparsers, "describe", DescribeOptions, run,
        help="print energy, nodes, radii and expectation values of a state",
        description="Print the derived quantities of STATE (energy, nodes, <r>, <r^2>, <1/r>, "
                    "most probable radius, radius holding 90 %), or a summary of a field file.",
        preload=("orbitalrender.state.properties",))


def run(options: DescribeOptions, args: argparse.Namespace) -> int:
    """Build the report for the parsed options and print it."""
    if bool(options.field) == bool(options.states):
        raise UserInputError("give either a STATE or --field FILE")
    if options.field is not None:
        source, _ = field_source(options)
    else:
        source = parse_states(options.states, options)[0]
    report = describe_job(source, options, source_name=options.field or "")
    print(report_json(report) if options.json else format_report(report))
    return 0
