"""`orbitalrender section`: pictures with metadata, reports, default names and one-line refusals."""

import json
import math

import numpy as np
import pytest
from PIL import Image
from scipy.optimize import brentq

from orbitalrender.cli import main
from orbitalrender.lattice.grid import Lattice
from orbitalrender.lattice.sampler import sample
from orbitalrender.lattice.userfield import save_field
from orbitalrender.picture.output import METADATA_KEY
from orbitalrender.state.model import eigenstate


def _fail(capsys, *argv) -> str:
    """Run, expect exit status 2 and exactly one line on stderr; return it."""
    try:
        status = main(["section", *argv])
    except SystemExit as exc:  # argparse refuses unknown choices itself
        status = exc.code
    assert status == 2
    err = capsys.readouterr().err.strip()
    assert err and "\n" not in err, err
    return err


def test_png_and_report(tmp_path, capsys):
    out, report = tmp_path / "s.png", tmp_path / "s.json"
    assert main(["section", "1s", "--plane", "xy", "--pixels", "64", "--fraction", "0.9",
                 "--out", str(out), "--report", str(report)]) == 0
    assert capsys.readouterr().out.strip() == f"wrote {out}"
    md = json.loads(report.read_text())
    with Image.open(out) as im:
        embedded = json.loads(im.text[METADATA_KEY])
    assert md == embedded | {"file": str(out)}
    assert md["command"] == "section" and md["state"] == "1s" and md["plane"] == "xy"
    assert md["resolution"] == 64 and md["exact"] is True and md["level_method"]
    # the 1s level for F = 0.9: |psi|^2 = e^{-2x}/pi at the radius x holding 90 %, where
    # 1 - e^{-2x}(1 + 2x + 2x^2) = 0.9 (closed form), x = 2.6612 a0
    x = brentq(lambda r: 1 - math.exp(-2 * r) * (1 + 2 * r + 2 * r * r) - 0.9, 1.0, 5.0, xtol=1e-14)
    # (the level comes from a quadrature good to about 1e-6 in F, i.e. ~1e-5 in the level here)
    assert md["level_a0^-3"] == pytest.approx(math.exp(-2 * x) / math.pi, rel=2e-5)
    assert md["nodal_lines"] == 0


def test_default_name_and_general_plane(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["section", "3dz2", "--normal", "1,1,1", "--offset", "0.5", "--pixels", "48",
                 "--no-contour", "--scale", "log", "--decades", "4", "--units", "angstrom",
                 "--report", "r.json"]) == 0
    assert (tmp_path / "3dz2-section.png").is_file()
    md = json.loads((tmp_path / "r.json").read_text())
    np.testing.assert_allclose(md["normal"], np.ones(3) / math.sqrt(3))
    assert md["plane"] is None and md["offset_a0"] == 0.5 and md["decades"] == 4.0
    assert md["fraction"] is None and md["level_a0^-3"] is None
    assert md["nodal_lines"] >= 1  # the 3d_z2 cones cut any plane near the nucleus


@pytest.mark.parametrize("suffix", [".svg", ".pdf"])
def test_vector_formats(tmp_path, capsys, suffix):
    out = tmp_path / f"s{suffix}"
    assert main(["section", "2s", "--pixels", "48", "--out", str(out)]) == 0
    data = out.read_bytes()
    assert b"orbitalrender" in data and len(data) > 1000


def test_user_field(tmp_path, capsys):
    lat = sample(eigenstate(2, 0, 0), resolution=40, dtype=np.complex128)
    field = save_field(tmp_path / "field.npz", Lattice(lat.values, lat.origin_a0, lat.spacing_a0, None))
    report = tmp_path / "r.json"
    assert main(["section", "--field", str(field), "--pixels", "48", "--fraction", "0.5",
                 "--out", str(tmp_path / "f.png"), "--report", str(report)]) == 0
    md = json.loads(report.read_text())
    assert md["exact"] is False and md["state"] is None and md["source"] == str(field)
    assert md["level_method"] == "lattice" and md["nodal_lines"] >= 1  # the 2s node at 2 a0


def test_refusals_are_one_line_and_write_nothing(tmp_path, capsys):
    target = tmp_path / "keep.png"
    assert main(["section", "2pz", "--pixels", "32", "--out", str(target)]) == 0
    before = target.read_bytes()
    capsys.readouterr()
    cases = [
        (["2pz", "--plane", "xw"], "--plane must be one of"),
        (["2pz", "--offset", "500"], "misses"),
        (["2pz", "--pixels", "4"], "--pixels"),
        (["2pz", "--fraction", "1.5"], "--fraction"),
        (["2pz", "--normal", "0,0,0"], "zero vector"),
        (["2pz", "--normal", "1,x,0"], "--normal"),
        (["2pz", "--decades", "0"], "--decades"),
        (["2pz", "--plane", "xy", "--normal", "1,0,0"], "does not go with"),
        (["2,1,1", "--plane", "xy", "--phase-map", "sign"], "sign map"),
        (["2pz", "--out", str(tmp_path / "nope" / "a.png")], "does not exist"),
        (["2pz", "--out", str(tmp_path / "a.gif")], ".png, .svg, .pdf"),
        (["2pz", "--report", str(tmp_path / "nope" / "r.json")], "does not exist"),
        ([], "STATE"),
    ]
    for argv, words in cases:
        err = _fail(capsys, *argv, *(["--out", str(target)] if "--out" not in argv else []))
        assert words in err, (argv, err)
    assert target.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.png"]
