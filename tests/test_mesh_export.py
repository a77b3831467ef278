"""Export: units and printed size against closed forms and CODATA; the report against the reloaded file;
a refused file leaves the earlier one intact."""

from __future__ import annotations

import json
import math
from functools import cache

import numpy as np
import pytest
import scipy.constants
import trimesh
from scipy.optimize import brentq

from orbitalrender.errors import UserInputError
from orbitalrender.mesh.export import (
    length_scale,
    mesh_suffix,
    surface_mesh,
    surface_report,
    write_bodies,
)
from orbitalrender.picture.output import write_report
from orbitalrender.state.model import eigenstate
from orbitalrender.surface.extract import extract_surface

FRACTION = 0.8


def _ball_radius_a0(fraction: float) -> float:
    # Closed form for 1s (any handbook, e.g. Griffiths, Introduction to Quantum Mechanics, sec. 4.2):
    # P(r < x) = 1 - e^{-2x} (1 + 2x + 2x^2), x in a0.
    return brentq(lambda x: 1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - fraction, 1e-6, 50)


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
    with pytest.raises(UserInputError, match=r"\.ply, \.obj, \.stl, \.glb"):
        mesh_suffix("model.3mf")


def test_size_mm_makes_a_1s_sphere_of_that_diameter(tmp_path):
    # A 1s surface is a sphere: after --size-mm 50 every vertex lies 25 mm from the nucleus
    # (within 1 %) and the volume is 4/3 pi 25^3 mm^3 (within 1 %).
    surface = _surface_1s()
    factor, unit = length_scale(surface.vertices_a0, size_mm=50.0)
    assert unit == "mm"
    written = write_bodies(tmp_path / "ball.stl", [surface_mesh(surface, factor)])
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
    written = write_bodies(path, [surface_mesh(surface, factor)])
    report = surface_report(surface, written, factor, unit)
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
    mesh = surface_mesh(surface, factor)
    report = surface_report(surface, mesh, factor, unit, size_mm=40.0)
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
