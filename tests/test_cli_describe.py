"""`orbitalrender describe`: text and JSON reports, and one-line refusals with exit status 2."""

from __future__ import annotations

import json
import math
import re
import subprocess
import sys

import numpy as np
import pytest
from scipy.constants import physical_constants

from orbitalrender.cli import main
from orbitalrender.lattice import memory

REQUIRED_KEYS = {"energy_eV", "energy_hartree", "radial_nodes", "angular_nodes", "radial_node_radii_a0",
                 "mean_radius_a0", "mean_square_radius_a0_2", "mean_inverse_radius_per_a0",
                 "most_probable_radius_a0", "radius_90_percent_a0", "Z", "reduced_mass_ratio", "label"}


def _json(capsys, *argv):
    assert main(["describe", *argv, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_json_report_of_3dz2(capsys):
    d = _json(capsys, "3dz2")
    assert REQUIRED_KEYS <= set(d)
    # <r> = (3n^2 - l(l+1))/2 = 10.5 a0 (Bethe and Salpeter eq. 3.24); E_3 = -1/18 hartree.
    assert math.isclose(d["mean_radius_a0"], 10.5, rel_tol=1e-11)
    assert math.isclose(d["energy_hartree"], -1 / 18, rel_tol=1e-15)
    assert d["label"] == "3dz2" and d["radial_nodes"] == 0 and d["angular_nodes"] == 2
    assert math.isclose(d["nodal_cone_angles_deg"][0], math.degrees(math.acos(1 / math.sqrt(3))))


def test_z_and_nucleus_options_reach_the_report(capsys):
    d = _json(capsys, "2s", "--Z", "2", "--nucleus", "hydrogen")
    mp = physical_constants["proton-electron mass ratio"][0]
    assert math.isclose(d["reduced_mass_ratio"], mp / (1 + mp), rel_tol=1e-15)
    # E_2 = -(mu/m_e) Z^2 / 8 hartree, times the CODATA hartree in eV.
    assert math.isclose(d["energy_eV"], -d["reduced_mass_ratio"] * 4 / 8
                        * physical_constants["Hartree energy in eV"][0], rel_tol=1e-14)
    assert math.isclose(d["radial_node_radii_a0"][0], 1.0 / d["reduced_mass_ratio"], rel_tol=1e-12)


def test_text_report_is_readable(capsys):
    assert main(["describe", "2,1,-1"]) == 0
    out = capsys.readouterr().out
    assert "mean radius (a0)" in out and ": 5\n" in out
    assert "energy (eV)" in out and re.search(r"radial node radii \(a0\) +: none", out)


def test_superposition_reports(capsys):
    d = _json(capsys, "1s + 2,1,0")
    assert d["kind"] == "superposition" and math.isclose(d["mean_radius_a0"], 3.25, rel_tol=1e-9)
    d = _json(capsys, "1s@(0,0,-0.7) - 1s@(0,0,0.7)")
    assert d["mean_radius_a0"] is None and d["notes"]
    assert main(["describe", "1s@(0,0,-0.7) - 1s@(0,0,0.7)"]) == 0
    assert "not defined" in capsys.readouterr().out


def test_field_report(tmp_path, capsys):
    path = tmp_path / "f.npz"
    np.savez(path, values=np.full((4, 4, 4), 0.5 + 0.5j, dtype=np.complex64), spacing_a0=0.5)
    d = _json(capsys, "--field", str(path))
    # norm = sum |psi|^2 h^3 = 64 * 0.5 * 0.125
    assert d["kind"] == "field" and d["shape"] == [4, 4, 4] and math.isclose(d["norm"], 4.0)
    npy = tmp_path / "f.npy"
    np.save(npy, np.ones((3, 3, 3)))
    d = _json(capsys, "--field", str(npy), "--spacing-a0", "2")
    assert d["extent_a0"][0] == [-2.0, 2.0] and d["is_real"] is True


@pytest.mark.parametrize("argv,words", [
    (["0,0,0"], "n must be >= 1"),
    (["2,2,0"], "l must satisfy 0 <= l < n"),
    (["2,1,3"], "m must satisfy |m| <= l"),
    (["5gxyz"], "expected ',l,m' or an orbital letter"),
    (["3dq"], "unknown d orbital label"),
    (["1s", "--Z", "0"], "--Z must be a number in [0.01, 137]"),
    (["1s", "--Z", "-2"], "--Z must be a number in [0.01, 137]"),
    (["3,2"], "STATE '3,2': expected ','"),
    (["1s", "--nucleus", "unobtainium"], "unknown nucleus"),
    ([], "give either a STATE or --field FILE"),
    (["1s", "--field", "x.npz"], "give either a STATE or --field FILE"),
])
def test_bad_input_is_one_line_and_status_2(capsys, argv, words):
    assert main(["describe", *argv]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and words in err and "Traceback" not in err


def test_bad_field_files_are_one_line_and_status_2(tmp_path, capsys, monkeypatch):
    broken = tmp_path / "broken.npy"
    broken.write_bytes(b"\x93NUMPY rubbish")
    ints = tmp_path / "ints.npy"
    np.save(ints, np.ones((3, 3, 3), dtype=np.int64))
    big = tmp_path / "big.npz"
    np.savez(big, values=np.ones((30, 30, 30), dtype=np.complex64), spacing_a0=1.0)
    cases = [(broken, "cannot read"), (ints, "dtype int64"), (tmp_path / "absent.npz", "no such file")]
    for path, words in cases:
        assert main(["describe", "--field", str(path), "--spacing-a0", "1"]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and words in err and str(path) in err
    monkeypatch.setattr(memory, "available_bytes", lambda: 10_000)
    assert main(["describe", "--field", str(big)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "30x30x30" in err and "MiB" in err


def test_argparse_errors_exit_2(capsys):
    # argparse itself refuses unknown options; values are checked as gallery values are
    with pytest.raises(SystemExit) as ex:
        main(["describe", "1s", "--bogus", "1"])
    assert ex.value.code == 2
    assert main(["describe", "1s", "--Z", "abc"]) == 2
    assert "--Z must be a number in [0.01, 137], got 'abc'" in capsys.readouterr().err


def test_module_entry_point_runs():
    done = subprocess.run([sys.executable, "-m", "orbitalrender", "describe", "2pz", "--json"],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["mean_radius_a0"] == pytest.approx(5.0)
