"""Jobs step, the definitions: one :class:`Option` per field of an options dataclass, and the checks.

Every option of every output kind is a field of a frozen dataclass whose
metadata holds an :class:`Option`: its type, range (open or closed ends),
allowed values, unit, help text, an extra check, and the names it has on the
command line (``flag``) and in gallery configs (``key``).  :func:`option` makes
such a field; :func:`convert` turns one raw value (text from the command line,
a TOML value from a gallery config) into the field's value or raises
:class:`OptionError` whose text follows ``must be``, so both front ends word a
refusal the same way::

    --fraction must be a number in (0, 1), got 1.5
    demo.toml: output 'shell3' (outputs[2]): key 'fraction' must be a number in (0, 1), got 1.5

This module imports no heavy library: ``orbitalrender --help`` builds the whole
parser from these definitions.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from ..errors import UserInputError

__all__ = ["Option", "OptionError", "Options", "option", "options_of", "convert", "build",
           "expected_text", "shown", "flag_of", "key_of"]

#: Value types an option can have.  ``"numbers"`` is a list of finite numbers (``count`` of
#: them, or any number at least one), ``"texts"`` a list of strings, ``"text"`` a string.
#: ``"value"`` a string or a finite number (kept as given).
TYPES = ("number", "integer", "text", "value", "bool", "numbers", "texts")


class OptionError(UserInputError):
    """A value that an option refuses; ``str(error)`` is the text after ``must be``."""

    def __init__(self, expected: str, value: Any):
        super().__init__(f"{expected}, got {shown(value)}")
        self.expected = expected
        self.value = value


@dataclass(frozen=True)
class Option:
    """What one option is: kept as the ``"option"`` metadata of a dataclass field.

    Attributes
    ----------
    help : str
        One sentence for ``--help`` and the guide, without the default (added for you).
    type : str
        One of :data:`TYPES`.
    lo, hi : float or None
        Ends of the allowed range (None: unbounded); `lo_open`, `hi_open` exclude them.
    choices : tuple of str or None
        The allowed values of a text option.
    count : int or None
        Exact length of a ``"numbers"`` list (None: any length of at least one).
    unit : str
        Unit of a number (``"a0"``, ``"px"``, ``"mm"``, ``"deg"``), shown in ``--help``.
    check : callable or None
        ``check(value)`` after the type and range checks (usually the library's own
        check); a ValueError it raises becomes ``usable here (its message)``.
    expected : str
        What a good value looks like, when the type and range do not say it well.
    flag : str or None
        Command-line flag (default ``--`` and the field name with ``-`` for ``_``); ``""``:
        not on the command line.  A ``bool`` whose default is True gets ``--no-NAME``.
    key : str or None
        Gallery key (default the field name); ``""``: not in gallery configs.
    metavar : str or None
        Placeholder shown in ``--help``.
    parse : callable or None
        ``parse(text)`` for the command line, when the text is not simply the value
        (e.g. ``"1,1,0"`` for three numbers); raises ValueError for bad text.
    spread : tuple of str
        Fields that the one flag sets together: `parse` returns one value for each
        (``--size 900x800`` sets ``width_px`` and ``height_px``; those have ``flag=""``).
    """

    help: str
    type: str = "number"
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    choices: tuple[str, ...] | None = None
    count: int | None = None
    unit: str = ""
    check: Callable[[Any], Any] | None = None
    expected: str = ""
    flag: str | None = None
    key: str | None = None
    metavar: str | None = None
    parse: Callable[[str], Any] | None = None
    spread: tuple[str, ...] = ()


def option(default: Any, help: str, **kw: Any) -> Any:
    """A dataclass field with default `default` described by ``Option(help, **kw)``.

    Examples
    --------
    >>> from dataclasses import dataclass
    >>> @dataclass(frozen=True)
    ... class Demo:
    ...     fraction: float = option(0.9, "probability enclosed", lo=0, hi=1, lo_open=True,
    ...                              hi_open=True)
    >>> build(Demo, {"fraction": "0.5"}, text=True).fraction
    0.5
    """
    if kw.get("type", "number") not in TYPES:
        raise TypeError(f"unknown option type {kw['type']!r}")
    return dataclasses.field(default=default, metadata={"option": Option(help, **kw)})


def options_of(cls: type) -> dict[str, tuple[Option, Any]]:
    """Field name -> (Option, default) for every option field of the dataclass `cls`."""
    return {f.name: (f.metadata["option"], f.default) for f in dataclasses.fields(cls)
            if "option" in f.metadata}


def flag_of(name: str, opt: Option, default: Any) -> str:
    """The command-line flag of field `name` ('' if it has none)."""
    if opt.flag is not None:
        return opt.flag
    base = name.replace("_", "-")
    return f"--no-{base}" if opt.type == "bool" and default is True else f"--{base}"


def key_of(name: str, opt: Option) -> str:
    """The gallery key of field `name` ('' if it has none)."""
    return name if opt.key is None else opt.key


def _number_word(opt: Option) -> str:
    return "integer" if opt.type == "integer" else "number"


def expected_text(opt: Option) -> str:
    """What a good value of `opt` looks like, as the refusals say it.

    Examples
    --------
    >>> expected_text(Option("", lo=0, hi=1, lo_open=True, hi_open=True))
    'a number in (0, 1)'
    >>> expected_text(Option("", type="integer", lo=8, hi=1024))
    'an integer in [8, 1024]'
    >>> expected_text(Option("", type="text", choices=("au", "fs")))
    "one of 'au', 'fs'"
    """
    if opt.expected:
        return opt.expected
    if opt.choices is not None:
        return "one of " + ", ".join(f"'{c}'" for c in opt.choices)
    if opt.type == "bool":
        return "true or false"
    if opt.type == "text":
        return "a string"
    if opt.type == "texts":
        return "a non-empty list of strings"
    if opt.type == "numbers":
        if opt.count is None:
            return "a non-empty list of finite numbers"
        return "a list of three finite numbers" if opt.count == 3 else f"a list of {opt.count} finite numbers"
    what = _number_word(opt)
    article = "an" if what == "integer" else "a"
    lo, hi = opt.lo, opt.hi
    if lo is None and hi is None:
        return f"a finite {what}" if what == "number" else "an integer"
    if hi is None:
        return f"{article} {what} {'>' if opt.lo_open else '>='} {lo:g}"
    if lo is None:
        return f"{article} {what} {'<' if opt.hi_open else '<='} {hi:g}"
    left, right = "(" if opt.lo_open else "[", ")" if opt.hi_open else "]"
    return f"{article} {what} in {left}{lo:g}, {hi:g}{right}"


def shown(value: Any) -> str:
    """A refused value as the refusals show it (short; TOML spelling for booleans)."""
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, tuple):
        value = list(value)
    text = repr(value) if not isinstance(value, bool) else str(value).lower()
    return text if len(text) <= 60 else text[:57] + "..."


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _in_range(opt: Option, v: float) -> bool:
    if opt.lo is not None and not (v > opt.lo if opt.lo_open else v >= opt.lo):
        return False
    return opt.hi is None or (v < opt.hi if opt.hi_open else v <= opt.hi)


def _from_text(opt: Option, text: str) -> Any:
    """Command-line text -> a value of the option's type (unchanged if not convertible)."""
    if opt.parse is not None:
        try:
            return opt.parse(text)
        except ValueError:
            raise OptionError(expected_text(opt), text) from None
    try:
        if opt.type == "number":
            return float(text)
        if opt.type == "integer":
            return int(text)
    except ValueError:
        return text
    return text


def convert(opt: Option, value: Any, *, text: bool = False) -> Any:
    """Check one raw value of `opt` and return it normalised (lists become tuples).

    With `text`, `value` is command-line text (or a list of texts) and is read first.
    Raises :class:`OptionError` whose message follows ``must be``.

    Examples
    --------
    >>> convert(Option("", type="integer", lo=1, hi=4), "3", text=True)
    3
    >>> convert(Option("", lo=0, hi=1, lo_open=True, hi_open=True), 1.5)
    Traceback (most recent call last):
    ...
    orbitalrender.jobs.option.OptionError: a number in (0, 1), got 1.5
    """
    if opt.type == "texts" and isinstance(value, str):
        value = (value,)  # one name for a list of names
    elif text and isinstance(value, str):
        value = _from_text(opt, value)
    elif text and isinstance(value, list) and opt.type == "numbers":
        value = [_from_text(Option(""), v) for v in value]
    ok = _type_ok(opt, value)
    if ok and opt.type in ("number", "integer"):
        ok = _in_range(opt, value)
    if ok and opt.choices is not None:
        ok = value in opt.choices
    if not ok:
        raise OptionError(expected_text(opt), value)
    if opt.type == "number":
        value = float(value)
    elif opt.type in ("numbers", "texts"):
        value = tuple(float(v) for v in value) if opt.type == "numbers" else tuple(value)
    if opt.check is not None:
        try:
            opt.check(value)
        except ValueError as exc:
            raise OptionError(f"usable here ({exc})", value) from None
    return value


def _type_ok(opt: Option, v: Any) -> bool:
    if opt.type == "number":
        return _is_number(v)
    if opt.type == "integer":
        return isinstance(v, int) and not isinstance(v, bool)
    if opt.type == "bool":
        return isinstance(v, bool)
    if opt.type == "text":
        return isinstance(v, str)
    if opt.type == "value":
        return isinstance(v, str) or _is_number(v)
    if opt.type == "texts":
        return isinstance(v, (list, tuple)) and bool(v) and all(isinstance(s, str) and s.strip() for s in v)
    return (isinstance(v, (list, tuple)) and bool(v) and (opt.count is None or len(v) == opt.count)
            and all(_is_number(x) and _in_range(opt, x) for x in v))


@dataclass(frozen=True)
class Options:
    """Base of every options dataclass: each option field is checked (and normalised) when an
    instance is made, so ``FigureOptions(supersample=9)`` is refused as the command line
    and the gallery refuse it.

    Examples
    --------
    >>> @dataclass(frozen=True)
    ... class Demo(Options):
    ...     zoom: float = option(1.0, "magnification", lo=0, lo_open=True)
    >>> Demo(zoom=2).zoom
    2.0
    >>> Demo(zoom=0)
    Traceback (most recent call last):
    ...
    orbitalrender.errors.UserInputError: zoom must be a number > 0, got 0
    """

    def __post_init__(self) -> None:
        for name, (opt, default) in options_of(type(self)).items():
            value = getattr(self, name)
            if value is None and default is None:
                continue
            try:
                object.__setattr__(self, name, convert(opt, value))
            except OptionError as exc:
                raise UserInputError(f"{name} must be {exc}") from None


def build(cls: type, values: Mapping[str, Any], *, text: bool = False,
          name_of: Callable[[str], str] | None = None) -> Any:
    """An instance of the options dataclass `cls` from `values` (field name -> raw value).

    Fields left out keep their defaults; a value of None keeps the default too.  A refused
    value raises :class:`UserInputError` ``"NAME must be ..."``, NAME being
    ``name_of(field)`` (default the field name).
    """
    defs = options_of(cls)
    given: dict[str, Any] = {}
    for name, value in values.items():
        if name not in defs:
            given[name] = value  # a field that is not an option (e.g. the STATE texts)
            continue
        if value is None:
            continue
        try:
            given[name] = convert(defs[name][0], value, text=text)
        except OptionError as exc:
            raise UserInputError(f"{(name_of or str)(name)} must be {exc}") from None
    return cls(**given)
