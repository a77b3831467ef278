"""Command line entry point: parses the subcommand and turns errors into exit statuses.

Exit status 0 on success, 2 for a mistake in the user's input (one line on
stderr), 1 for a fault inside the tool (a short message; ``--debug`` shows the
traceback) or when the system refuses, e.g. a full disk (one line).  A file that
could not be written completely is never left behind: outputs go through
:func:`orbitalrender.atomic.atomic_path`.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import traceback
import warnings

from .. import __version__
from ..atomic import check_distinct_outputs, output_set
from ..errors import UserInputError
from ..lattice.memory import MemoryLimitError

__all__ = ["main", "build_parser", "COMMANDS"]

#: Subcommand name -> module in this package that defines ``register(subparsers)``.
COMMANDS: dict[str, str] = {
    "describe": "describe",
    "section": "section",
    "radial": "radial",
    "figure": "figure",
    "mesh": "mesh",
    "gallery": "gallery",
}

#: Commands whose outputs are not one set (the gallery replaces each output's files as a set).
_SEPARATE_OUTPUTS = frozenset({"gallery"})

_USER_ERRORS = (UserInputError, ValueError, MemoryLimitError, FileNotFoundError,
                PermissionError, IsADirectoryError, NotADirectoryError)


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # one line, exit status 2, as argparse does, with the program name
        self.exit(2, f"{self.prog}: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="orbitalrender",
                     description="Quantitative figures and printable meshes of hydrogen-like states.")
    parser.add_argument("--version", action="version", version=f"orbitalrender {__version__}")
    parser.add_argument("--debug", action="store_true", help="show the traceback of an internal fault")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for module in COMMANDS.values():
        importlib.import_module(f"{__name__}.{module}").register(sub)
    return parser


def _run(args: argparse.Namespace) -> int:
    """The subcommand, with its outputs replaced together (the gallery: per output)."""
    if args.command in _SEPARATE_OUTPUTS:
        return int(args.run(args) or 0)
    check_distinct_outputs([getattr(args, "out", None), getattr(args, "report", None)])
    with output_set():
        return int(args.run(args) or 0)


def _one_line_warning(command: str):
    """A warnings.showwarning that prints the tool's own warnings as one line on stderr."""
    def show(message, category, filename, lineno, file=None, line=None) -> None:
        print(f"orbitalrender {command}: warning: {message}", file=sys.stderr)
    return show


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    argv = sys.argv[1:] if argv is None else argv
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        with warnings.catch_warnings():
            warnings.showwarning = _one_line_warning(args.command)
            status = _run(args)
        sys.stdout.flush()  # inside the try, so a reader that went away is handled below
        return status
    except BrokenPipeError:
        # the reader of our output went away (``| head``): stop quietly, as a process that
        # a SIGPIPE ends would (status 128 + 13); further writes to stdout go nowhere
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141
    except _USER_ERRORS as exc:
        print(f"orbitalrender {args.command}: error: {exc}", file=sys.stderr)
        if args.debug:
            traceback.print_exc()
        return 2
    except OSError as exc:  # the system refused (a full disk, a device error): not the input, not a bug
        print(f"orbitalrender {args.command}: error: {exc}", file=sys.stderr)
        if args.debug:
            traceback.print_exc()
        return 1
    except KeyboardInterrupt:
        print("orbitalrender: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - the last line of defence of the command line
        print(f"orbitalrender {args.command}: internal error: {type(exc).__name__}: {exc} "
              "(run with --debug for the traceback)", file=sys.stderr)
        if args.debug:
            traceback.print_exc()
        return 1
