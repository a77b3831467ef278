"""`orbitalrender radial`: plots with the marked values in the report, and one-line refusals."""

import json
import math

import pytest
from PIL import Image

from orbitalrender.cli import main
from orbitalrender.picture.output import METADATA_KEY


def test_report_carries_the_marks(tmp_path, capsys):
    out, report = tmp_path / "r.png", tmp_path / "r.json"
    assert main(["radial", "3s", "2p_x", "--fraction", "0.5", "--out", str(out),
                 "--report", str(report)]) == 0
    assert capsys.readouterr().out.strip() == f"wrote {out}"
    md = json.loads(report.read_text())
    assert md["command"] == "radial" and md["quantities"] == ["R", "density", "cumulative"]
    s3, p2 = md["marks"]
    # 3s nodes at (9 -+ 3 sqrt 3)/2 a0 (roots of 27 - 18 r + 2 r^2, closed form R_30)
    assert s3["node_radii_a0"] == pytest.approx([(9 - 3 * math.sqrt(3)) / 2, (9 + 3 * math.sqrt(3)) / 2],
                                                rel=1e-10)
    # 2p: most probable radius n^2 a0 / Z = 4 a0 (l = n - 1, closed form)
    assert p2["most_probable_radius_a0"] == pytest.approx(4.0, rel=1e-9)
    assert [s["state"] for s in md["states"]] == ["3s", "2px"]
    with Image.open(out) as im:
        assert json.loads(im.text[METADATA_KEY]) | {"file": str(out)} == md
        assert im.text["Title"] == "3s, 2px"


def test_default_name_one_quantity(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["radial", "3,1,-1", "--quantity", "density", "--units", "angstrom",
                 "--report", "r.json"]) == 0
    assert (tmp_path / "3_1_-1-radial.png").is_file()
    md = json.loads((tmp_path / "r.json").read_text())
    assert md["quantities"] == ["density"] and md["units"] == "angstrom" and md["state"] == "3,1,-1"


def test_refusals(tmp_path, capsys):
    for argv, words in [(["1s + 2s"], "one (n, l) shell"),
                        (["1s@(0,0,-1) + 1s@(0,0,1)"], "one (n, l) shell"),
                        (["1s", "--quantity", "psi"], "--quantity"),
                        (["1s", "--fraction", "0"], "--fraction"),
                        (["1s", "--out", str(tmp_path / "r.bmp")], ".png, .svg, .pdf"),
                        (["1s", "--dpi", "1"], "--dpi must be a number in [10, 2400]"),
                        (["4,4,0"], "l")]:
        assert main(["radial", *argv, "--out", str(tmp_path / "r.png")] if "--out" not in argv
                    else ["radial", *argv]) == 2
        err = capsys.readouterr().err.strip()
        assert words in err and "\n" not in err, (argv, err)
    assert list(tmp_path.iterdir()) == []
