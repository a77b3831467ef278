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

import math
import os
import re
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any

from ..cli.radial import parse_quantities
from ..colormap import PHASE_SCHEMES
from ..errors import UserInputError
from ..lattice.sampler import PRECISIONS
from ..mesh.print_options import BASES
from ..picture.camera import PROJECTIONS, Camera
from ..picture.cutaway import parse_cutaway
from ..picture.density import DENSITY_SCALES
from ..picture.layout import shell_states
from ..picture.output import DPI_RANGE, check_dpi
from ..picture.plane import MAX_PIXELS, MIN_PIXELS, PLANE_NAMES, plane
from ..state.limits import FRACTION_MAX, SIZE_MM_RANGE, Z_RANGE
from ..state.model import State
from ..state.notation import parse_state
from ..state.phase import is_real
from ..state.units import LENGTH_UNITS_PER_A0, femtoseconds_to_au, nucleus_reduced_mass_ratio

__all__ = ["KINDS", "SCHEMA", "TOP_KEYS", "ConfigError", "OutputSpec", "GalleryConfig",
           "load_config", "parse_config", "Key"]

#: What an output can be, and the suffixes each kind may write (the first is the default).
KINDS: dict[str, tuple[str, ...]] = {
    "figure": (".png", ".svg", ".pdf"),
    "layout": (".png", ".svg", ".pdf"),
    "section": (".png", ".svg", ".pdf"),
    "radial": (".png", ".svg", ".pdf"),
    "mesh": (".stl", ".glb", ".ply", ".obj"),
}
_PICTURES = ("figure", "layout", "section", "radial")
_SURFACES = ("figure", "layout", "mesh")
_FIELD_KINDS = ("figure", "section", "mesh")
_ALL = tuple(KINDS)

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


# -- checkers ---------------------------------------------------------------------------
def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _number(lo: float | None = None, hi: float | None = None, lo_open: bool = False,
            hi_open: bool = False, integer: bool = False):
    """Checker for a number (or an integer) in a range; returns the value as float or int."""
    def check(v, ctx):
        ok = (isinstance(v, int) and not isinstance(v, bool)) if integer else _is_number(v)
        if ok and lo is not None:
            ok = v > lo if lo_open else v >= lo
        if ok and hi is not None:
            ok = v < hi if hi_open else v <= hi
        if not ok:
            raise _Bad(None)
        return int(v) if integer else float(v)
    return check


def _range_text(what: str, lo, hi, lo_open=False, hi_open=False) -> str:
    if lo is None and hi is None:
        return f"a finite {what}"
    if hi is None:
        return f"{'an' if what == 'integer' else 'a'} {what} {'>' if lo_open else '>='} {lo:g}"
    left, right = "(" if lo_open else "[", ")" if hi_open else "]"
    return f"{'an' if what == 'integer' else 'a'} {what} in {left}{lo:g}, {hi:g}{right}"


def _choice(options: tuple[str, ...]):
    def check(v, ctx):
        if not isinstance(v, str) or v not in options:
            raise _Bad(None)
        return v
    return check


def _choice_text(options) -> str:
    return "one of " + ", ".join(f"'{o}'" for o in options)


def _boolean(v, ctx):
    if not isinstance(v, bool):
        raise _Bad(None)
    return v


def _text(v, ctx):
    if not isinstance(v, str):
        raise _Bad(None)
    return v


def _state_text(v, ctx):
    if not isinstance(v, str) or not v.strip():
        raise _Bad(None)
    return v


def _state_list(v, ctx):
    if not isinstance(v, list) or not v or not all(isinstance(s, str) and s.strip() for s in v):
        raise _Bad(None)
    return list(v)


def _numbers(count: int | None = None, lo: float | None = None):
    def check(v, ctx):
        if (not isinstance(v, list) or not v or (count is not None and len(v) != count)
                or not all(_is_number(x) and (lo is None or x > lo) for x in v)):
            raise _Bad(None)
        return [float(x) for x in v]
    return check


def _quantities(v, ctx):
    """One name or a list of names (the radial command's --quantity, as TOML)."""
    if isinstance(v, str):
        v = [v]
    if not isinstance(v, list) or not v or not all(isinstance(q, str) for q in v):
        raise _Bad(None)
    return v


def _nucleus(v, ctx):
    if isinstance(v, bool) or not isinstance(v, (str, int, float)):
        raise _Bad(None)
    try:
        nucleus_reduced_mass_ratio(v)
    except ValueError:
        raise _Bad(None) from None
    return v


def _existing_file(v, ctx):
    if not isinstance(v, str) or not v:
        raise _Bad(None)
    path = Path(v) if Path(v).is_absolute() else ctx["folder"] / v
    if not path.is_file():
        raise _Bad(f"the name of an existing .npy or .npz file (looked for {path})")
    if path.suffix.lower() not in (".npy", ".npz"):
        raise _Bad(None)
    return str(path)


def _name(v, ctx):
    if not isinstance(v, str) or not _NAME.fullmatch(v) or len(v) > _MAX_NAME:
        raise _Bad(None)
    return v


def _kind(v, ctx):
    return _choice(tuple(KINDS))(v, ctx)


def _file(v, ctx):
    kind = ctx.get("kind")
    suffixes = KINDS.get(kind, ())
    p = PurePosixPath(v) if isinstance(v, str) else None
    if (p is None or not v or p.is_absolute() or "\\" in v or p.suffix.lower() not in suffixes
            or any(part.startswith(".") for part in p.parts)):
        raise _Bad(f"a relative file name inside the output folder ending in "
                   f"{', '.join(suffixes) or 'a known suffix'}")
    return str(p)


def _by(first, fn: Callable[[Any], Any]):
    """Checker: `first` (a type/range checker), then `fn(value)`, the library's own check,
    whose ValueError message becomes the 'expected' text."""
    def check(v, ctx):
        v = first(v, ctx)
        try:
            fn(v)
        except ValueError as exc:
            raise _Bad(f"usable here ({exc})") from None
        return v
    return check


def _lattice_resolution(v, ctx):
    return _number(8, 1024, integer=True)(v, ctx)


_LENGTH_UNITS = tuple(LENGTH_UNITS_PER_A0)
#: Largest range of the logarithmic density scale of a section, as the section command allows.
_MAX_DECADES = 12.0

# -- the schema -------------------------------------------------------------------------
_K = Key
SCHEMA: dict[str, Key] = {k.name: k for k in [
    # identity
    _K("name", _ALL, _name, f"a name of letters, digits, '.', '_' or '-' (at most {_MAX_NAME}), "
       "starting with a letter or digit", output_only=True),
    _K("kind", _ALL, _kind, _choice_text(tuple(KINDS)), output_only=True),
    _K("file", _ALL, _file, "a relative file name inside the output folder", output_only=True),
    _K("caption", _ALL, _text, "a string"),
    # the state
    _K("state", ("figure", "section", "mesh", "layout"), _state_text, "a STATE string, e.g. '3dz2'"),
    _K("states", ("radial", "layout"), _state_list, "a non-empty list of STATE strings"),
    _K("Z", _ALL, _number(*Z_RANGE), _range_text("number", *Z_RANGE)),
    _K("nucleus", _ALL, _nucleus, "a nucleus preset (infinite, hydrogen, deuterium, positronium, "
       "muonic-hydrogen) or a nucleus-to-electron mass ratio"),
    _K("time", _ALL, _number(), "a finite number"),
    _K("time_unit", _ALL, _choice(("au", "fs")), _choice_text(("au", "fs"))),
    _K("times", ("layout",), _numbers(), "a non-empty list of finite numbers"),
    _K("field", _FIELD_KINDS, _existing_file, "the name of an existing .npy or .npz file"),
    _K("field_spacing_a0", _FIELD_KINDS, _number(0, lo_open=True),
       _range_text("number", 0, None, lo_open=True)),
    _K("field_origin_a0", _FIELD_KINDS, _numbers(3), "a list of three finite numbers"),
    # lattice and surface
    _K("fraction", _ALL, _number(0, FRACTION_MAX, lo_open=True),
       _range_text("number", 0, FRACTION_MAX, lo_open=True)),
    _K("resolution", _SURFACES, _lattice_resolution, _range_text("integer", 8, 1024)),
    _K("box_a0", _SURFACES, _number(0, lo_open=True), _range_text("number", 0, None, lo_open=True)),
    _K("precision", _SURFACES, _choice(tuple(PRECISIONS)), _choice_text(tuple(PRECISIONS))),
    # pictures
    _K("phase_map", ("figure", "layout", "section", "mesh"), _choice(PHASE_SCHEMES),
       _choice_text(PHASE_SCHEMES)),
    _K("units", _ALL, _choice(_LENGTH_UNITS), _choice_text(_LENGTH_UNITS)),
    # 3D pictures
    _K("width_px", ("figure", "layout"), _number(16, 8192, integer=True),
       _range_text("integer", 16, 8192)),
    _K("height_px", ("figure", "layout"), _number(16, 8192, integer=True),
       _range_text("integer", 16, 8192)),
    _K("dpi", _PICTURES, _by(_number(), check_dpi), _range_text("number", *DPI_RANGE)),
    _K("azimuth_deg", ("figure", "layout"), _number(), "a finite number"),
    _K("elevation_deg", ("figure", "layout"), _number(-90, 90), _range_text("number", -90, 90)),
    _K("zoom", ("figure", "layout"), _by(_number(0, lo_open=True), lambda v: Camera(zoom=v)),
       "a number in the renderer's zoom range (1 fits the surface)"),
    _K("projection", ("figure", "layout"), _choice(PROJECTIONS), _choice_text(PROJECTIONS)),
    _K("transparent", _PICTURES, _boolean, "true or false"),
    _K("cutaway", ("figure", "layout"), _by(_text, parse_cutaway),
       "'front', 'quadrant' or conditions such as 'x>0&y>0'"),
    _K("translucent_outer", ("figure", "layout"), _number(0, 1, lo_open=True),
       _range_text("number", 0, 1, lo_open=True)),
    _K("nodal_axis", ("figure", "layout"), _boolean, "true or false"),
    _K("supersample", ("figure", "layout"), _number(1, 4, integer=True), _range_text("integer", 1, 4)),
    _K("legend", ("figure", "layout"), _boolean, "true or false"),
    _K("panel_px", ("layout",), _number(64, 4096, integer=True), _range_text("integer", 64, 4096)),
    _K("title", ("figure", "section", "radial"), _text, "a string"),
    _K("shell", ("layout",), _number(1, 6, integer=True), _range_text("integer", 1, 6)),
    _K("basis", ("layout",), _choice(("real", "complex")), _choice_text(("real", "complex"))),
    _K("columns", ("layout",), _number(1, 64, integer=True), _range_text("integer", 1, 64)),
    # sections
    _K("plane", ("section",), _choice(PLANE_NAMES), _choice_text(PLANE_NAMES)),
    _K("normal", ("section",), _by(_numbers(3), plane), "three numbers, not all zero"),
    _K("offset_a0", ("section",), _number(), "a finite number"),
    _K("extent_a0", ("section",), _number(0, lo_open=True), _range_text("number", 0, None, lo_open=True)),
    _K("pixels", ("section",), _number(MIN_PIXELS, MAX_PIXELS, integer=True),
       _range_text("integer", MIN_PIXELS, MAX_PIXELS)),
    _K("scale", ("section",), _choice(DENSITY_SCALES), _choice_text(DENSITY_SCALES)),
    _K("decades", ("section",), _number(0, _MAX_DECADES, lo_open=True),
       _range_text("number", 0, _MAX_DECADES, lo_open=True)),
    _K("nodes", ("section",), _boolean, "true or false"),
    _K("contour", ("section",), _boolean, "true or false"),
    # radial plots
    _K("quantity", ("radial",), _by(_quantities, lambda v: parse_quantities(",".join(v))),
       "'all', or one or a list of 'R', 'density', 'cumulative'"),
    # meshes
    _K("size_mm", ("mesh",), _number(*SIZE_MM_RANGE), _range_text("number", *SIZE_MM_RANGE)),
    _K("printable", ("mesh",), _boolean, "true or false"),
    _K("base", ("mesh",), _choice(BASES), _choice_text(BASES)),
    _K("print_cutaway", ("mesh",), _boolean, "true or false"),
    _K("min_thickness_mm", ("mesh",), _number(0, lo_open=True), _range_text("number", 0, None, lo_open=True)),
    _K("min_gap_mm", ("mesh",), _number(0, lo_open=True), _range_text("number", 0, None, lo_open=True)),
    _K("strut_fraction", ("mesh",), _number(0, 0.5, lo_open=True),
       _range_text("number", 0, 0.5, lo_open=True)),
    _K("split_sign", ("mesh",), _boolean, "true or false"),
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
        raise ConfigError(f"{_where(path, table, key)} must be {expected}, got {_shown(value)}") from None


def _shown(value: Any) -> str:
    if isinstance(value, dict):
        return "a table"
    text = repr(value) if not isinstance(value, bool) else str(value).lower()
    return text if len(text) <= 60 else text[:57] + "..."


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
        printing = [k for k in ("printable", "print_cutaway") if opts.get(k)]
        if printing and "size_mm" not in opts:
            raise bad(printing[0], "needs 'size_mm', the printed size in millimetres")
        if opts.get("print_cutaway") and not opts.get("printable"):
            raise bad("print_cutaway", "is part of 'printable = true'")
        if opts.get("split_sign"):
            if opts.get("printable"):
                raise bad("split_sign", "does not go with 'printable' (bodies for two materials "
                                        "are written as they are)")
            if file.lower().endswith(".stl"):
                raise bad("split_sign", "needs a file format that keeps bodies apart: .glb, .ply or .obj")
            if states and not is_real(states[0]):
                raise bad("split_sign", "needs a real state (psi real up to one global phase)")
    if opts.get("phase_map") == "sign" and not all(is_real(s) for s in states):
        raise bad("phase_map", "cannot be 'sign' for a complex state (psi not real up to one "
                               "global phase): use 'uniform' or 'cvd'")
    if kind == "figure" and opts.get("nodal_axis") and states:
        st = states[0]
        if not st.is_single_centre or any(t.m == 0 for t in st.terms):
            raise bad("nodal_axis", "needs a state whose terms all have m != 0 about one centre")


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
            raise ConfigError(f"{path}: key '{key}' must be a string, got {_shown(data[key])}")
    defaults = data.get("defaults", {})
    if not isinstance(defaults, dict):
        raise ConfigError(f"{path}: key 'defaults' must be a table, got {_shown(defaults)}")
    _check_known(defaults, path, "defaults", output=False)
    ctx = {"folder": folder}
    checked_defaults = {k: _checked(k, v, ctx, path, "defaults") for k, v in defaults.items()}
    outputs = data.get("outputs")
    if not isinstance(outputs, list) or not outputs or not all(isinstance(o, dict) for o in outputs):
        raise ConfigError(f"{path}: key 'outputs' must be a non-empty list of tables "
                          "([[outputs]] entries), got " + ("nothing" if outputs is None else _shown(outputs)))
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
