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

Entries are written through :func:`orbitalrender.atomic.atomic_path`, so a
reader never sees a partial file; two processes computing the same entry at the
same time both write the same bytes.  Loading an entry refreshes its
modification time, and :func:`evict` removes the least recently used entries
until the total is below the bound (2 GiB by default).

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

__all__ = ["CACHE_FORMAT", "DEFAULT_LIMIT_BYTES", "CACHE_KINDS", "CacheStats", "DiskCache",
           "canonical_json", "entry_key", "state_key", "level_key", "surface_key", "cached_lattice",
           "cached_level", "cached_surface", "evict", "method_version"]

#: Bumped when the layout of the stored files changes.
CACHE_FORMAT = 1
#: Default size bound of a cache folder: 2 GiB (about 128 lattices of 128^3 complex64).
DEFAULT_LIMIT_BYTES = int(DEFAULT_LIMIT_GIB * 1024**3)
CACHE_KINDS = ("lattice", "level", "surface")
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
    """

    computed: dict[str, int] = field(default_factory=lambda: dict.fromkeys(CACHE_KINDS, 0))
    loaded: dict[str, int] = field(default_factory=lambda: dict.fromkeys(CACHE_KINDS, 0))
    drawn: int = 0

    def count(self, kind: str, computed: bool) -> None:
        (self.computed if computed else self.loaded)[kind] += 1

    def merge(self, other: CacheStats) -> None:
        for kind in CACHE_KINDS:
            self.computed[kind] += other.computed[kind]
            self.loaded[kind] += other.loaded[kind]
        self.drawn += other.drawn

    def as_dict(self) -> dict[str, Any]:
        return {"computed": dict(self.computed), "loaded": dict(self.loaded), "drawn": self.drawn}


@dataclass(frozen=True)
class DiskCache:
    """A cache folder; ``folder=None`` stores nothing and finds nothing."""

    folder: Path | None
    limit_bytes: int = DEFAULT_LIMIT_BYTES

    def entry(self, kind: str, key: str, suffix: str) -> Path | None:
        if self.folder is None:
            return None
        sub = self.folder / kind
        sub.mkdir(parents=True, exist_ok=True)
        return sub / f"{key}{suffix}"


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


def _lookup(cache: DiskCache, stats: CacheStats, kind: str, key: str, suffix: str,
            load: Callable[[Path], Any], compute: Callable[[], Any],
            store: Callable[[Path, Any], None]) -> Any:
    path = cache.entry(kind, key, suffix)
    if path is not None and path.is_file():
        try:
            value = load(path)
        except (OSError, ValueError, KeyError, EOFError):
            path.unlink(missing_ok=True)  # unreadable entry: compute it again
        else:
            _touch(path)
            stats.count(kind, computed=False)
            return value
    value = compute()
    stats.count(kind, computed=True)
    if path is not None:
        with atomic_path(path, join_set=False) as tmp:  # readable at once by later outputs
            store(tmp, value)
    return value


def _save_npz(tmp: Path, arrays: dict[str, np.ndarray]) -> None:
    with open(tmp, "wb") as fh:
        np.savez(fh, **arrays)


def cached_lattice(cache: DiskCache, stats: CacheStats, state: State, resolution: int,
                   box: Box | None = None, dtype=np.complex64) -> Lattice:
    """:func:`orbitalrender.lattice.sampler.sample` through the cache."""
    box = box if box is not None else default_box(state)
    key = entry_key("lattice", _lattice_parts(state, resolution, box, dtype))

    def load(path: Path) -> Lattice:
        with np.load(path, allow_pickle=False) as z:
            return Lattice(z["values"], tuple(z["origin_a0"]), tuple(z["spacing_a0"]), state)

    def store(tmp: Path, lat: Lattice) -> None:
        _save_npz(tmp, {"values": lat.values, "origin_a0": np.array(lat.origin_a0),
                        "spacing_a0": np.array(lat.spacing_a0)})

    return _lookup(cache, stats, "lattice", key, ".npz", load,
                   lambda: sample(state, resolution, box, dtype), store)


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


def cached_level(cache: DiskCache, stats: CacheStats, source: State | dict, fraction: float,
                 compute: Callable[[], LevelResult] | None = None) -> LevelResult:
    """:func:`orbitalrender.surface.level.level_for_fraction` through the cache.

    `source` is a State, or for a user field a dict describing the file (its sha256,
    spacing and origin) together with `compute`, which makes the level from the field.
    """
    key = level_key(source, fraction)
    compute = compute or (lambda: level_for_fraction(source, fraction))

    def load(path: Path) -> LevelResult:
        return LevelResult(**json.loads(path.read_text(encoding="utf-8")))

    def store(tmp: Path, res: LevelResult) -> None:
        tmp.write_text(json.dumps(res.__dict__, sort_keys=True), encoding="utf-8")

    return _lookup(cache, stats, "level", key, ".json", load, compute, store)


_SURFACE_ARRAYS = ("vertices_a0", "faces", "normals", "psi")
_SURFACE_SCALARS = ("level", "fraction_requested", "fraction_enclosed", "fraction_error",
                    "lattice_shape", "spacing_a0")


def cached_surface(cache: DiskCache, stats: CacheStats, source: State | dict, fraction: float,
                   resolution: int, box: Box | None, dtype, compute: Callable[[], Surface],
                   level_rule: str = "quadrature") -> Surface:
    """A Surface through the cache; `compute` makes it on a miss.

    For a state the key holds the resolved box; for a user field (`source` a dict
    describing the file) resolution and box are those of the file and not part of it.
    """
    key = surface_key(source, fraction, resolution, box, dtype, level_rule)
    state = source if isinstance(source, State) else None

    def load(path: Path) -> Surface:
        with np.load(path, allow_pickle=False) as z:
            arrays = {k: z[k] for k in _SURFACE_ARRAYS}
            scalars = json.loads(str(z["scalars"]))
        scalars["lattice_shape"] = tuple(scalars["lattice_shape"])
        scalars["spacing_a0"] = tuple(scalars["spacing_a0"])
        return Surface(**arrays, **scalars, state=state)

    def store(tmp: Path, s: Surface) -> None:
        scalars = {k: getattr(s, k) for k in _SURFACE_SCALARS}
        scalars["lattice_shape"] = [int(v) for v in scalars["lattice_shape"]]
        scalars["spacing_a0"] = [float(v) for v in scalars["spacing_a0"]]
        _save_npz(tmp, {**{k: getattr(s, k) for k in _SURFACE_ARRAYS},
                        "scalars": np.array(json.dumps(scalars))})

    return _lookup(cache, stats, "surface", key, ".npz", load, compute, store)


def evict(cache: DiskCache) -> int:
    """Remove least recently used entries until the folder holds at most ``limit_bytes``.

    Returns the number of entries removed.  Files being written (temporary names
    starting with '.') are left alone.
    """
    if cache.folder is None or not cache.folder.is_dir():
        return 0
    entries = []
    for kind in CACHE_KINDS:
        sub = cache.folder / kind
        if sub.is_dir():
            for p in sub.iterdir():
                if p.is_file() and not p.name.startswith("."):
                    st = p.stat()
                    entries.append((st.st_mtime_ns, st.st_size, p))
    total = sum(size for _, size, _ in entries)
    removed = 0
    for _, size, p in sorted(entries, key=lambda e: (e[0], e[2].name)):
        if total <= cache.limit_bytes:
            break
        p.unlink(missing_ok=True)
        total -= size
        removed += 1
    return removed
