"""The gallery cache: keys fixed by exactly what determines an entry, exact round trips, LRU bound."""

from __future__ import annotations

import hashlib
import json
import os

import numpy as np

from orbitalrender.gallery.cache import (
    CacheStats,
    DiskCache,
    cached_lattice,
    cached_level,
    cached_surface,
    canonical_json,
    level_key,
    surface_key,
)
from orbitalrender.gallery.store import evict
from orbitalrender.lattice.grid import Box
from orbitalrender.lattice.sampler import default_box, sample
from orbitalrender.state.model import eigenstate, real_orbital
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.model import Surface


def test_keys_depend_on_what_determines_the_entry_only():
    a = eigenstate(2, 1, 0, label="two")
    b = eigenstate(2, 1, 0, label="another name")
    assert level_key(a, 0.9) == level_key(b, 0.9)          # the label changes no number
    assert level_key(a, 0.9) != level_key(a, 0.8)
    assert level_key(a, 0.9) != level_key(eigenstate(2, 1, 1), 0.9)
    s = parse_state("(2,1,1) + (3,2,1)")
    assert level_key(s, 0.9) != level_key(s.at_time(1.0), 0.9)
    dt = np.complex64
    # the default box and the same box given explicitly are the same entry
    assert surface_key(a, 0.9, 64, None, dt) == surface_key(a, 0.9, 64, default_box(a), dt)
    assert surface_key(a, 0.9, 64, None, dt) != surface_key(a, 0.9, 65, None, dt)
    assert surface_key(a, 0.9, 64, None, dt) != surface_key(a, 0.9, 64, Box((0, 0, 0), 30.0), dt)
    assert surface_key(a, 0.9, 64, None, dt) != surface_key(a, 0.9, 64, None, np.complex128)
    assert surface_key(a, 0.9, 64, None, dt) != surface_key(real_orbital(2, 1, 1), 0.9, 64, None, dt)


def test_key_is_sha256_of_canonical_json():
    # the canonical form sorts keys and writes floats exactly (repr round trip, Python docs)
    text = canonical_json({"z": 0.1 + 0.2, "a": [1, 2]})
    assert text == '{"a":[1,2],"z":0.30000000000000004}'
    assert len(level_key(eigenstate(1, 0, 0), 0.5)) == len(hashlib.sha256().hexdigest())


def test_lattice_round_trip_is_exact_and_counted(tmp_path):
    cache = DiskCache(tmp_path)
    state = eigenstate(2, 1, 1)
    first, second = CacheStats(), CacheStats()
    lat = cached_lattice(cache, first, state, 24)
    again = cached_lattice(cache, second, state, 24)
    assert first.computed["lattice"] == 1 and first.loaded["lattice"] == 0
    assert second.computed["lattice"] == 0 and second.loaded["lattice"] == 1
    np.testing.assert_array_equal(again.values, sample(state, 24).values)
    assert again.values.dtype == lat.values.dtype and again.state is state
    assert again.origin_a0 == lat.origin_a0 and again.spacing_a0 == lat.spacing_a0


def test_level_round_trip(tmp_path):
    cache = DiskCache(tmp_path)
    stats = CacheStats()
    state = eigenstate(1, 0, 0)
    res = cached_level(cache, stats, state, 0.5)
    assert cached_level(cache, stats, state, 0.5) == res
    assert stats.computed["level"] == 1 and stats.loaded["level"] == 1


def _surface(state) -> Surface:
    rng = np.random.default_rng(1)
    v = rng.normal(size=(5, 3))
    return Surface(v, np.array([[0, 1, 2], [2, 3, 4]]), v / np.linalg.norm(v, axis=1)[:, None],
                   state.psi(*v.T), 0.01, 0.9, 0.9001, None, (24, 24, 24), (0.5, 0.5, 0.5), state)


def test_surface_round_trip_attaches_the_given_state(tmp_path):
    cache = DiskCache(tmp_path)
    state = eigenstate(2, 1, 0)
    made = _surface(state)
    stats = CacheStats()
    cached_surface(cache, stats, state, 0.9, 24, None, np.complex64, lambda: made)
    relabelled = eigenstate(2, 1, 0, label="2p0")
    loaded = cached_surface(cache, stats, relabelled, 0.9, 24, None, np.complex64,
                            lambda: (_ for _ in ()).throw(AssertionError("must not recompute")))
    assert stats.computed["surface"] == 1 and stats.loaded["surface"] == 1
    for name in ("vertices_a0", "faces", "normals", "psi"):
        np.testing.assert_array_equal(getattr(loaded, name), getattr(made, name))
    assert loaded.state.label == "2p0"
    assert (loaded.level, loaded.fraction_enclosed, loaded.fraction_error, loaded.lattice_shape) == \
        (made.level, made.fraction_enclosed, made.fraction_error, made.lattice_shape)


def test_unreadable_entry_is_recomputed(tmp_path):
    cache = DiskCache(tmp_path)
    state = eigenstate(1, 0, 0)
    key = level_key(state, 0.3)
    cache.entry("level", key, ".json").write_text("{not json")
    stats = CacheStats()
    cached_level(cache, stats, state, 0.3)
    assert stats.computed["level"] == 1
    assert json.loads(cache.entry("level", key, ".json").read_text())["scalars"]["fraction_requested"] == 0.3


def test_no_folder_stores_nothing():
    stats = CacheStats()
    cached_level(DiskCache(None), stats, eigenstate(1, 0, 0), 0.4)
    cached_level(DiskCache(None), stats, eigenstate(1, 0, 0), 0.4)
    assert stats.computed["level"] == 2


def test_eviction_removes_least_recently_used_first(tmp_path):
    cache = DiskCache(tmp_path, limit_bytes=2500)
    files = []
    for i, kind in enumerate(("lattice", "level", "surface", "lattice")):
        p = cache.entry(kind, f"{i:064x}", ".npz")
        p.write_bytes(b"x" * 1000)
        os.utime(p, ns=(10**18 + i * 10**9,) * 2)
        files.append(p)
    os.utime(files[0], ns=(2 * 10**18,) * 2)  # the oldest file was used last
    assert evict(cache.folder, cache.limit_bytes) == 2
    assert [p.exists() for p in files] == [True, False, False, True]
    assert evict(cache.folder, cache.limit_bytes) == 0
