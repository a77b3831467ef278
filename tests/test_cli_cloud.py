"""The cloud command: files, reproducible bytes, the report and refusals."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent


def _run(*args, cwd):
    env = {"PYTHONPATH": str(REPO), "MPLBACKEND": "Agg", "PATH": "/usr/bin:/bin"}
    return subprocess.run([sys.executable, "-m", "orbitalrender", "cloud", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=600)


def test_same_seed_same_bytes_and_an_honest_report(tmp_path):
    for name in ("a", "b"):
        done = _run("2pz", "--points", "5000", "--seed", "9", "--size", "200x160", "--out", f"{name}.png",
                    "--report", f"{name}.json", cwd=tmp_path)
        assert done.returncode == 0, done.stderr
        assert _run("sp3[2]", "--points", "3000", "--seed", "9", "--out", f"{name}.ply",
                    cwd=tmp_path).returncode == 0
    assert (tmp_path / "a.png").read_bytes() == (tmp_path / "b.png").read_bytes()
    assert (tmp_path / "a.ply").read_bytes() == (tmp_path / "b.ply").read_bytes()
    rep = json.loads((tmp_path / "a.json").read_text())["cloud"]
    assert rep["points"] == 5000 and rep["seed"] == 9
    # binomial standard error sqrt(F (1 - F) / N) of the share inside the F surface
    assert rep["standard_error"] == pytest.approx((0.9 * 0.1 / 5000) ** 0.5)
    assert abs(rep["fraction_inside"] - 0.9) < 4 * rep["standard_error"]
    assert (tmp_path / "a.ply").read_bytes().startswith(b"ply\nformat binary_little_endian 1.0\n")


@pytest.mark.parametrize("args, words", [
    (["1s", "--points", "0"], "--points must be"),
    (["1s", "--slab", "w=0,1"], "slab"),
    (["1s", "--slab", "z=99,1"], "outside the box"),
    (["sp3"], "pick one member"),
    (["sp3[9]"], "members [1] to [4]"),
    (["1s", "--out", "x.xyz"], "cannot tell the format"),
    (["1s", "--slab", "z=0,1", "--out", "x.ply"], "PLY point cloud holds every point"),
])
def test_bad_input_is_one_line_status_2_and_no_file(tmp_path, args, words):
    out = [] if "--out" in args else ["--out", "x.png"]
    done = _run(*args, *out, cwd=tmp_path)
    assert done.returncode == 2
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0]
    assert not list(tmp_path.iterdir())
