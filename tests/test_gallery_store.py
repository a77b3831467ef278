"""The cache folder: foreign files refused and never deleted, temporaries of killed runs removed,
those of live runs kept, damaged entries discarded and computed again.

The faults are real: files written by hand into a cache folder, temporaries left by a
process killed with SIGKILL while it wrote them, entries truncated or edited on disk.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from orbitalrender.cli import main
from orbitalrender.gallery.cache import CacheStats, DiskCache, cached_level, cached_surface, level_key
from orbitalrender.gallery.runner import run_gallery
from orbitalrender.gallery.store import (
    CACHE_KINDS,
    MARKER,
    ForeignCacheError,
    evict,
    is_temporary_name,
    open_folder,
    scratch_folder,
)
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import extract_surface

REPO = Path(__file__).resolve().parents[1]
ONE_FIGURE = """
[[outputs]]
name = "p"
kind = "figure"
state = "2pz"
resolution = 20
fraction = 0.8
width_px = 240
height_px = 200
supersample = 1
"""


def _config(tmp: Path, text: str = ONE_FIGURE) -> Path:
    cfg = tmp / "g.toml"
    cfg.write_text(textwrap.dedent(text), encoding="utf-8")
    return cfg


def _entries(folder: Path, kind: str) -> list[Path]:
    return sorted((folder / kind).glob("*.*"))


def test_a_cache_folder_with_the_users_files_is_refused_and_left_alone(tmp_path, capsys):
    proj = tmp_path / "proj"
    (proj / "surface").mkdir(parents=True)
    (proj / "lattice").mkdir()
    (proj / "surface" / "notes.txt").write_text("my notes")
    (proj / "lattice" / "photo.png").write_bytes(b"\x89PNG not really")
    status = main(["gallery", str(_config(tmp_path)), "--out", str(tmp_path / "out"),
                   "--cache-dir", str(proj), "--cache-limit-gib", "0.00001", "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert status == 2 and len(err) == 1
    assert "proj" in err[0] and "lattice/photo.png" in err[0] and "did not write" in err[0]
    assert (proj / "surface" / "notes.txt").read_text() == "my notes"
    assert (proj / "lattice" / "photo.png").is_file()
    assert not (tmp_path / "out" / "p.png").exists()  # refused before any work


def test_eviction_removes_only_the_caches_own_entries(tmp_path):
    cfg = _config(tmp_path)
    cache_dir = tmp_path / "c"
    run_gallery(cfg, tmp_path / "out", jobs=1, cache_dir=cache_dir)
    # a file dropped into the folder during a later run (after the check at its start)
    stray = cache_dir / "surface" / "notes.txt"
    stray.write_text("keep me")
    removed = evict(cache_dir, 0)
    assert removed == 3  # the lattice, level and surface entries
    assert stray.read_text() == "keep me" and (cache_dir / MARKER).is_file()
    assert all(_entries(cache_dir, k) == [] for k in ("lattice", "level"))
    with pytest.raises(ForeignCacheError, match="notes.txt"):
        open_folder(cache_dir)


def _killed_writer(cache_dir: Path, script: str) -> None:
    """Run `script` in a child process that prints 'ready' when it is in place, then
    kill it with SIGKILL, so no clean-up of its own can run."""
    child = subprocess.Popen([sys.executable, "-c", textwrap.dedent(script), str(cache_dir)],
                             cwd=REPO, stdout=subprocess.PIPE, text=True)
    try:
        assert child.stdout.readline().strip() == "ready"
    finally:
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=60)


_WRITE_AND_HANG = """
    import sys, time
    from pathlib import Path
    from orbitalrender.atomic import atomic_path
    target = Path(sys.argv[1]) / "lattice" / ("ab" * 32 + ".npz")
    target.parent.mkdir(parents=True, exist_ok=True)
    with atomic_path(target) as tmp:
        tmp.write_bytes(b"x" * 5000)
        print("ready", flush=True)
        time.sleep(600)
"""


def test_temporaries_of_a_killed_run_count_against_the_bound_and_are_removed_next_run(tmp_path):
    cache_dir = tmp_path / "c"
    open_folder(cache_dir).close()
    _killed_writer(cache_dir, _WRITE_AND_HANG)
    left = [p for p in (cache_dir / "lattice").iterdir()]
    assert len(left) == 1 and is_temporary_name(left[0].name)  # what SIGKILL leaves behind
    assert evict(cache_dir, 100) == 0 and left[0].exists()  # counted, but a writer's: not removed
    folder = open_folder(cache_dir)  # the next run, alone with the folder
    folder.close()
    assert folder.cleaned == 1 and not left[0].exists()


def test_temporaries_of_a_live_run_are_kept(tmp_path):
    cache_dir = tmp_path / "c"
    live = """
        import sys, time
        from pathlib import Path
        from orbitalrender.gallery.store import open_folder
        folder = open_folder(sys.argv[1])
        tmp = Path(sys.argv[1]) / "level" / ("." + "cd" * 32 + ".json.abc123_x.part.json")
        tmp.parent.mkdir(exist_ok=True)
        tmp.write_text("{")
        print("ready", flush=True)
        time.sleep(600)
    """
    child = subprocess.Popen([sys.executable, "-c", textwrap.dedent(live), str(cache_dir)], cwd=REPO,
                             stdout=subprocess.PIPE, text=True)
    try:
        assert child.stdout.readline().strip() == "ready"
        folder = open_folder(cache_dir)
        assert folder.cleaned == 0 and folder.clean_if_alone() == 0
        folder.close()
        assert len(list((cache_dir / "level").iterdir())) == 1
    finally:
        child.kill()
        child.wait(timeout=60)


def test_scratch_folders_of_killed_runs_are_removed(tmp_path):
    hang = """
        import time
        from orbitalrender.gallery.store import scratch_folder
        with scratch_folder() as path:
            print(path, flush=True)
            time.sleep(600)
    """
    child = subprocess.Popen([sys.executable, "-c", textwrap.dedent(hang)], cwd=REPO,
                             stdout=subprocess.PIPE, text=True)
    try:
        left = Path(child.stdout.readline().strip())
        assert left.is_dir()
        with scratch_folder():
            assert left.is_dir()  # its run is alive: kept
    finally:
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=60)
    assert left.is_dir()  # SIGKILL left it
    with scratch_folder() as mine:
        assert not left.exists() and mine.is_dir()
    assert not mine.exists()


def _damage_and_rerun(tmp_path: Path, kind: str, damage) -> tuple:
    cfg = _config(tmp_path)
    out = tmp_path / "out"
    first = run_gallery(cfg, out, jobs=1)
    report = json.loads((out / "p.png.json").read_text())
    (entry,) = _entries(out / ".cache", kind)
    damage(entry)
    if kind != "surface":  # the surface entry holds what it was made of: remove it, so the
        for p in _entries(out / ".cache", "surface"):  # damaged entry is read
            p.unlink()
    (out / "p.png").unlink()  # so the output is made again and reads the cache
    again = run_gallery(cfg, out, jobs=1)
    return first, report, again, json.loads((out / "p.png.json").read_text())


def _truncate(path: Path) -> None:
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


@pytest.mark.parametrize("kind, damage", [
    ("surface", _truncate),
    ("level", lambda p: p.write_text("{}")),
    ("lattice", lambda p: p.write_bytes(b"")),
])
def test_a_damaged_entry_is_discarded_computed_again_and_mentioned_once(tmp_path, kind, damage):
    first, report, again, report_again = _damage_and_rerun(tmp_path, kind, damage)
    assert again.failed == ()
    assert again.stats.computed[kind] == 1
    assert len(again.stats.notes) == 1 and f"the {kind} entry" in again.stats.notes[0]
    assert report_again == report
    # the third run finds a good entry again: nothing discarded, nothing computed
    third = run_gallery(first.config, first.out_dir, jobs=1)
    assert third.stats.notes == [] and third.stats.kept == 1


def test_a_level_edited_by_hand_is_not_trusted(tmp_path):
    def times_20(path: Path) -> None:
        entry = json.loads(path.read_text())
        entry["scalars"]["level"] *= 20
        path.write_text(json.dumps(entry))

    _, report, again, report_again = _damage_and_rerun(tmp_path, "level", times_20)
    assert "content hash differs" in again.stats.notes[0]
    assert report_again["level_a0^-3"] == report["level_a0^-3"]
    # and it is the level that encloses F = 0.8 of 2p_z: the surface a fresh extraction
    # finds (surface.extract, checked against closed forms in tests/test_level.py)
    fresh = extract_surface(parse_state("2pz"), 0.8, resolution=20)
    assert report_again["level_a0^-3"] == pytest.approx(fresh.level, rel=1e-12)


def test_an_entry_copied_under_another_key_is_refused(tmp_path):
    cache = DiskCache(tmp_path)
    stats = CacheStats()
    a, b = parse_state("1s"), parse_state("2s")
    cached_level(cache, stats, a, 0.5)
    src = cache.entry("level", level_key(a, 0.5), ".json")
    src.rename(cache.entry("level", level_key(b, 0.5), ".json"))
    res = cached_level(cache, stats, b, 0.5)
    assert "made for another entry" in stats.notes[0] and stats.computed["level"] == 2
    # the 50 % level of 2s computed afresh, not the one of 1s
    assert res.level != cached_level(DiskCache(None), CacheStats(), a, 0.5).level


def test_a_surface_whose_faces_point_past_its_vertices_is_refused(tmp_path):
    from orbitalrender.gallery.cache import _surface_parts, content_sha256

    cache = DiskCache(tmp_path)
    state = parse_state("2pz")
    made = extract_surface(state, 0.8, resolution=16)
    stats = CacheStats()
    cached_surface(cache, stats, state, 0.8, 16, None, np.complex64, lambda: made)
    (path,) = _entries(tmp_path, "surface")
    # a consistent hash over inconsistent content: the schema check still refuses it
    arrays, scalars = _surface_parts(made)
    arrays = {**arrays, "faces": arrays["faces"] + len(made.vertices_a0)}
    key = path.stem
    meta = {"format": 2, "kind": "surface", "key": key, "scalars": scalars,
            "sha256": content_sha256("surface", key, arrays, scalars)}
    with open(path, "wb") as fh:
        np.savez(fh, **arrays, _meta=np.array(json.dumps(meta)))
    again = cached_surface(cache, stats, state, 0.8, 16, None, np.complex64, lambda: made)
    assert "faces must index the vertices" in stats.notes[0]
    np.testing.assert_array_equal(again.faces, made.faces)


def test_marker_and_kind_folders_are_all_a_new_cache_holds(tmp_path):
    cfg = _config(tmp_path)
    run_gallery(cfg, tmp_path / "out", jobs=1)
    cache_dir = tmp_path / "out" / ".cache"
    assert sorted(p.name for p in cache_dir.iterdir()) == sorted((MARKER, *CACHE_KINDS))
    assert not any(is_temporary_name(p.name) for p in cache_dir.rglob("*"))
    assert os.access(cache_dir / MARKER, os.R_OK)


def test_temporaries_a_killed_run_left_in_the_output_folder_are_removed_next_run(tmp_path):
    out = tmp_path / "out"
    writer = """
        import sys, time
        from pathlib import Path
        from orbitalrender.atomic import atomic_path
        with atomic_path(Path(sys.argv[1]) / "p.png") as tmp:
            tmp.write_bytes(b"half a picture")
            print("ready", flush=True)
            time.sleep(600)
    """
    out.mkdir()
    _killed_writer(out, writer)
    (left,) = [p for p in out.iterdir() if ".part" in p.name]
    mine = out / ".notes.part.txt"  # the user's file, whatever its name: not a temporary of ours
    mine.write_text("keep")
    res = run_gallery(_config(tmp_path), out, jobs=1)
    assert res.failed == () and not left.exists() and mine.read_text() == "keep"
    assert [p.name for p in out.rglob("*") if ".part" in p.name] == [mine.name]
