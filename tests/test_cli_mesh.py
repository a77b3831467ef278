"""The ``mesh`` command end to end: files, report, printable checks and one-line refusals."""

from __future__ import annotations

import json
import math
import os

import numpy as np
import pytest
import trimesh
from scipy.optimize import brentq

from orbitalrender.cli import main

LOW = ["--resolution", "48"]


def _run(capsys, *argv):
    status = main(["mesh", *argv])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


@pytest.mark.parametrize("suffix", [".ply", ".obj", ".stl", ".glb"])
def test_each_format_is_written_and_reported(tmp_path, capsys, suffix):
    out = tmp_path / f"2pz{suffix}"
    report = tmp_path / "r.json"
    status, text, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, "--out", str(out),
                             "--report", str(report))
    assert status == 0, err
    assert f"wrote {out}" in text
    data = json.loads(report.read_text())
    loaded = trimesh.load(out, process=False, force="mesh")
    if suffix == ".stl":
        loaded.merge_vertices()
    assert (len(loaded.vertices), len(loaded.faces)) == (data["vertices"], data["faces"])
    assert data["components"] == 2 and data["euler_characteristics"] == [2, 2]
    assert data["watertight"] and data["units"] == "a0"


def test_size_mm_50_on_1s_is_a_50_mm_ball(tmp_path, capsys):
    # Closed form for 1s: P(r < x) = 1 - e^{-2x}(1 + 2x + 2x^2) (e.g. Griffiths, sec. 4.2)
    out, report = tmp_path / "ball.stl", tmp_path / "ball.json"
    status, text, err = _run(capsys, "1s", "--fraction", "0.9", "--resolution", "64", "--out", str(out),
                             "--size-mm", "50", "--report", str(report))
    assert status == 0, err
    mesh = trimesh.load(out)
    radii = np.linalg.norm(mesh.vertices - mesh.bounds.mean(axis=0), axis=1)
    assert 2 * radii.mean() == pytest.approx(50.0, rel=0.01)
    data = json.loads(report.read_text())
    assert data["size_mm"] == 50.0 and data["units"] == "mm"
    assert data["material_cm3"] == pytest.approx(4 / 3 * math.pi * 2.5**3, rel=0.01)
    x = brentq(lambda r: 1 - math.exp(-2 * r) * (1 + 2 * r + 2 * r * r) - 0.9, 0.1, 20)
    assert data["volume_a0_3"] == pytest.approx(4 / 3 * math.pi * x**3, rel=0.01)
    assert "material" in text


@pytest.mark.parametrize("state", ["2pz", "3dz2", "4fxyz"])
def test_printable_gives_exactly_one_watertight_component(tmp_path, capsys, state):
    # 4fxyz: eight lobes off the axes, joined by radial struts; an STL reader merges coincident
    # corners, so seam slivers of the union would show up here as edges of four faces
    out, report = tmp_path / f"{state}.stl", tmp_path / "r.json"
    status, _, err = _run(capsys, state, "--fraction", "0.9", *LOW, "--out", str(out), "--size-mm", "60",
                          "--printable", "--report", str(report))
    assert status == 0, err
    mesh = trimesh.load(out)
    assert mesh.is_watertight and mesh.is_winding_consistent and mesh.body_count == 1 and mesh.volume > 0
    data = json.loads(report.read_text())
    assert data["components"] == 1 and data["watertight"]
    pieces = {"2pz": 2, "3dz2": 3, "4fxyz": 8}[state]
    assert data["printable"]["parts_joined"] == pieces == data["surface"]["components"]
    assert data["printable"]["thin_walls"]["checked"] > 0
    assert data["material_cm3"] == pytest.approx(mesh.volume / 1000, rel=1e-3)
    # --size-mm is the whole printed object, base and struts included (trimesh's bounding box)
    assert max(mesh.extents) == pytest.approx(60.0, rel=0.01)
    assert data["extent_mm"] == pytest.approx(list(mesh.extents), rel=1e-6)


def test_the_message_states_the_printed_box_and_the_orbital_box(tmp_path, capsys):
    out, report = tmp_path / "2pz.stl", tmp_path / "r.json"
    status, text, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, "--out", str(out), "--mm-per-a0", "2",
                             "--printable", "--report", str(report))
    assert status == 0, err
    data = json.loads(report.read_text())
    x, y, z = trimesh.load(out).extents
    assert f"printed size {x:.1f} x {y:.1f} x {z:.1f} mm" in text
    ox, oy, oz = data["orbital_extent_mm"]
    assert f"the orbital itself {ox:.1f} x {oy:.1f} x {oz:.1f} mm" in text
    # at 2 mm per a0 the orbital is twice its extent in a0; the base adds to the height only
    assert data["orbital_extent_mm"] == pytest.approx([2 * e for e in data["extent_a0"]], rel=1e-12)
    assert z > oz and data["size_requested_mm"] is None


def test_a_sign_split_in_3mf_reads_back_as_two_named_watertight_objects(tmp_path, capsys):
    out = tmp_path / "2pz.3mf"
    status, _, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, "--out", str(out), "--mm-per-a0", "3",
                          "--split", "sign")
    assert status == 0, err
    scene = trimesh.load(out, process=False)  # trimesh's own 3MF reader
    assert set(scene.geometry) == {"psi>0", "psi<0"} and scene.units == "millimeter"
    for body in scene.geometry.values():
        assert body.is_watertight and body.body_count == 1 and body.volume > 0
    # 2p_z is positive on +z (Condon-Shortley Y_1^0 ~ cos theta)
    assert scene.geometry["psi>0"].centroid[2] > 0 > scene.geometry["psi<0"].centroid[2]


def test_parts_are_written_to_numbered_files(tmp_path, capsys):
    out = tmp_path / "lobes.stl"
    status, _, err = _run(capsys, "3dz2", "--fraction", "0.9", *LOW, "--out", str(out), "--size-mm", "60",
                          "--parts")
    assert status == 0, err
    names = sorted(p.name for p in tmp_path.iterdir())
    assert names == ["lobes_part1.stl", "lobes_part2.stl", "lobes_part3.stl"]
    assert all(trimesh.load(tmp_path / n).is_watertight for n in names)


def test_sign_split_writes_two_bodies_pi_apart(tmp_path, capsys):
    out = tmp_path / "two.ply"
    status, _, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, "--out", str(out), "--split", "sign",
                          "--separate", "--report", str(tmp_path / "r.json"))
    assert status == 0, err
    bodies = json.loads((tmp_path / "r.json").read_text())["bodies"]
    assert set(bodies) == {"positive", "negative"} and all(b["watertight"] for b in bodies.values())
    gap = bodies["positive"]["mean_phase_rad"] - bodies["negative"]["mean_phase_rad"]
    assert abs(np.angle(np.exp(1j * gap))) == pytest.approx(math.pi, abs=1e-3)
    for name in ("positive", "negative"):
        raw = trimesh.load(tmp_path / f"two_{name}.ply", process=False).metadata["_ply_raw"]
        assert len(raw["vertex"]["data"]["phase"]) > 0


def test_phase_bands_of_a_complex_state_in_one_glb(tmp_path, capsys):
    out = tmp_path / "ring.glb"
    status, _, err = _run(capsys, "2,1,1", "--fraction", "0.7", *LOW, "--out", str(out), "--split", "phase",
                          "--bands", "3")
    assert status == 0, err
    assert set(trimesh.load(out).geometry) == {"band1", "band2", "band3"}


def test_sign_split_of_a_complex_state_is_refused(tmp_path, capsys):
    status, _, err = _run(capsys, "2,1,1", "--fraction", "0.7", *LOW, "--out", str(tmp_path / "a.ply"),
                          "--split", "sign")
    assert status == 2 and "real state" in err and len(err.strip().splitlines()) == 1


@pytest.mark.parametrize(("extra", "message"), [
    (["--out", "{d}/model.amf"], "cannot tell the mesh format"),
    (["--out", "{d}/model.3mf"], "a .3mf file holds millimetres"),
    (["--out", "{d}/model.stl", "--size-mm", "0"], "--size-mm must be a number in [0.1, 10000]"),
    (["--out", "{d}/model.stl", "--size-mm", "-10"], "--size-mm must be a number in [0.1, 10000]"),
    (["--out", "{d}/model.stl", "--printable"], "needs --size-mm (the printed size) or --mm-per-a0"),
    (["--out", "{d}/model.stl", "--mm-per-a0", "-1"], "--mm-per-a0 must be a number in (0, 1000]"),
    (["--out", "{d}/model.stl", "--size-mm", "60", "--mm-per-a0", "2"], "exclude each other"),
    (["--out", "{d}/missing/model.stl"], "does not exist"),
])
def test_bad_input_is_one_line_and_exit_2(tmp_path, capsys, extra, message):
    extra = [e.format(d=tmp_path) for e in extra]
    status, _, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, *extra)
    assert status == 2
    assert message in err and len(err.strip().splitlines()) == 1
    assert list(tmp_path.iterdir()) == []  # nothing written, not even a partial file


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write into a read-only folder")
def test_unwritable_folder_is_refused(tmp_path, capsys):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        status, _, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, "--out", str(locked / "m.stl"))
    finally:
        locked.chmod(0o700)
    assert status == 2 and "not writable" in err
    assert list(locked.iterdir()) == []


def test_an_output_path_that_cannot_be_a_file_is_refused(tmp_path, capsys):
    plain = tmp_path / "notes.txt"
    plain.write_text("a file, not a folder")
    folder = tmp_path / "taken.stl"
    folder.mkdir()
    for out, message in ((plain / "m.stl", "is a file, not a folder"), (folder, "is a folder")):
        status, _, err = _run(capsys, "2pz", "--fraction", "0.9", *LOW, "--out", str(out))
        assert status == 2 and message in err and len(err.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt", "taken.stl"]
    assert list(folder.iterdir()) == []


def test_a_printable_request_that_cannot_be_met_says_why_and_keeps_the_old_file(tmp_path, capsys):
    # 2s at F = 0.95 is a ball inside a shell: joined by struts, the gap between them is a sealed
    # cavity, which no print can hold open; the old file must survive the refusal.
    out = tmp_path / "shell.stl"
    out.write_bytes(b"earlier model")
    status, _, err = _run(capsys, "2s", "--fraction", "0.95", "--resolution", "56", "--out", str(out),
                          "--size-mm", "50", "--printable")
    assert status == 2
    assert "sealed cavity" in err and "--cutaway" in err and len(err.strip().splitlines()) == 1
    assert out.read_bytes() == b"earlier model"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["shell.stl"]
    status, _, err = _run(capsys, "2s", "--fraction", "0.95", "--resolution", "56", "--out", str(out),
                          "--size-mm", "50", "--printable", "--cutaway")
    assert status == 0, err
    assert trimesh.load(out).body_count == 1
