"""The demo gallery configs run end to end (in draft mode: small lattices and pictures)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from orbitalrender.gallery.config import load_config
from orbitalrender.gallery.runner import run_gallery

CONFIGS = sorted((Path(__file__).resolve().parent.parent / "gallery_configs").glob("*.toml"))


def test_there_are_demo_configs():
    assert len(CONFIGS) >= 2


@pytest.mark.parametrize("config", CONFIGS, ids=[c.stem for c in CONFIGS])
def test_demo_config_runs_in_draft_mode(config, tmp_path):
    cfg = load_config(config)
    result = run_gallery(cfg, tmp_path, jobs=2, resolution_cap=32, size_cap_px=480)
    assert [r.spec.name for r in result.failed] == [], [r.error for r in result.failed]
    for rec in result.records:
        assert rec.path.is_file() and rec.path.stat().st_size > 0
        report = json.loads(rec.report_path.read_text())
        if "resolution" in report and rec.spec.kind in ("figure", "layout", "mesh"):
            assert report["resolution"] <= 32
        if rec.spec.kind == "mesh" and rec.spec.options.get("printable"):
            # one closed solid, as the printing guide promises (checked by trimesh on reload)
            assert report["components"] == 1 and report["watertight"]
    index = (tmp_path / "index.html").read_text()
    assert all(f'id="{r.spec.name}"' in index for r in result.records)
    # a rerun with nothing changed keeps every output as it is, byte for byte; one made
    # again (its file deleted) comes out byte-identical
    made = {r.path: r.path.read_bytes() for r in result.records}
    first = result.records[0].path
    first.unlink()
    again = run_gallery(cfg, tmp_path, jobs=2, resolution_cap=32, size_cap_px=480)
    assert again.stats.drawn == 1 and again.stats.kept == len(result.records) - 1
    assert {r.path: r.path.read_bytes() for r in again.records} == made
