"""The demo gallery configs run end to end (in draft mode: small lattices and pictures)."""

from __future__ import annotations

import html
import json
from pathlib import Path

import pytest
import trimesh

from orbitalrender.gallery.caption import fill_caption
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


FAIR = Path(__file__).resolve().parent.parent / "gallery_configs" / "bramblecombe-fair-models.toml"


def test_the_fair_set_shares_one_scale_and_its_captions_come_from_the_reports(tmp_path):
    # One mm_per_a0 for every mesh, and no hand-typed printed size anywhere in the set.
    cfg = load_config(FAIR)
    meshes = [o for o in cfg.outputs if o.kind == "mesh"]
    scales = {o.options.get("mm_per_a0") for o in meshes}
    assert len(scales) == 1 and None not in scales
    assert all("size_mm" not in o.options for o in meshes)
    assert all("{extent_mm}" in o.options["caption"] for o in meshes)
    result = run_gallery(cfg, tmp_path, jobs=2, resolution_cap=32, size_cap_px=480)
    assert not result.failed, [r.error for r in result.failed]
    index = (tmp_path / "index.html").read_text()
    for rec in result.records:
        if rec.spec.kind != "mesh":
            continue
        report = json.loads(rec.report_path.read_text())
        # the caption states the box of the file written, read back by trimesh
        loaded = trimesh.load(rec.path, process=False, force="mesh")
        assert report["extent_mm"] == pytest.approx(list(loaded.extents), rel=1e-6)
        box = " × ".join(f"{v:.1f}" for v in report["extent_mm"]) + " mm"
        assert html.escape(fill_caption(rec.spec.options["caption"], report)) in index
        assert box in index
