"""Gallery step, the cache: lattices, levels and surfaces on disk, keyed by what determines them.

Each entry is named by the sha256 of a canonical JSON text (keys sorted, no
spaces, floats written with ``repr`` so they round-trip exactly) of exactly the
inputs that fix the result:

``lattice``
    the state's terms (n, l, m, coefficient, centre), Z, mu/m_e and time, the
    resolution, the box (centre and half-width, the default box resolved) and
    the dtype;
``level``
    the state (or, for a user field, the sha256 of the file and its spacing and
    origin) and the fraction;
``surface``
    both of the above;

plus a *method version*: the sha256 of the source files of the subpackages that
compute the entry, so that any change of the code invalidates what it made, and
the cache format number.  The state's label is not part of a key (it changes no
number); the state given to the lookup is attached to what is loaded.

Each entry carries the format number, its kind, its key and a sha256 of its
content (the arrays' dtypes, shapes and bytes and the scalars' canonical JSON).
Before use an entry is checked against all four and against the shape of what it
must hold; a damaged entry (truncated, edited by hand, emptied) is discarded,
computed again and mentioned once in :attr:`CacheStats.notes`.  Entries are
written through :func:`orbitalrender.atomic.atomic_path`, so a reader never sees
a partial file; two processes computing the same entry at the same time write the
same content.  Loading an entry refreshes its modification time, and
:func:`orbitalrender.gallery.store.evict` removes the least recently used entries
until the total is below the bound (2 GiB by default).  What the folder may hold
besides entries, and how a killed run's temporaries are removed, is in
:mod:`orbitalrender.gallery.store`.

:class:`CacheStats` counts what was computed and what was loaded, per kind, so a
caller (or a test) can check that a second run recomputed nothing.
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import Any

import numpy as np

from ..atomic import atomic_path
from ..lattice.grid import Box, Lattice
from ..lattice.sampler import default_box, sample
from ..state.model import State
from ..surface.level import LevelResult, level_for_fraction
from ..surface.model import Surface
from .options import DEFAULT_LIMIT_GIB
from .store import CACHE_KINDS

__all__ = ["CACHE_FORMAT", "DEFAULT_LIMIT_BYTES", "CACHE_KINDS", "CacheStats", "DiskCache",
           "canonical_json", "entry_key", "state_key", "level_key", "surface_key", "cached_lattice",
           "cached_level", "cached_surface", "method_version", "content_sha256", "file_sha256"]

#: Bumped when the layout of the stored files changes (2: entries carry a content hash).
CACHE_FORMAT = 2
#: Default size bound of a cache folder: 2 GiB (about 128 lattices of 128^3 complex64).
DEFAULT_LIMIT_BYTES = int(DEFAULT_LIMIT_GIB * 1024**3)
#: Subpackages whose source decides each kind of entry.
_SOURCES = {
    "lattice": ("state", "lattice"),
    "level": ("state", "lattice", "surface"),
    "surface": ("state", "lattice", "surface"),
}
_PACKAGE = Path(__file__).resolve().parent.parent


@dataclass
class CacheStats:
    """Counts of cache entries computed and loaded, per kind, and of drawings made.

    Examples
    --------
    >>> a = CacheStats(); a.count("lattice", computed=True); a.count("surface", computed=False)
    >>> b = CacheStats(); b.count("lattice", computed=False); b.drawn += 1
    >>> a.merge(b); a.as_dict()["loaded"], a.drawn
    ({'lattice': 1, 'level': 0, 'surface': 1}, 1)

    `kept` counts outputs left as they were (made before from the same inputs, files
    intact); `notes` holds one line per damaged entry that was discarded.
    """

    computed: dict[str, int] = field(default_factory=lambda: dict.fromkeys(CACHE_KINDS, 0))
    loaded: dict[str, int] = field(default_factory=lambda: dict.fromkeys(CACHE_KINDS, 0))
    drawn: int = 0
    kept: int = 0
    notes: list[str] = field(default_factory=list)

    def count(self, kind: str, computed: bool) -> None:
        (self.computed if computed else self.loaded)[kind] += 1

    def note(self, text: str) -> None:
        if text not in self.notes:
            self.notes.append(text)

    def merge(self, other: CacheStats) -> None:
        for kind in CACHE_KINDS:
            self.computed[kind] += other.computed[kind]
            self.loaded[kind] += other.loaded[kind]
        self.drawn += other.drawn
        self.kept += other.kept
        for text in other.notes:
            self.note(text)

    def as_dict(self) -> dict[str, Any]:
        return {"computed": dict(self.computed), "loaded": dict(self.loaded), "drawn": self.drawn,
                "kept": self.kept}


@dataclass(frozen=True)
class DiskCache:
    """A cache folder; ``folder=None`` stores nothing and finds nothing."""

    folder: Path | None
    limit_bytes: int = DEFAULT_LIMIT_BYTES

    def entry(self, kind: str, key: str, suffix: str | None = None) -> Path | None:
        """The path of entry `key` of `kind` (its folder made if missing), None without a folder;
        `suffix` defaults to the one the kind is stored with."""
        if self.folder is None:
            return None
        sub = self.folder / kind
        sub.mkdir(parents=True, exist_ok=True)
        return sub / f"{key}{suffix or _SUFFIXES[kind]}"


#: How each kind is stored: arrays in an .npz file, a level's numbers in JSON.
_SUFFIXES = {"lattice": ".npz", "level": ".json", "surface": ".npz"}


def canonical_json(value: Any) -> str:
    """Key-sorted compact JSON; floats as ``repr`` (exact round trip), tuples as lists.

    Examples
    --------
    >>> canonical_json({"b": (1, 0.1), "a": True})
    '{"a":true,"b":[1,0.1]}'
    """
    return json.dumps(value, sort_keys=True, separators=(",", ":"), allow_nan=False)


@cache
def method_version(kind: str) -> str:
    """sha256 of the source files of the subpackages that compute entries of `kind`."""
    h = hashlib.sha256(f"format {CACHE_FORMAT}".encode())
    for sub in _SOURCES[kind]:
        for src in sorted((_PACKAGE / sub).glob("*.py")):
            h.update(src.name.encode())
            h.update(src.read_bytes())
    return h.hexdigest()


def file_sha256(path: str | os.PathLike) -> str:
    """sha256 of a file's bytes, read in blocks of 1 MiB."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def state_key(state: State) -> dict[str, Any]:
    """What of a state changes psi: terms, Z, reduced mass and time (not the label)."""
    return {
        "terms": [[t.n, t.l, t.m, t.coefficient.real, t.coefficient.imag, list(t.centre_a0)]
                  for t in state.terms],
        "Z": state.Z, "mu": state.reduced_mass_ratio, "time_au": state.time_au,
    }


def entry_key(kind: str, parts: dict[str, Any]) -> str:
    """The sha256 naming the entry of `kind` determined by `parts` (and the method version)."""
    text = canonical_json({"kind": kind, "method": method_version(kind), **parts})
    return hashlib.sha256(text.encode()).hexdigest()


def _box_key(box: Box) -> list:
    return [list(box.centre_a0), box.half_width_a0]


def _lattice_parts(state: State, resolution: int, box: Box, dtype) -> dict[str, Any]:
    return {"state": state_key(state), "resolution": int(resolution), "box": _box_key(box),
            "dtype": np.dtype(dtype).name}


def _touch(path: Path) -> None:
    try:
        os.utime(path)
    except OSError:  # read-only cache: the entry is still usable
        pass


Arrays = dict[str, np.ndarray]


def content_sha256(kind: str, key: str, arrays: Arrays, scalars: dict[str, Any]) -> str:
    """sha256 of an entry's content: format, kind, key, scalars (canonical JSON) and, per array
    in name order, its name, dtype, shape and bytes.

    Examples
    --------
    >>> a = content_sha256("level", "k", {}, {"level": 0.5})
    >>> a == content_sha256("level", "k", {}, {"level": 0.5})
    True
    >>> a == content_sha256("level", "k", {}, {"level": 10.0})
    False
    """
    h = hashlib.sha256(canonical_json({"format": CACHE_FORMAT, "kind": kind, "key": key,
                                       "scalars": scalars}).encode())
    for name in sorted(arrays):
        a = np.ascontiguousarray(arrays[name])
        h.update(canonical_json([name, a.dtype.str, list(a.shape)]).encode())
        h.update(a.view(np.uint8).reshape(-1) if a.size else b"")
    return h.hexdigest()


def _meta(kind: str, key: str, arrays: Arrays, scalars: dict[str, Any]) -> dict[str, Any]:
    return {"format": CACHE_FORMAT, "kind": kind, "key": key, "scalars": scalars,
            "sha256": content_sha256(kind, key, arrays, scalars)}


def _write(tmp: Path, meta: dict[str, Any], arrays: Arrays) -> None:
    if tmp.name.endswith(".json"):
        tmp.write_text(canonical_json(meta), encoding="utf-8")
        return
    with open(tmp, "wb") as fh:
        np.savez(fh, **arrays, _meta=np.array(canonical_json(meta)))


def _read(path: Path) -> tuple[dict[str, Any], Arrays]:
    if path.suffix == ".json":
        return json.loads(path.read_text(encoding="utf-8")), {}
    with np.load(path, allow_pickle=False) as z:
        arrays = {name: z[name] for name in z.files}
    return json.loads(str(arrays.pop("_meta"))), arrays


def _verified(path: Path, kind: str, key: str) -> tuple[Arrays, dict[str, Any]]:
    """The arrays and scalars of the entry at `path`; ValueError saying what is wrong with it."""
    try:
        meta, arrays = _read(path)
    except Exception as exc:  # noqa: BLE001 - any unreadable file is a damaged entry
        raise ValueError(f"unreadable: {type(exc).__name__}") from None
    if not isinstance(meta, dict) or meta.get("format") != CACHE_FORMAT:
        raise ValueError("not of this cache format")
    if meta.get("kind") != kind or meta.get("key") != key:
        raise ValueError("made for another entry")
    scalars = meta.get("scalars")
    if not isinstance(scalars, dict) or meta.get("sha256") != content_sha256(kind, key, arrays, scalars):
        raise ValueError("content hash differs")
    return arrays, scalars


def _lookup(cache: DiskCache, stats: CacheStats, kind: str, key: str,
            build: Callable[[Arrays, dict], Any], compute: Callable[[], Any],
            parts: Callable[[Any], tuple[Arrays, dict]]) -> Any:
    """The entry `key` of `kind`: loaded and verified, else computed and stored.

    `build(arrays, scalars)` makes the value from a verified entry and raises if the
    content is not what an entry of `kind` holds; `parts(value)` is its inverse.
    """
    path = cache.entry(kind, key)
    if path is not None and path.is_file():
        try:
            arrays, scalars = _verified(path, kind, key)
            try:
                value = build(arrays, scalars)
            except Exception as exc:  # noqa: BLE001 - a wrong shape or field is a damaged entry
                raise ValueError(f"not a valid {kind}: {type(exc).__name__}: {exc}") from None
        except ValueError as why:
            stats.note(f"cache: the {kind} entry {key[:12]} was damaged ({why}); "
                       "discarded and computed again")
            path.unlink(missing_ok=True)
        else:
            _touch(path)
            stats.count(kind, computed=False)
            return value
    value = compute()
    stats.count(kind, computed=True)
    if path is not None:
        arrays, scalars = parts(value)
        with atomic_path(path, join_set=False) as tmp:  # readable at once by later outputs
            _write(tmp, _meta(kind, key, arrays, scalars), arrays)
    return value


def _require(ok: bool, what: str) -> None:
    if not ok:
        raise ValueError(what)


def _finite_vector(a: np.ndarray, what: str) -> tuple[float, ...]:
    _require(a.shape == (3,) and np.issubdtype(a.dtype, np.floating) and bool(np.all(np.isfinite(a))),
             f"{what} must be three finite numbers")
    return tuple(float(v) for v in a)


def cached_lattice(cache: DiskCache, stats: CacheStats, state: State, resolution: int,
                   box: Box | None = None, dtype=np.complex64) -> Lattice:
    """:func:`orbitalrender.lattice.sampler.sample` through the cache."""
    box = box if box is not None else default_box(state)
    key = entry_key("lattice", _lattice_parts(state, resolution, box, dtype))
    n = int(resolution)

    def build(arrays: Arrays, scalars: dict) -> Lattice:
        values = arrays["values"]
        _require(values.shape == (n, n, n) and values.dtype == np.dtype(dtype),
                 f"values must be {n}^3 {np.dtype(dtype).name}")
        spacing = _finite_vector(arrays["spacing_a0"], "spacing_a0")
        _require(min(spacing) > 0, "spacing_a0 must be positive")
        return Lattice(values, _finite_vector(arrays["origin_a0"], "origin_a0"), spacing, state)

    def parts(lat: Lattice) -> tuple[Arrays, dict]:
        return {"values": lat.values, "origin_a0": np.array(lat.origin_a0, dtype=float),
                "spacing_a0": np.array(lat.spacing_a0, dtype=float)}, {}

    return _lookup(cache, stats, "lattice", key, build,
                   lambda: sample(state, resolution, box, dtype), parts)


def _source_parts(source: State | dict) -> dict[str, Any]:
    """A state's key, or the description of a user field (already a dict of JSON values)."""
    return {"state": state_key(source)} if isinstance(source, State) else {"field": source}


def level_key(source: State | dict, fraction: float) -> str:
    """Cache key of the level enclosing `fraction` of `source` (a State or a field description)."""
    return entry_key("level", {**_source_parts(source), "fraction": float(fraction)})


def surface_key(source: State | dict, fraction: float, resolution: int, box: Box | None,
                dtype, level_rule: str = "quadrature") -> str:
    """Cache key of a surface.  For a state it holds the lattice's parts with the box resolved;
    for a user field (`source` a dict describing the file) the file fixes the lattice.
    `level_rule` says how the level was found (``"quadrature"``, or ``"lattice"`` in drafts)."""
    parts = {**_source_parts(source), "fraction": float(fraction), "level_rule": level_rule}
    if isinstance(source, State):
        box = box if box is not None else default_box(source)
        parts.update(_lattice_parts(source, resolution, box, dtype))
    return entry_key("surface", parts)


def _fraction_or_none(v: Any) -> bool:
    return v is None or (isinstance(v, float) and 0.0 <= v <= 1.0)


def _level_result(scalars: dict, fraction: float) -> LevelResult:
    res = LevelResult(**scalars)
    _require(isinstance(res.level, float) and np.isfinite(res.level) and res.level > 0,
             "level must be a positive number")
    _require(res.fraction_requested == float(fraction), f"fraction_requested must be {fraction}")
    _require(_fraction_or_none(res.fraction_enclosed) and res.fraction_enclosed is not None,
             "fraction_enclosed must be in [0, 1]")
    _require(res.fraction_error is None or isinstance(res.fraction_error, float), "bad fraction_error")
    _require(isinstance(res.method, str), "method must be text")
    return res


def cached_level(cache: DiskCache, stats: CacheStats, source: State | dict, fraction: float,
                 compute: Callable[[], LevelResult] | None = None) -> LevelResult:
    """:func:`orbitalrender.surface.level.level_for_fraction` through the cache.

    `source` is a State, or for a user field a dict describing the file (its sha256,
    spacing and origin) together with `compute`, which makes the level from the field.
    """
    key = level_key(source, fraction)
    compute = compute or (lambda: level_for_fraction(source, fraction))
    return _lookup(cache, stats, "level", key,
                   lambda arrays, scalars: _level_result(scalars, fraction), compute,
                   lambda res: ({}, dict(res.__dict__)))


_SURFACE_ARRAYS = ("vertices_a0", "faces", "normals", "psi")
_SURFACE_SCALARS = ("level", "fraction_requested", "fraction_enclosed", "fraction_error",
                    "lattice_shape", "spacing_a0")


def _surface_from(arrays: Arrays, scalars: dict, state: State | None) -> Surface:
    v, f, nrm, psi = (arrays[k] for k in _SURFACE_ARRAYS)
    _require(v.ndim == 2 and v.shape[1] == 3 and nrm.shape == v.shape and psi.shape == (len(v),),
             "vertices, normals and psi must agree in length")
    _require(f.ndim == 2 and f.shape[1] == 3 and np.issubdtype(f.dtype, np.integer)
             and (f.size == 0 or (int(f.min()) >= 0 and int(f.max()) < len(v))),
             "faces must index the vertices")
    _require(set(scalars) == set(_SURFACE_SCALARS), "the scalars must be " + ", ".join(_SURFACE_SCALARS))
    _require(isinstance(scalars["level"], float) and scalars["level"] > 0, "level must be positive")
    scalars = {**scalars, "lattice_shape": tuple(int(n) for n in scalars["lattice_shape"]),
               "spacing_a0": tuple(float(d) for d in scalars["spacing_a0"])}
    _require(len(scalars["lattice_shape"]) == 3 and len(scalars["spacing_a0"]) == 3,
             "lattice_shape and spacing_a0 must have three entries")
    return Surface(v, f, nrm, psi, **scalars, state=state)


def _surface_parts(s: Surface) -> tuple[Arrays, dict]:
    scalars = {k: getattr(s, k) for k in _SURFACE_SCALARS}
    scalars["lattice_shape"] = [int(v) for v in scalars["lattice_shape"]]
    scalars["spacing_a0"] = [float(v) for v in scalars["spacing_a0"]]
    for k in ("level", "fraction_requested", "fraction_enclosed", "fraction_error"):
        scalars[k] = None if scalars[k] is None else float(scalars[k])
    return {k: getattr(s, k) for k in _SURFACE_ARRAYS}, scalars


def cached_surface(cache: DiskCache, stats: CacheStats, source: State | dict, fraction: float,
                   resolution: int, box: Box | None, dtype, compute: Callable[[], Surface],
                   level_rule: str = "quadrature") -> Surface:
    """A Surface through the cache; `compute` makes it on a miss.

    For a state the key holds the resolved box; for a user field (`source` a dict
    describing the file) resolution and box are those of the file and not part of it.
    """
    key = surface_key(source, fraction, resolution, box, dtype, level_rule)
    state = source if isinstance(source, State) else None
    return _lookup(cache, stats, "surface", key,
                   lambda arrays, scalars: _surface_from(arrays, scalars, state), compute,
                   _surface_parts)
