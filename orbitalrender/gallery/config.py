"""Gallery step, first part: read a TOML gallery config and validate every key before any work.

A config has a few top-level keys, a ``[defaults]`` table and a list of
``[[outputs]]``; each output names its ``kind`` and may override any default.
The keys, their types, ranges and allowed values are the entries of
:data:`SCHEMA` (documented in ``docs/guide.md``, section "Gallery configs").
Every mistake raises :class:`ConfigError` with one line that names the file,
the table (``defaults`` or ``output 'NAME' (outputs[i])``) and the key, and says
what was expected, e.g.::

    demo.toml: output 'shell3' (outputs[2]): key 'fraction' must be a number in (0, 0.9999], got 1.5

Validation touches no output: it parses every STATE, checks that user-field
files exist, and refuses duplicate output names and file names, so a broken
config leaves the results of earlier runs as they were.
"""

from __future__ import annotations

import os
import re
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any

from ..errors import UserInputError
from ..jobs import KINDS as JOB_OPTIONS
from ..jobs.cloud import CLOUD_SUFFIXES, check_cloud
from ..jobs.mesh import MESH_SUFFIXES, check_mesh
from ..jobs.option import Option, OptionError, build, convert, expected_text, key_of, options_of, shown
from ..state.model import State
from ..state.phase import is_real
from .caption import check_caption

__all__ = ["KINDS", "SCHEMA", "TOP_KEYS", "ConfigError", "OutputSpec", "GalleryConfig",
           "load_config", "parse_config", "job_options", "Key"]

#: What an output can be, and the suffixes each kind may write (the first is the default).
KINDS: dict[str, tuple[str, ...]] = {
    "figure": (".png", ".svg", ".pdf"),
    "layout": (".png", ".svg", ".pdf"),
    "section": (".png", ".svg", ".pdf"),
    "radial": (".png", ".svg", ".pdf"),
    "mesh": MESH_SUFFIXES,
    "cloud": CLOUD_SUFFIXES,
}
_FIELD_KINDS = ("figure", "section", "mesh")

#: Top-level keys besides the ``defaults`` table and the ``outputs`` list.
TOP_KEYS = ("title", "description", "defaults", "outputs")

_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]*")
#: Longest output name (it becomes a file name, well inside common 255-byte limits).
_MAX_NAME = 80


class ConfigError(UserInputError):
    """A gallery config that cannot be used; the message names file, table and key."""


class _Bad(Exception):
    """Raised by a checker with the text that follows 'must be'."""


@dataclass(frozen=True)
class Key:
    """One config key: where it applies, how it is checked, what it means.

    Attributes
    ----------
    name : str
    kinds : tuple of str
        Output kinds the key applies to.
    check : callable
        ``check(value, context) -> value`` (normalised); raises on a bad value.
    expected : str
        What a good value looks like, for the error message and the docs.
    output_only : bool
        True for keys that only an output (not ``[defaults]``) may set.
    """

    name: str
    kinds: tuple[str, ...]
    check: Callable[[Any, dict], Any]
    expected: str
    output_only: bool = False


# -- checkers of the gallery's own keys ---------------------------------------------------
def _text(v, ctx):
    if not isinstance(v, str):
        raise _Bad(None)
    return v


def _caption(v, ctx):
    try:
        return check_caption(_text(v, ctx))
    except ValueError as exc:
        raise _Bad(f"a string whose placeholders are report values: it {exc}") from None


def _state_text(v, ctx):
    if not isinstance(v, str) or not v.strip():
        raise _Bad(None)
    return v


def _state_list(v, ctx):
    if not isinstance(v, list) or not v or not all(isinstance(s, str) and s.strip() for s in v):
        raise _Bad(None)
    return list(v)


def _existing_file(v, ctx):
    path = Path(v) if Path(v).is_absolute() else ctx["folder"] / v
    if not v or not path.is_file():
        raise _Bad(f"the name of an existing .npy or .npz file (looked for {path})")
    if path.suffix.lower() not in (".npy", ".npz"):
        raise _Bad("the name of an existing .npy or .npz file")
    return str(path)


def _name(v, ctx):
    if not isinstance(v, str) or not _NAME.fullmatch(v) or len(v) > _MAX_NAME:
        raise _Bad(None)
    return v


def _kind(v, ctx):
    if not isinstance(v, str) or v not in KINDS:
        raise _Bad(None)
    return v


def _file(v, ctx):
    kind = ctx.get("kind")
    suffixes = KINDS.get(kind, ())
    p = PurePosixPath(v) if isinstance(v, str) else None
    if (p is None or not v or p.is_absolute() or "\\" in v or p.suffix.lower() not in suffixes
            or any(part.startswith(".") for part in p.parts)
            or any(ord(c) < 32 or ord(c) == 127 for c in v)):  # NUL and other control characters
        raise _Bad(f"a relative file name inside the output folder ending in "
                   f"{', '.join(suffixes) or 'a known suffix'}")
    return str(p)


def _option_check(opt: Option, then: Callable[[Any, dict], Any] | None = None):
    """Checker of a jobs option (the same check and wording as the command line's)."""
    def check(v, ctx):
        try:
            v = convert(opt, v)
        except OptionError as exc:
            raise _Bad(exc.expected) from None
        return then(v, ctx) if then is not None else v
    return check


#: Keys whose value is checked further by the gallery (a file name relative to the config).
_MORE = {"field": _existing_file}


def _option_keys() -> list[Key]:
    """One Key per gallery key of the jobs' options dataclasses, with the kinds that have it."""
    found: dict[str, tuple[Option, list[str]]] = {}
    for kind in KINDS:
        cls = JOB_OPTIONS[kind]
        for field_name, (opt, _) in options_of(cls).items():
            key = key_of(field_name, opt)
            if key and field_name not in getattr(cls, "NOT_IN_GALLERY", ()):
                found.setdefault(key, (opt, []))[1].append(kind)
    return [Key(key, tuple(kinds), _option_check(opt, _MORE.get(key)), expected_text(opt))
            for key, (opt, kinds) in found.items()]


_ALL = tuple(KINDS)

# -- the schema -------------------------------------------------------------------------
_K = Key
SCHEMA: dict[str, Key] = {k.name: k for k in [
    # identity
    _K("name", _ALL, _name, f"a name of letters, digits, '.', '_' or '-' (at most {_MAX_NAME}), "
       "starting with a letter or digit", output_only=True),
    _K("kind", _ALL, _kind, "one of " + ", ".join(f"'{k}'" for k in KINDS), output_only=True),
    _K("file", _ALL, _file, "a relative file name inside the output folder", output_only=True),
    _K("caption", _ALL, _caption, "a string"),
    # the state
    _K("state", ("figure", "section", "mesh", "layout", "cloud"), _state_text, "a STATE string, e.g. '3dz2'"),
    _K("states", ("radial", "layout"), _state_list, "a non-empty list of STATE strings"),
    # every option of the jobs
    *_option_keys(),
]}


@dataclass(frozen=True)
class OutputSpec:
    """One validated output.

    Attributes
    ----------
    name, kind : str
    file : str
        Path relative to the output folder.
    index : int
        Position in the config's ``outputs`` list.
    options : dict
        ``[defaults]`` merged with the output's own keys (those that apply to its kind),
        validated and normalised; keys left unset take the library's defaults.
    states : tuple of State
        The parsed states (one per entry of ``states``, or the one ``state``; for a
        layout with ``times``, one per time).
    """

    name: str
    kind: str
    file: str
    index: int
    options: dict = field(default_factory=dict)
    states: tuple[State, ...] = ()

    @property
    def report_file(self) -> str:
        """The report beside the output: ``FILE.json`` (e.g. ``shell2/2p.png.json``)."""
        return self.file + ".json"


@dataclass(frozen=True)
class GalleryConfig:
    """A validated gallery config."""

    path: Path
    title: str
    description: str
    outputs: tuple[OutputSpec, ...]


def _where(path: Path, table: str | None, key: str | None) -> str:
    parts = [str(path)]
    if table:
        parts.append(table)
    if key:
        parts.append(f"key '{key}'")
    return ": ".join(parts)


def _checked(key: str, value: Any, ctx: dict, path: Path, table: str) -> Any:
    spec = SCHEMA[key]
    try:
        return spec.check(value, ctx)
    except _Bad as bad:
        expected = bad.args[0] or spec.expected
        raise ConfigError(f"{_where(path, table, key)} must be {expected}, got {shown(value)}") from None


def _check_known(table: Mapping, path: Path, where: str, output: bool) -> None:
    for key in table:
        if key not in SCHEMA:
            close = [k for k in SCHEMA if k.lower() == str(key).lower().replace("-", "_")]
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise ConfigError(f"{_where(path, where, repr(key)[1:-1])} is not a known key{hint}; "
                              "see the config reference in docs/guide.md")
        if not output and SCHEMA[key].output_only:
            raise ConfigError(f"{_where(path, where, key)} can only be set in an output, "
                              "not in [defaults]")


def _parse_states(opts: dict, kind: str, path: Path, table: str) -> tuple[State, ...]:
    """Parse the STATE strings with the output's Z, nucleus and time; errors name the key."""
    from ..picture.layout import shell_states
    from ..state.notation import parse_state
    from ..state.units import femtoseconds_to_au, nucleus_reduced_mass_ratio

    mu = nucleus_reduced_mass_ratio(opts.get("nucleus", "infinite"))
    z = opts.get("Z", 1.0)
    unit = opts.get("time_unit", "au")

    def parse(text: str, key: str, t: float) -> State:
        t_au = femtoseconds_to_au(t) if unit == "fs" else t
        try:
            return parse_state(text, Z=z, reduced_mass_ratio=mu, time_au=t_au)
        except ValueError as exc:
            raise ConfigError(f"{_where(path, table, key)} must be a valid STATE: {exc}") from None

    t0 = opts.get("time", 0.0)
    if kind == "layout":
        if sum(k in opts for k in ("times", "states", "shell")) != 1:
            raise ConfigError(f"{_where(path, table, None)}: a layout needs one of 'states' "
                              "(small multiples), 'shell' (every state of a shell) or 'state' with "
                              "'times' (a time strip)")
        if "shell" in opts:
            return tuple(shell_states(opts["shell"], opts.get("basis", "real"), z, mu))
        if "times" in opts:
            if "state" not in opts:
                raise ConfigError(f"{_where(path, table, 'state')} is needed with 'times'")
            return tuple(parse(opts["state"], "state", t) for t in opts["times"])
        if "state" in opts:
            raise ConfigError(f"{_where(path, table, 'state')} does not go with 'states' in a "
                              "layout (use one or the other)")
        return tuple(parse(s, "states", t0) for s in opts["states"])
    if kind == "radial":
        if "states" not in opts:
            raise ConfigError(f"{_where(path, table, 'states')} is needed for a radial output")
        return tuple(parse(s, "states", t0) for s in opts["states"])
    if ("state" in opts) == ("field" in opts):
        allowed = "'state' or 'field'" if kind in _FIELD_KINDS else "'state'"
        raise ConfigError(f"{_where(path, table, None)}: give {'exactly one of ' if 'field' in opts else ''}"
                          f"{allowed}")
    if "field" in opts:
        if opts["field"].lower().endswith(".npy") and "field_spacing_a0" not in opts:
            raise ConfigError(f"{_where(path, table, 'field_spacing_a0')} is needed for an .npy field")
        return ()
    return (parse(opts["state"], "state", t0),)


def _check_together(opts: dict, kind: str, file: str, states: tuple[State, ...], path: Path,
                    table: str) -> None:
    """Keys that only make sense with (or without) others, and keys that need a kind of state."""
    def bad(key: str, text: str) -> ConfigError:
        return ConfigError(f"{_where(path, table, key)} {text}")

    if "plane" in opts and "normal" in opts:
        raise bad("normal", "does not go with 'plane' (give one of them)")
    if kind == "mesh":
        try:
            check_mesh(job_options("mesh", opts), file, lambda k: f"'{k}'",
                       state=states[0] if states else None, one_file=True)
        except UserInputError as exc:
            raise ConfigError(f"{_where(path, table, None)}: {exc}") from None
    if opts.get("phase_map") == "sign" and not all(is_real(s) for s in states):
        raise bad("phase_map", "cannot be 'sign' for a complex state (psi not real up to one "
                               "global phase): use 'uniform' or 'cvd'")
    if kind == "cloud":
        try:
            check_cloud(job_options("cloud", opts), file, states[0] if states else None)
        except (UserInputError, ValueError) as exc:
            raise ConfigError(f"{_where(path, table, None)}: {exc}") from None
    if kind == "figure" and opts.get("nodal_axis") and states:
        st = states[0]
        if not st.is_single_centre or any(t.m == 0 for t in st.terms):
            raise bad("nodal_axis", "needs a state whose terms all have m != 0 about one centre")


def _check_nesting(file: str, files: dict[str, str], path: Path, table: str) -> None:
    """Refuse a file that would be a folder of another output's file, or the other way round
    (``a.png`` and ``a.png/b.png``), compared without case as on a case-blind file system."""
    mine = PurePosixPath(file.lower())
    for other, owner in files.items():
        theirs = PurePosixPath(other)
        if theirs in mine.parents or mine in theirs.parents:
            inner, outer = (file, other) if theirs in mine.parents else (other, file)
            raise ConfigError(f"{_where(path, table, 'file')} must not nest with another output's "
                              f"file, got '{file}': '{inner}' would need '{outer}' (of output "
                              f"'{owner}' or this one) to be a folder")


def job_options(kind: str, options: Mapping[str, Any]) -> Any:
    """The jobs' options dataclass of `kind` from an output's checked `options` (gallery keys);
    keys left unset take the jobs' defaults, as on the command line.

    Examples
    --------
    >>> job_options("mesh", {"caption": "a", "size_mm": 40}).fraction
    0.9
    """
    cls = JOB_OPTIONS[kind]
    fields = {key_of(name, opt): name for name, (opt, _) in options_of(cls).items()}
    return build(cls, {fields[k]: v for k, v in options.items() if k in fields})


def parse_config(data: Mapping[str, Any], path: str | os.PathLike = "config.toml") -> GalleryConfig:
    """Validate a config already read from TOML; see :func:`load_config`.

    Examples
    --------
    >>> cfg = parse_config({"defaults": {"fraction": 0.8},
    ...                     "outputs": [{"name": "p", "kind": "radial", "states": ["2pz"]}]})
    >>> cfg.outputs[0].file, cfg.outputs[0].options["fraction"]
    ('p.png', 0.8)
    >>> try:
    ...     parse_config({"outputs": [{"name": "p", "kind": "radial", "states": ["2pz"], "fraction": 2}]})
    ... except ConfigError as exc:
    ...     print(exc)
    config.toml: output 'p' (outputs[0]): key 'fraction' must be a number in (0, 0.9999], got 2
    """
    path = Path(path)
    folder = path.parent
    for key in data:
        if key not in TOP_KEYS:
            raise ConfigError(f"{path}: key '{key}' is not a known top-level key; expected "
                              f"{', '.join(TOP_KEYS)}")
    for key in ("title", "description"):
        if key in data and not isinstance(data[key], str):
            raise ConfigError(f"{path}: key '{key}' must be a string, got {shown(data[key])}")
    defaults = data.get("defaults", {})
    if not isinstance(defaults, dict):
        raise ConfigError(f"{path}: key 'defaults' must be a table, got {shown(defaults)}")
    _check_known(defaults, path, "defaults", output=False)
    ctx = {"folder": folder}
    checked_defaults = {k: _checked(k, v, ctx, path, "defaults") for k, v in defaults.items()}
    outputs = data.get("outputs")
    if not isinstance(outputs, list) or not outputs or not all(isinstance(o, dict) for o in outputs):
        raise ConfigError(f"{path}: key 'outputs' must be a non-empty list of tables "
                          "([[outputs]] entries), got " + ("nothing" if outputs is None else shown(outputs)))
    specs: list[OutputSpec] = []
    names: dict[str, int] = {}
    files: dict[str, str] = {}
    for i, raw in enumerate(outputs):
        label = raw.get("name")
        table = (f"output '{label}' (outputs[{i}])" if isinstance(label, str) and label
                 else f"outputs[{i}]")
        _check_known(raw, path, table, output=True)
        for required in ("name", "kind"):
            if required not in raw:
                raise ConfigError(f"{_where(path, table, required)} is missing "
                                  f"(expected {SCHEMA[required].expected})")
        name = _checked("name", raw["name"], ctx, path, table)
        kind = _checked("kind", raw["kind"], ctx, path, table)
        if name in names:
            raise ConfigError(f"{_where(path, table, 'name')} must be unique, got '{name}' which "
                              f"outputs[{names[name]}] already uses")
        names[name] = i
        octx = {"folder": folder, "kind": kind}
        for key in raw:
            if kind not in SCHEMA[key].kinds:
                raise ConfigError(f"{_where(path, table, key)} does not apply to a {kind} output "
                                  f"(it applies to: {', '.join(SCHEMA[key].kinds)})")
        opts = {k: v for k, v in checked_defaults.items() if kind in SCHEMA[k].kinds}
        opts.update({k: _checked(k, v, octx, path, table) for k, v in raw.items()
                     if k not in ("name", "kind", "file")})
        file = (_checked("file", raw["file"], octx, path, table) if "file" in raw
                else name + KINDS[kind][0])
        if file.lower() in files:
            raise ConfigError(f"{_where(path, table, 'file')} must be unique, got '{file}' which "
                              f"output '{files[file.lower()]}' also writes")
        _check_nesting(file, files, path, table)
        files[file.lower()] = name
        states = _parse_states(opts, kind, path, table)
        _check_together(opts, kind, file, states, path, table)
        specs.append(OutputSpec(name=name, kind=kind, file=file, index=i, options=opts,
                                states=states))
    return GalleryConfig(path=path, title=data.get("title", path.stem),
                         description=data.get("description", ""), outputs=tuple(specs))


def load_config(path: str | os.PathLike) -> GalleryConfig:
    """Read and validate the gallery config at `path` (TOML).

    Raises
    ------
    FileNotFoundError
        If `path` does not exist.
    ConfigError
        For invalid TOML or any key that is unknown, of the wrong type, out of range
        or not allowed; the message names the file, the table and the key.
    """
    path = Path(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise FileNotFoundError(f"gallery config {path} does not exist") from None
    except IsADirectoryError:
        raise ConfigError(f"{path} is a folder, not a gallery config") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError as exc:
        raise ConfigError(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from None
    return parse_config(data, path)
