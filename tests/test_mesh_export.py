"""Export: units and printed size against closed forms and CODATA; the report against the reloaded file;
a refused file leaves the earlier one intact."""

from __future__ import annotations

import dataclasses
import json
import math
from functools import cache

import numpy as np
import pytest
import scipy.constants
import trimesh
from scipy.optimize import brentq

from orbitalrender import parse_state
from orbitalrender.errors import UserInputError
from orbitalrender.mesh import export
from orbitalrender.mesh.bodies import face_components, submesh
from orbitalrender.mesh.export import (
    length_scale,
    mesh_suffix,
    surface_mesh,
    surface_report,
    write_bodies,
)
from orbitalrender.mesh.pipeline import export_mesh
from orbitalrender.mesh.print_options import PrintOptions
from orbitalrender.picture.output import write_report
from orbitalrender.state.model import eigenstate
from orbitalrender.surface.extract import extract_surface

FRACTION = 0.8


def _ball_radius_a0(fraction: float) -> float:
    # Closed form for 1s (any handbook, e.g. Griffiths, Introduction to Quantum Mechanics, sec. 4.2):
    # P(r < x) = 1 - e^{-2x} (1 + 2x + 2x^2), x in a0.
    return brentq(lambda x: 1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - fraction, 1e-6, 50)


def _trimesh_load(path) -> trimesh.Trimesh:
    """The file as trimesh's reader sees it (independent of our writers and readers); the
    three corners of each STL triangle merged into shared vertices, as slicers do."""
    mesh = trimesh.load(path, process=False, force="mesh")
    if path.suffix == ".stl":
        mesh.merge_vertices()
    return mesh


@cache
def _surface_1s():
    return extract_surface(eigenstate(1, 0, 0), FRACTION, resolution=64)


def test_units_follow_codata_bohr_radius():
    # Reference: scipy.constants (CODATA) Bohr radius.
    a0_m = scipy.constants.physical_constants["Bohr radius"][0]
    v = np.zeros((2, 3))
    assert length_scale(v, "angstrom") == (pytest.approx(a0_m * 1e10, rel=1e-12), "angstrom")
    assert length_scale(v, "nm")[0] == pytest.approx(a0_m * 1e9, rel=1e-12)
    assert length_scale(v, "pm")[0] == pytest.approx(a0_m * 1e12, rel=1e-12)
    assert length_scale(v, "a0") == (1.0, "a0")


@pytest.mark.parametrize("size", [0.0, -5.0, float("nan"), float("inf"), 1e-300, 1e300])
def test_printed_size_must_lie_in_the_supported_range(size):
    # 1e-300 once divided by zero and 1e300 overflowed in the print preparation
    with pytest.raises(UserInputError, match="must be 0.1 to 10000 millimetres"):
        length_scale(np.array([[0.0, 0, 0], [1.0, 1, 1]]), size_mm=size)


def test_unknown_suffix_is_refused():
    with pytest.raises(UserInputError, match=r"\.ply, \.obj, \.stl, \.glb, \.3mf"):
        mesh_suffix("model.amf")


def test_size_mm_makes_a_1s_sphere_of_that_diameter(tmp_path):
    # A 1s surface is a sphere: after --size-mm 50 every vertex lies 25 mm from the nucleus
    # (within 1 %) and the volume is 4/3 pi 25^3 mm^3 (within 1 %).
    surface = _surface_1s()
    factor, unit = length_scale(surface.vertices_a0, size_mm=50.0)
    assert unit == "mm"
    write_bodies(tmp_path / "ball.stl", [surface_mesh(surface, factor)])
    written = _trimesh_load(tmp_path / "ball.stl")
    radii = np.linalg.norm(written.vertices, axis=1)
    assert np.all(np.abs(2 * radii - 50.0) <= 0.5)
    assert written.volume == pytest.approx(4 / 3 * math.pi * 25.0**3, rel=0.01)
    # and the scale agrees with the closed-form radius: 50 mm per 2 x a0
    assert factor == pytest.approx(50.0 / (2 * _ball_radius_a0(FRACTION)), rel=0.01)


@pytest.mark.parametrize("unit", ["a0", "angstrom"])
def test_report_volume_matches_file_and_closed_form(tmp_path, unit):
    surface = _surface_1s()
    factor, unit = length_scale(surface.vertices_a0, unit)
    path = tmp_path / "ball.ply"
    write_bodies(path, [surface_mesh(surface, factor)])
    report = surface_report(surface, factor, unit)
    write_report(tmp_path / "r.json", report)
    report = json.loads((tmp_path / "r.json").read_text())
    for key in ("fraction_requested", "fraction_enclosed", "level", "lattice_shape", "spacing_a0",
                "vertices", "faces", "components", "euler_characteristics", "watertight",
                "volume_a0_3", "units"):
        assert key in report
    reloaded = trimesh.load(path, process=False)
    # against the file as trimesh reads it (divergence theorem on its triangles)
    assert report["volume_a0_3"] * factor**3 == pytest.approx(reloaded.volume, rel=0.005)
    # against the closed-form ball 4/3 pi x^3
    x = _ball_radius_a0(FRACTION)
    assert report["volume_a0_3"] == pytest.approx(4 / 3 * math.pi * x**3, rel=0.01)
    assert report["components"] == 1 and report["euler_characteristics"] == [2] and report["watertight"]


def test_report_after_size_has_material_volume():
    surface = _surface_1s()
    factor, unit = length_scale(surface.vertices_a0, size_mm=40.0)
    report = surface_report(surface, factor, unit, size_mm=40.0)
    # a ball of 40 mm diameter: 4/3 pi 2^3 cm^3
    assert report["material_cm3"] == pytest.approx(4 / 3 * math.pi * 2.0**3, rel=0.01)
    assert report["size_mm"] == 40.0


def test_a_refused_file_leaves_the_earlier_one_intact(tmp_path):
    surface = _surface_1s()
    path = tmp_path / "ball.glb"
    write_bodies(path, [surface_mesh(surface)])
    before = path.read_bytes()

    def refuse(mesh):
        raise UserInputError("not this one")

    with pytest.raises(UserInputError):
        write_bodies(path, [surface_mesh(surface, 2.0)], check=refuse)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ball.glb"]  # no temporary left behind


def _outer_radius_2s_a0(fraction: float) -> float:
    # {|psi_2s|^2 >= c} is a ball r < a plus a shell b < r < d (R_20 has its node at r = 2).
    # With R_20(r)^2 = (1 - r/2)^2 e^{-r} / 2 (sympy.physics.hydrogen.R_nl(2, 0, r, 1)) and the
    # closed-form radial CDF P(r < x) = 1 - e^{-x} (1 + x + x^2/2 + x^4/8) (the integral of
    # r^2 R_20^2, done by sympy), the level c holding `fraction` fixes d.
    def radial_sq(r):
        return (1 - r / 2) ** 2 * math.exp(-r) / 2

    def cdf(x):
        return 1 - math.exp(-x) * (1 + x + x * x / 2 + x**4 / 8)

    r_peak = 3 + math.sqrt(5)  # d/dr of (1 - r/2)^2 e^{-r} vanishes at r = 3 +- sqrt(5)

    def enclosed(c):
        a = brentq(lambda r: radial_sq(r) - c, 0.0, 2.0)
        b = brentq(lambda r: radial_sq(r) - c, 2.0, r_peak) if c < radial_sq(r_peak) else None
        d = brentq(lambda r: radial_sq(r) - c, r_peak, 200.0) if b is not None else None
        return cdf(a) + (cdf(d) - cdf(b) if b is not None else 0.0), d

    level = brentq(lambda c: enclosed(c)[0] - fraction, 1e-12, radial_sq(r_peak) * (1 - 1e-9))
    return enclosed(level)[1]


def test_one_scale_gives_sizes_in_the_ratio_of_closed_form_radii(tmp_path):
    # At one mm_per_a0 K, a 1s ball is 2 K r_1s across and the 2s outer shell 2 K r_2s, with
    # each radius from the closed-form radial CDF (above; 1s: _ball_radius_a0).
    scale = 2.0
    extents = {}
    for n in (1, 2):
        surface = extract_surface(eigenstate(n, 0, 0), 0.9, resolution=72)
        report = export_mesh(surface, tmp_path / f"{n}s.stl", mm_per_a0=scale)
        extents[n] = max(report["extent_mm"])
        assert report["mm_per_a0"] == scale and report["size_requested_mm"] is None
    r1, r2 = _ball_radius_a0(0.9), _outer_radius_2s_a0(0.9)
    assert extents[1] == pytest.approx(2 * scale * r1, rel=0.01)
    assert extents[2] == pytest.approx(2 * scale * r2, rel=0.01)
    assert extents[2] / extents[1] == pytest.approx(r2 / r1, rel=0.01)


def test_one_scale_makes_the_z2_model_exactly_half_the_z1_model(tmp_path):
    # Hydrogen-like lengths scale as a0 / Z (any handbook, e.g. Bethe and Salpeter sec. 3):
    # at one scale the Z = 2 model is half the Z = 1 one, printed with its supports too,
    # since these are sized from each model's own orbital.
    sides = {}
    for Z in (1.0, 2.0):
        surface = extract_surface(eigenstate(2, 1, 0, Z=Z), 0.9, resolution=48)
        report = export_mesh(surface, tmp_path / f"z{Z:g}.stl", mm_per_a0=10.0,
                             printable=PrintOptions(min_thickness_mm=0.01, min_gap_mm=0.01))
        sides[Z] = (max(report["orbital_extent_mm"]), report["size_mm"])
    assert sides[1.0][0] / sides[2.0][0] == pytest.approx(2.0, rel=1e-6)
    assert sides[1.0][1] / sides[2.0][1] == pytest.approx(2.0, rel=1e-4)


@pytest.mark.parametrize("suffix", [".stl", ".3mf"])
def test_report_extent_mm_is_the_bounding_box_of_the_file(tmp_path, suffix):
    surface = extract_surface(eigenstate(2, 1, 0), 0.9, resolution=48)
    path = tmp_path / f"2pz{suffix}"
    report = export_mesh(surface, path, size_mm=60.0, printable=PrintOptions())
    loaded = trimesh.load(path, process=False, force="mesh")  # trimesh's own reader
    assert report["extent_mm"] == pytest.approx(list(loaded.extents), rel=1e-6)
    assert report["size_mm"] == pytest.approx(60.0, rel=0.01)
    assert max(report["orbital_extent_mm"]) < report["size_mm"]


def test_size_and_scale_exclude_each_other():
    with pytest.raises(UserInputError, match="not both"):
        length_scale(np.zeros((2, 3)), size_mm=50.0, mm_per_a0=2.0)
    with pytest.raises(UserInputError, match="positive number of millimetres per a0"):
        length_scale(np.zeros((2, 3)), mm_per_a0=0.0)


def test_a_sign_split_at_a_size_is_that_size_all_bodies_together(tmp_path):
    # Without struts the printed object is the bodies together: their joint box (trimesh's
    # reading of the 3MF) has the size asked for as its largest side.
    surface = extract_surface(eigenstate(2, 1, 0), 0.9, resolution=48)
    path = tmp_path / "2pz.3mf"
    report = export_mesh(surface, path, size_mm=50.0, split="sign")
    scene = trimesh.load(path, process=False)
    assert len(scene.geometry) == 2
    assert max(scene.extents) == pytest.approx(50.0, rel=0.01)
    assert report["extent_mm"] == pytest.approx(list(scene.extents), rel=1e-6)


@pytest.mark.parametrize("suffix", [".ply", ".stl", ".glb"])
def test_report_from_the_surface_equals_trimesh_on_the_file(tmp_path, suffix):
    # 3d_z2 at F = 0.8: two lobes and a ring; the file's figures as trimesh computes them
    # (edge-connected parts, V - E + F of each, is_watertight, divergence-theorem volume)
    surface = extract_surface(parse_state("3dz2"), 0.8, resolution=40)
    factor, unit = length_scale(surface.vertices_a0, size_mm=30.0)
    path = tmp_path / f"d{suffix}"
    write_bodies(path, [surface_mesh(surface, factor)])
    written = _trimesh_load(path)
    report = surface_report(surface, factor, unit, size_mm=30.0)
    parts = face_components(written)
    assert report["components"] == len(parts) == 3
    assert report["euler_characteristics"] == [int(submesh(written, p).euler_number) for p in parts]
    assert report["watertight"] == written.is_watertight is True
    assert report["volume_units3"] == pytest.approx(float(written.volume), rel=1e-5)
    assert report["faces"] == len(written.faces)


def test_a_file_that_reads_back_with_another_volume_is_refused(tmp_path, monkeypatch):
    surface = _surface_1s()
    path = tmp_path / "ball.ply"
    reload = export._reload

    def stretched(p, suffix):
        mesh = reload(p, suffix)
        return dataclasses.replace(mesh, vertices=mesh.vertices * 1.001)

    monkeypatch.setattr(export, "_reload", stretched)
    with pytest.raises(OSError, match="read back enclosing"):
        write_bodies(path, [surface_mesh(surface)])
    assert not path.exists()
