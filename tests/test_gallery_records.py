"""Rerun records: an output made before from the same inputs, with its files intact, is kept
as it is; any change of its inputs or of its files makes it again, byte for byte the same."""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np
import pytest

from orbitalrender.gallery.runner import run_gallery

CONFIG = """
[defaults]
resolution = 20
fraction = 0.8

[[outputs]]
name = "p"
kind = "figure"
state = "2pz"
width_px = 240
height_px = 200
supersample = 1

[[outputs]]
name = "r"
kind = "radial"
states = ["2s"]
dpi = 40

[[outputs]]
name = "u"
kind = "section"
field = "blob.npy"
field_spacing_a0 = 0.5
pixels = 32
dpi = 40
"""


def _blob(scale: float) -> np.ndarray:
    # a Gaussian blob of width `scale` a0 on a 16^3 grid of step 0.5 a0 (any smooth field would do)
    x = (np.arange(16) - 7.5) * 0.5
    r2 = x[:, None, None] ** 2 + x[None, :, None] ** 2 + x[None, None, :] ** 2
    return np.exp(-r2 / (2 * scale**2)).astype(np.complex64)


@pytest.fixture()
def made(tmp_path):
    (tmp_path / "g.toml").write_text(textwrap.dedent(CONFIG), encoding="utf-8")
    np.save(tmp_path / "blob.npy", _blob(1.0))
    out = tmp_path / "out"
    first = run_gallery(tmp_path / "g.toml", out, jobs=1)
    assert first.failed == () and first.stats.drawn == 3
    return tmp_path, out


def _files(out: Path) -> dict[str, tuple[bytes, int]]:
    return {p.relative_to(out).as_posix(): (p.read_bytes(), p.stat().st_mtime_ns)
            for p in sorted(out.rglob("*")) if p.is_file() and ".cache" not in p.parts
            and p.name not in ("index.html", ".lock")}


def test_a_rerun_with_nothing_changed_draws_and_loads_nothing(made):
    tmp, out = made
    before = _files(out)
    again = run_gallery(tmp / "g.toml", out, jobs=1)
    assert again.failed == ()
    assert again.stats.drawn == 0 and again.stats.kept == 3
    assert sum(again.stats.computed.values()) == 0 and sum(again.stats.loaded.values()) == 0
    assert _files(out) == before  # not even written again: bytes and time stamps as they were
    assert [r.report["gallery_output"] for r in again.records] == ["p", "r", "u"]
    index = (out / "index.html").read_text()
    assert "outputs 0 drawn / 3 unchanged and kept" in index and 'class="card failed"' not in index


@pytest.mark.parametrize("damage", [
    lambda out: (out / "p.png").write_bytes((out / "p.png").read_bytes() + b"\0"),
    lambda out: (out / "p.png").unlink(),
    lambda out: (out / "p.png.json").write_text("{}"),
    lambda out: (out / ".index" / "p.png.png").unlink(),
    lambda out: (out / ".index" / "p.png.record.json").unlink(),
])
def test_an_output_whose_files_were_touched_is_made_again_byte_identical(made, damage):
    tmp, out = made
    before = {k: v[0] for k, v in _files(out).items()}
    damage(out)
    again = run_gallery(tmp / "g.toml", out, jobs=1)
    assert again.stats.drawn == 1 and again.stats.kept == 2
    assert sum(again.stats.computed.values()) == 0  # drawn from the cache
    assert {k: v[0] for k, v in _files(out).items()} == before


def test_a_changed_user_field_or_draft_cap_or_no_cache_makes_outputs_again(made):
    tmp, out = made
    np.save(tmp / "blob.npy", _blob(1.5))  # same file name, other content
    again = run_gallery(tmp / "g.toml", out, jobs=1)
    assert [r.spec.name for r in again.records if r.report] == ["p", "r", "u"]
    assert again.stats.drawn == 1 and again.stats.kept == 2
    capped = run_gallery(tmp / "g.toml", out, jobs=1, size_cap_px=200)
    assert capped.stats.kept == 0 and capped.stats.drawn == 3
    fresh = run_gallery(tmp / "g.toml", out, jobs=1, size_cap_px=200, use_cache=False)
    assert fresh.stats.kept == 0 and fresh.stats.drawn == 3


def test_a_style_change_redraws_that_output_and_computes_no_lattice(made):
    tmp, out = made
    text = (tmp / "g.toml").read_text().replace("supersample = 1", "supersample = 1\nphase_map = \"cvd\"")
    (tmp / "g.toml").write_text(text)
    again = run_gallery(tmp / "g.toml", out, jobs=1)
    assert again.stats.drawn == 1 and again.stats.kept == 2
    assert again.stats.computed == {"lattice": 0, "level": 0, "surface": 0}
