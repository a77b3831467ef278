"""Gallery runs: cache reuse, identical bytes, reports like the commands', failures that keep old files."""

from __future__ import annotations

import io
import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from orbitalrender.cli import main
from orbitalrender.gallery.config import ConfigError
from orbitalrender.gallery.runner import run_gallery
from orbitalrender.gallery.store import CACHE_KINDS

# Small lattices and pictures keep the suite fast; the numbers drawn are not checked here
# (the surface, section, radial and mesh tests do that against closed forms).
CONFIG = """
title = "runner test"
[defaults]
resolution = 24
fraction = 0.8
phase_map = "uniform"

[[outputs]]
name = "p"
kind = "figure"
state = "2pz"
width_px = 200
height_px = 160
supersample = 1

[[outputs]]
name = "pair"
kind = "layout"
states = ["2pz", "2,1,1"]
panel_px = 96
supersample = 1

[[outputs]]
name = "cut"
kind = "section"
state = "2pz"
plane = "xz"
pixels = 48
dpi = 40

[[outputs]]
name = "r"
kind = "radial"
states = ["2s"]
quantity = "density"
dpi = 40

[[outputs]]
name = "m"
kind = "mesh"
state = "2,1,1"
file = "m.glb"
"""


def _config(tmp_path: Path, text: str = CONFIG, name: str = "g.toml") -> Path:
    p = tmp_path / name
    p.write_text(textwrap.dedent(text), encoding="utf-8")
    return p


def _pngs(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.glob("*.png"))}


@pytest.fixture(scope="module")
def first_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("gallery")
    cfg = _config(tmp)
    stream = io.StringIO()
    result = run_gallery(cfg, tmp / "out", jobs=2, progress=stream)
    return tmp, cfg, result, stream.getvalue()


def test_first_run_makes_every_output_with_report_and_index(first_run):
    tmp, _, result, progress = first_run
    out = tmp / "out"
    assert result.failed == ()
    for rec in result.records:
        assert rec.path.is_file() and rec.path.stat().st_size > 0
        report = json.loads(rec.report_path.read_text())
        assert report["gallery_output"] == rec.spec.name
        assert rec.thumbnail is not None and rec.thumbnail.is_file()
    index = (out / "index.html").read_text()
    for rec in result.records:
        assert f'id="{rec.spec.name}"' in index and rec.spec.file in index
    # 4 distinct surfaces (2pz, 2,1,1 shared by layout/figure/mesh) and one level for the
    # section, which the 2pz surface at the same F already made
    assert result.stats.computed["surface"] == 2
    assert result.stats.computed["lattice"] == 2
    assert result.stats.drawn == 5
    # not a terminal: one line per finished item, for both phases
    lines = progress.splitlines()
    assert sum("drawing:" in ln for ln in lines) == 5
    assert all(ln.startswith("[") for ln in lines)


def test_second_run_with_other_style_only_draws(first_run, tmp_path):
    tmp, _, first, _ = first_run
    restyled = CONFIG.replace('phase_map = "uniform"', 'phase_map = "cvd"') \
                     .replace("width_px = 200", "width_px = 220\nazimuth_deg = 60")
    cfg = _config(tmp, restyled, "restyled.toml")
    before = _pngs(tmp / "out")
    result = run_gallery(cfg, tmp / "out", jobs=1)
    assert result.failed == ()
    assert result.stats.computed == {"lattice": 0, "level": 0, "surface": 0}
    assert result.stats.loaded["surface"] >= 2
    # the radial plot takes no phase map or view: its inputs are unchanged and it is kept
    assert result.stats.drawn == 4 and result.stats.kept == 1
    after = _pngs(tmp / "out")
    assert after["p.png"] != before["p.png"]  # drawn again, in the new style


def test_same_config_gives_byte_identical_pictures(first_run, tmp_path):
    tmp, cfg, _, _ = first_run
    again = run_gallery(cfg, tmp_path / "again", jobs=1, cache_dir=tmp_path / "own-cache")
    assert again.stats.computed["surface"] == 2  # computed afresh, not taken from the first run
    first = _pngs(tmp / "out")
    second = _pngs(tmp_path / "again")
    # compare with a fresh run of the original config (the module's folder was restyled above
    # by another test, so rerun it there first)
    run_gallery(cfg, tmp / "out", jobs=2)
    first = _pngs(tmp / "out")
    assert first.keys() == second.keys() and first == second
    thumbs = {p.name: p.read_bytes() for p in (tmp_path / "again" / ".index").iterdir()}
    assert thumbs == {p.name: p.read_bytes() for p in (tmp / "out" / ".index").iterdir()}


def test_report_has_the_keys_the_command_writes(first_run, tmp_path):
    tmp, _, result, _ = first_run
    by_name = {r.spec.name: json.loads(r.report_path.read_text()) for r in result.records}
    runs = {
        "p": ["figure", "2pz", "--resolution", "24", "--fraction", "0.8", "--size", "200x160",
              "--supersample", "1"],
        "pair": ["figure", "2pz", "2,1,1", "--resolution", "24", "--fraction", "0.8",
                 "--supersample", "1", "--size", "300x200"],
        "cut": ["section", "2pz", "--plane", "xz", "--pixels", "48", "--dpi", "40", "--fraction", "0.8"],
        "r": ["radial", "2s", "--quantity", "density", "--dpi", "40", "--fraction", "0.8"],
        "m": ["mesh", "2,1,1", "--resolution", "24", "--fraction", "0.8"],
    }
    for name, argv in runs.items():
        suffix = ".glb" if argv[0] == "mesh" else ".png"
        report = tmp_path / f"{name}.json"
        assert main(argv + ["--out", str(tmp_path / f"{name}{suffix}"), "--report", str(report)]) == 0
        command_keys = set(json.loads(report.read_text()))
        gallery_keys = set(by_name[name]) - {"gallery_output", "gallery_settings"}
        assert gallery_keys == command_keys, name


def test_broken_config_writes_nothing_and_keeps_earlier_outputs(first_run, capsys):
    tmp, _, _, _ = first_run
    out = tmp / "out"
    before = {p: p.read_bytes() for p in out.rglob("*") if p.is_file() and ".cache" not in p.parts}
    broken = _config(tmp, CONFIG.replace("fraction = 0.8", "fraction = 1.5"), "broken.toml")
    with pytest.raises(ConfigError, match=r"defaults: key 'fraction' must be a number in \(0, 0.9999\]"):
        run_gallery(broken, out)
    assert main(["gallery", str(broken), "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "broken.toml: defaults: key 'fraction'" in err[0]
    after = {p: p.read_bytes() for p in out.rglob("*") if p.is_file() and ".cache" not in p.parts}
    assert after == before


def test_an_output_that_fails_leaves_the_others_and_its_old_file(tmp_path, capsys):
    text = """
    [[outputs]]
    name = "good"
    kind = "radial"
    states = ["1s"]
    dpi = 40
    [[outputs]]
    name = "tiny"
    kind = "figure"
    state = "1s"
    resolution = 16
    fraction = 0.9
    box_a0 = 1.0
    """  # the 90 % sphere has radius 2.6612 a0: a box of half-width 1 a0 cuts it
    cfg = _config(tmp_path, text)
    out = tmp_path / "out"
    out.mkdir()
    (out / "tiny.png").write_bytes(b"earlier picture")
    assert main(["gallery", str(cfg), "--out", str(out), "--jobs", "1", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "output 'tiny' (tiny.png)" in err
    assert (out / "tiny.png").read_bytes() == b"earlier picture"
    assert (out / "good.png").is_file()
    assert "failed" in (out / "index.html").read_text()


def test_no_cache_keeps_no_cache_folder_and_the_bound_is_kept(tmp_path):
    cfg = _config(tmp_path, CONFIG.split("[[outputs]]\nname = \"pair\"")[0])
    res = run_gallery(cfg, tmp_path / "a", jobs=1, use_cache=False)
    assert res.failed == () and not (tmp_path / "a" / ".cache").exists()
    res = run_gallery(cfg, tmp_path / "b", jobs=1, cache_limit_bytes=1)
    # the bound holds for the entries (the folder's marker file is not an entry)
    sizes = [p.stat().st_size for kind in CACHE_KINDS for p in (tmp_path / "b" / ".cache" / kind).iterdir()]
    assert sum(sizes) <= 1


def test_caps_bound_resolution_and_size(tmp_path):
    cfg = _config(tmp_path, CONFIG.split("[[outputs]]\nname = \"pair\"")[0])
    res = run_gallery(cfg, tmp_path / "o", jobs=1, resolution_cap=16, size_cap_px=150)
    report = res.records[0].report
    assert report["resolution"] == 16
    assert report["view"]["size_px"] == [150, 120]  # 200 x 160 scaled down, aspect kept


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_on_a_terminal_is_one_line_redrawn(tmp_path):
    text = '[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\ndpi = 40\n' \
           '[[outputs]]\nname = "b"\nkind = "radial"\nstates = ["2s"]\ndpi = 40\n'
    stream = _Terminal()
    run_gallery(_config(tmp_path, text), tmp_path / "out", jobs=1, progress=stream)
    shown = stream.getvalue()
    # carriage returns redraw the bar; a newline only when the phase is complete
    assert shown.count("\n") == 1 and shown.count("\r") >= 4
    assert "2/2 drawing" in shown and "[" + "#" * 24 + "]" in shown


# A 1024^3 double lattice with its surface needs 1024^3 * (16 * 1.125 + 20) B = 38 GiB, and an
# 8192^2 px render with a cut at supersampling 4 about 100 GiB (lattice.memory's estimates).
_TOO_BIG = {
    "lattice": 'resolution = 1024\nprecision = "double"\nwidth_px = 240\nheight_px = 200',
    "render": 'resolution = 24\nwidth_px = 8192\nheight_px = 8192\nsupersample = 4\ncutaway = "front"',
}


@pytest.mark.parametrize("step", sorted(_TOO_BIG))
def test_an_output_too_big_for_memory_fails_before_any_work_and_the_others_are_made(tmp_path, capsys, step):
    text = ('[[outputs]]\nname = "huge"\nkind = "figure"\nstate = "2pz"\n' + _TOO_BIG[step] +
            '\n[[outputs]]\nname = "small"\nkind = "radial"\nstates = ["1s"]\ndpi = 40\n')
    cfg = _config(tmp_path, text)
    res = run_gallery(cfg, tmp_path / "out", jobs=1)
    (failed,) = res.failed
    assert failed.spec.name == "huge" and failed.user_error and "GiB" in failed.error
    assert ("render" in failed.error) == (step == "render")
    assert sum(res.stats.computed.values()) == 0  # no lattice, level or surface was begun
    assert (tmp_path / "out" / "small.png").is_file()
    assert main(["gallery", str(cfg), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "output 'huge'" in err[0] and "needs about" in err[0]


def test_an_internal_fault_is_one_line_naming_where_it_was_raised():
    from orbitalrender.gallery.produce import failure_text

    try:
        {}["missing"]
    except KeyError as exc:
        text = failure_text(exc)
    assert text.startswith("KeyError: 'missing' (at test_gallery_runner.py:")
    assert "\n" not in text and "^" not in text  # no caret line of the traceback


def test_progress_names_each_output_once(tmp_path):
    text = ('[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\ndpi = 40\n'
            '[[outputs]]\nname = "b"\nkind = "radial"\nstates = ["2s"]\ndpi = 40\nfile = "plots/two.png"\n')
    stream = io.StringIO()
    run_gallery(_config(tmp_path, text), tmp_path / "out", jobs=1, progress=stream)
    lines = stream.getvalue().splitlines()
    named = [ln.split(": ", 1)[1].rsplit(" (", 1)[0] for ln in lines]
    assert named == ["a.png", "b (plots/two.png)"]


@pytest.mark.parametrize("limit", ["inf", "nan", "-1", "0"])
def test_a_cache_limit_that_is_not_a_positive_finite_number_is_refused(tmp_path, capsys, limit):
    cfg = _config(tmp_path, '[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\n')
    try:
        status = main(["gallery", str(cfg), "--out", str(tmp_path / "out"), "--cache-limit-gib", limit])
    except SystemExit as exc:  # argparse's own refusals
        status = exc.code
    assert status == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--cache-limit-gib" in err[0] and limit in err[0]
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_a_coarse_lattice_warning_is_one_line_from_any_worker(tmp_path, jobs):
    # 30s at N = 64: the lattice step (about 62 a0) is far coarser than its innermost radial
    # nodes (the Laguerre zeros, about 2 a0 apart near the nucleus), so the run warns; in a
    # worker process the warning used to come out in Python's file:line format over two lines
    cfg = tmp_path / "g.toml"
    cfg.write_text(textwrap.dedent("""
        [[outputs]]
        name = "s30"
        kind = "figure"
        state = "30,0,0"
        resolution = 64
        width_px = 200
        height_px = 160
        supersample = 1
        """), encoding="utf-8")
    repo = Path(__file__).resolve().parents[1]
    done = subprocess.run([sys.executable, "-m", "orbitalrender", "gallery", str(cfg), "--out",
                           str(tmp_path / "out"), "--jobs", jobs, "--quiet"], cwd=repo, capture_output=True,
                          text=True, timeout=300, env={**os.environ, "MPLBACKEND": "Agg"})
    assert done.returncode == 0, done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1, lines
    assert lines[0].startswith("orbitalrender gallery: warning: 30,0,0: the lattice step")
    assert "resolution of about" in lines[0]
