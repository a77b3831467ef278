"""Command line, shared part: argparse options generated from the jobs' options dataclasses.

Every option of a subcommand comes from a field of the output kind's options
dataclass (:mod:`orbitalrender.jobs`): its flag, default, metavar and help text.
Values arrive as text and are checked by the same code as gallery values, so a
refusal reads the same in both (``--fraction must be a number in (0, 1), got 1.5``).
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from typing import Any

from ..errors import UserInputError
from ..jobs.option import build, expected_text, flag_of, options_of

__all__ = ["add_command", "add_options", "options_from", "flag_name", "field_source"]

_STATE_HELP = ("e.g. 3,2,-1 or 3dz2 or '1s@(0,0,-0.7) + 1s@(0,0,0.7)'; one that starts with '-' "
               "may follow '--'")


def _help(opt, default: Any) -> str:
    text = opt.help
    if opt.type in ("number", "integer") and (opt.lo is not None or opt.hi is not None):
        text += f", {expected_text(opt).split(' ', 2)[2]}"
    if default is not None and opt.type != "bool":
        if isinstance(default, tuple):
            default = ",".join(str(d) for d in default)
        elif isinstance(default, float):
            default = f"{default:g}"
        unit = f" {opt.unit}" if opt.unit else ""
        text += f" (default {default}{unit})"
    return text.replace("%", "%%")


def add_options(parser: argparse.ArgumentParser, cls: type) -> None:
    """Add STATE (if `cls` has one) and a flag for every option field of `cls` that has one."""
    if hasattr(cls, "STATE_NARGS"):
        parser.add_argument("states", nargs=cls.STATE_NARGS, metavar="STATE", help=_STATE_HELP,
                            type=str.strip)
    for name, (opt, default) in options_of(cls).items():
        flag = flag_of(name, opt, default)
        if not flag:
            continue
        if opt.type == "bool":
            parser.add_argument(flag, dest=name, action="store_false" if default else "store_true",
                                help=_help(opt, default))
            continue
        nargs = opt.count if opt.type == "numbers" and opt.parse is None else None
        metavar = opt.metavar or (flag[2:].upper().replace("-", "_") if opt.choices is None else
                                  "{" + ",".join(opt.choices) + "}")
        parser.add_argument(flag, dest=name, default=default, nargs=nargs, metavar=metavar,
                            help=_help(opt, default))


def flag_name(cls: type) -> Callable[[str], str]:
    """Field name -> its flag in messages (``width_px`` -> ``--size``)."""
    defs = options_of(cls)
    spread = {f: flag_of(n, o, d) for n, (o, d) in defs.items() for f in o.spread}

    def name(field: str) -> str:
        if field in spread:
            return spread[field]
        opt, default = defs[field]
        return flag_of(field, opt, default).replace("--no-", "--") or field
    return name


def options_from(args: argparse.Namespace, cls: type) -> Any:
    """The options dataclass `cls` from parsed arguments (checked as gallery values are)."""
    name = flag_name(cls)
    values: dict[str, Any] = {}
    for field, (opt, _) in options_of(cls).items():
        if not hasattr(args, field):
            continue
        value = getattr(args, field)
        if opt.spread and isinstance(value, str):
            try:
                parts = opt.parse(value)
            except ValueError as exc:
                raise UserInputError(f"{name(field)}: {exc}") from None
            values.update(zip(opt.spread, parts))
        else:
            values[field] = value
    if hasattr(cls, "STATE_NARGS"):
        states = args.states
        values["states"] = () if states is None else (states,) if isinstance(states, str) else tuple(states)
    for pair in getattr(cls, "EXCLUSIVE", ()):
        given = [f for f in pair if values.get(f) is not None]
        if len(given) > 1:
            raise UserInputError(f"{name(given[1])} does not go with {name(given[0])} (give one of them)")
    return build(cls, values, text=True, name_of=name)


def field_source(options) -> tuple[Any, str]:
    """(psi source, label): the user field of ``--field`` as a Lattice, or None and ''."""
    if options.field is None:
        return None, ""
    from pathlib import Path

    from ..lattice.userfield import load_field

    lattice = load_field(options.field, options.field_spacing_a0,
                         list(options.field_origin_a0) if options.field_origin_a0 else None)
    return lattice, Path(options.field).stem


def add_command(subparsers, name: str, cls: type, run: Callable[[Any, argparse.Namespace], int], *,
                help: str, description: str, preload: tuple[str, ...] = ()) -> argparse.ArgumentParser:
    """Add subcommand `name` whose options are those of `cls`; ``run(options, args)`` does the work.

    `preload` names the heavy modules the work needs: they are imported before the work
    starts (see :func:`orbitalrender.cli.main`), while Ctrl-C still ends the process at once,
    because some libraries turn an interrupt during their import into another error.
    """
    p = subparsers.add_parser(name, help=help, description=description)
    add_options(p, cls)
    p.set_defaults(run=lambda args: run(options_from(args, cls), args), preload=preload)
    return p
