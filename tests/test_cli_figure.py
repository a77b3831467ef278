"""The ``figure`` command end to end: pictures, metadata, reports and one-line refusals.

References: PNG text chunks and image size as read back by PIL (Pillow, an outside
reader of the format); the 1s closed form for the scale that the report gives.
"""

from __future__ import annotations

import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from PIL import Image

from orbitalrender.cli import main

LOW = ["--resolution", "40", "--size", "320x240", "--supersample", "2"]
REPO = Path(__file__).resolve().parents[1]


def _run(capsys, *argv):
    status = main(["figure", *argv])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_png_has_the_size_asked_for_metadata_and_a_report(tmp_path, capsys):
    out, report = tmp_path / "dz2.png", tmp_path / "dz2.json"
    status, text, err = _run(capsys, "3dz2", *LOW, "--out", str(out), "--report", str(report))
    assert status == 0, err
    assert f"wrote {out}" in text
    with Image.open(out) as im:
        assert im.size == (320, 240)
        embedded = json.loads(im.text["orbitalrender"])
    data = json.loads(report.read_text())
    assert data["state"] == embedded["state"] == "3dz2"
    assert data["command"] == "figure" and data["fraction"] == 0.9
    assert abs(data["fraction_enclosed"] - 0.9) < 1e-6
    assert data["view"]["projection"] == "orthographic" and data["px_per_a0"] > 0


def test_same_inputs_give_the_same_file(tmp_path, capsys):
    digests = []
    for name in ("a.png", "b.png"):
        out = tmp_path / name
        assert _run(capsys, "2,1,1", *LOW, "--cutaway", "quadrant", "--nodal-axis", "--out", str(out))[0] == 0
        digests.append(hashlib.sha256(out.read_bytes()).hexdigest())
    assert digests[0] == digests[1]


def test_svg_and_pdf_keep_the_render_as_an_image_and_labels_as_text(tmp_path, capsys):
    svg, pdf = tmp_path / "p.svg", tmp_path / "p.pdf"
    assert _run(capsys, "2pz", *LOW, "--out", str(svg), "--units", "angstrom")[0] == 0
    body = svg.read_text()
    assert "<image" in body                      # the render, embedded raster
    assert "<text" in body and "F = 0.9" in body  # the title, as text
    assert _run(capsys, "2pz", *LOW, "--out", str(pdf))[0] == 0
    raw = pdf.read_bytes()
    assert b"/Subtype /Image" in raw and b"/Font" in raw


def test_grid_shell_and_time_strip(tmp_path, capsys):
    grid = tmp_path / "grid.png"
    assert _run(capsys, "1s", "2pz", "2,1,1", *LOW, "--columns", "3", "--out", str(grid))[0] == 0
    shell = tmp_path / "shell.png"
    status, _, err = _run(capsys, "--shell", "2", "--basis", "complex", "--resolution", "32",
                          "--supersample", "1", "--out", str(shell), "--nodal-axis")
    assert status == 0, err
    with Image.open(shell) as im:
        assert im.size[0] > 3 * im.size[1]  # four panels in one row
    strip = tmp_path / "strip.png"
    status, _, err = _run(capsys, "0.6*2pz + 0.8*3dz2", "--times", "0,20,40", "--resolution", "32",
                          "--supersample", "1", "--out", str(strip), "--report", str(tmp_path / "s.json"))
    assert status == 0, err
    assert json.loads((tmp_path / "s.json").read_text())["times_au"] == [0.0, 20.0, 40.0]


def test_default_name_in_the_current_folder(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert _run(capsys, "3,2,-1", *LOW)[0] == 0
    assert (tmp_path / "3_2_-1-figure.png").is_file()


@pytest.mark.parametrize("argv, words", [
    (["--elevation", "95"], "elevation"),
    (["--zoom", "0"], "zoom"),
    (["--size", "10x10"], "size"),
    (["--size", "big"], "size"),
    (["--dpi", "1"], "dpi"),
    (["--fraction", "1.5"], "fraction"),
    (["--cutaway", "x>>0"], "cutaway"),
    (["--translucent-outer", "2"], "translucent"),
    (["--nodal-axis"], "nodal axis"),          # 2p_z has m = 0: no nodal axis along z
    (["--times", "0,a"], "times"),
])
def test_bad_input_is_one_line_exit_2_and_no_file(tmp_path, capsys, argv, words):
    out = tmp_path / "x.png"
    status, text, err = _run(capsys, "2pz", *LOW, "--out", str(out), *argv)
    assert status == 2
    assert err.count("\n") == 1 and words in err
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_refused_choice_exits_2(tmp_path, capsys):
    assert main(["figure", "2pz", "--projection", "fisheye", "--out", str(tmp_path / "x.png")]) == 2
    assert "--projection must be one of 'orthographic', 'perspective', got 'fisheye'" in \
        capsys.readouterr().err


def test_unwritable_or_unknown_target_leaves_earlier_file(tmp_path, capsys):
    status, _, err = _run(capsys, "1s", *LOW, "--out", str(tmp_path / "missing" / "x.png"))
    assert status == 2 and "does not exist" in err
    status, _, err = _run(capsys, "1s", *LOW, "--out", str(tmp_path / "x.bmp"))
    assert status == 2 and ".png" in err
    keep = tmp_path / "keep.png"
    keep.write_bytes(b"earlier")
    status, _, _ = _run(capsys, "1s", *LOW, "--out", str(keep), "--azimuth", "nan")
    assert status == 2 and keep.read_bytes() == b"earlier"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.png"]


def test_state_and_shell_are_exclusive(tmp_path, capsys):
    status, _, err = _run(capsys, "1s", "--shell", "2", "--out", str(tmp_path / "x.png"))
    assert status == 2 and "not more than one" in err
    status, _, err = _run(capsys, "--out", str(tmp_path / "x.png"))
    assert status == 2 and "STATE" in err


def test_a_field_file_gives_the_same_surface_as_its_state(tmp_path, capsys):
    # psi of 2p_z sampled to a file and read back: the same two lobes (a p orbital has one
    # angular node, the xy plane; common textbook knowledge) and the report names the file
    from orbitalrender import Lattice, eigenstate, sample, save_field

    lat = sample(eigenstate(2, 1, 0), resolution=40)
    field = save_field(tmp_path / "f.npz", Lattice(lat.values, lat.origin_a0, lat.spacing_a0, None))
    report = tmp_path / "r.json"
    assert main(["figure", "--field", str(field), "--size", "240x200", "--supersample", "1",
                 "--out", str(tmp_path / "f.png"), "--report", str(report)]) == 0
    md = json.loads(report.read_text())
    assert md["source"] == str(field) and md["state"] is None
    mesh_report = tmp_path / "m.json"
    assert main(["mesh", "--field", str(field), "--out", str(tmp_path / "m.ply"),
                 "--report", str(mesh_report)]) == 0
    assert json.loads(mesh_report.read_text())["components"] == 2
    capsys.readouterr()


def test_text_size_and_triad_refusals(tmp_path, capsys):
    out = tmp_path / "x.png"
    status, _, err = _run(capsys, "2pz", *LOW, "--text-size", "200", "--out", str(out))
    assert status == 2 and "--text-size must be a number in [4, 96], got 200.0" in err
    status, _, err = _run(capsys, "2pz", *LOW, "--triad", "maybe", "--out", str(out))
    assert status == 2 and "--triad must be one of 'auto', 'on', 'off'" in err
    assert not out.exists()
    for argv in (["--text-size", "14", "--triad", "off"], ["--triad", "on"]):
        assert _run(capsys, "2s", *LOW, *argv, "--out", str(out))[0] == 0


#: Libraries a figure of an analytic state has no use for: root finding and Legendre roots
#: are written in orbitalrender.state.numerics, CIELAB in orbitalrender.colormap, and
#: trilinear interpolation (scipy.ndimage) serves user fields only.
_NOT_FOR_A_FIGURE = ("scipy.optimize", "scipy.special", "scipy.ndimage", "skimage.color", "trimesh",
                     "manifold3d")


def test_a_figure_process_loads_only_what_it_uses(tmp_path):
    out = tmp_path / "p.png"
    argv = ["orbitalrender", "figure", "3,2,0", *LOW, "--out", str(out)]
    code = ("import runpy, sys, json\n"
            f"sys.argv = {argv!r}\n"
            "try:\n    runpy.run_module('orbitalrender', run_name='__main__')\n"
            "except SystemExit as stop:\n    status = stop.code\n"
            "print('STATUS=' + str(status) + ' MODULES=' + json.dumps(sorted(sys.modules)), file=sys.stderr)")
    env = {**os.environ, "PYTHONPATH": str(REPO), "MPLBACKEND": "Agg"}
    done = subprocess.run([sys.executable, "-c", code], env=env, cwd=REPO, capture_output=True, text=True,
                          timeout=300)
    line = next(ln for ln in done.stderr.splitlines() if ln.startswith("STATUS="))
    status, modules = line[len("STATUS="):].split(" MODULES=")
    assert status == "0" and out.exists(), done.stderr
    loaded = set(json.loads(modules))
    assert {"matplotlib", "numba", "skimage.measure"} <= loaded  # the probe sees the work's modules
    assert not loaded & set(_NOT_FOR_A_FIGURE), loaded & set(_NOT_FOR_A_FIGURE)
