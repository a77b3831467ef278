"""Print preparation: joined models are one closed solid; split bodies carry the right phase;
the wall and gap checks measure known shapes."""

from __future__ import annotations

import math
from functools import cache

import numpy as np
import pytest
import trimesh

from orbitalrender.errors import UserInputError
from orbitalrender.mesh.bodies import face_components
from orbitalrender.mesh.export import length_scale, surface_mesh
from orbitalrender.mesh.print_options import PrintOptions
from orbitalrender.mesh.printable import (
    make_printable,
    require_single_solid,
    single_solid_problems,
    solid_parts,
    thin_spots,
)
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import extract_surface

SIZE_MM = 50.0


@cache
def _mesh_mm(text: str, fraction: float, resolution: int = 56):
    surface = extract_surface(parse_state(text), fraction, resolution=resolution)
    factor, _ = length_scale(surface.vertices_a0, size_mm=SIZE_MM)
    return surface, surface_mesh(surface, factor)


def _check_one_solid(mesh: trimesh.Trimesh) -> None:
    # trimesh's own tests of a printable solid: closed, consistently wound, one body, positive volume
    assert mesh.is_watertight
    assert mesh.is_winding_consistent
    assert mesh.body_count == 1
    assert mesh.volume > 0
    assert single_solid_problems(mesh) == []


@pytest.mark.parametrize(("text", "pieces"), [("2pz", 2), ("3dz2", 3), ("2px", 2)])
def test_printable_joins_every_piece_into_one_solid(text, pieces):
    _, mesh = _mesh_mm(text, 0.9)
    assert len(solid_parts(mesh)) == pieces
    model = make_printable(mesh)
    assert model.parts_joined == pieces
    _check_one_solid(model.mesh)
    # it stands on the bed: lowest point at z = 0, on a disc wider than 60 % of the size
    assert model.mesh.bounds[0, 2] == pytest.approx(0.0, abs=1e-9)
    base = [s for s in model.supports if s.kind == "disc"]
    assert len(base) == 1 and base[0].diameter_mm >= 0.6 * SIZE_MM
    # the union holds every piece: its volume exceeds the orbital's
    assert model.mesh.volume > mesh.volume
    # struts are at least the minimum feature size
    assert all(s.diameter_mm >= PrintOptions().min_thickness_mm for s in model.supports)


def test_orbital_vertices_keep_their_colour_and_supports_are_marked():
    _, mesh = _mesh_mm("2pz", 0.9)
    model = make_printable(mesh)
    phase = model.mesh.vertex_attributes["phase"]
    orbital = np.isfinite(phase)
    assert orbital.any() and (~orbital).any()
    # the orbital's phases are still 0 and pi (up to float32)
    assert np.all(np.minimum(np.abs(phase[orbital]), np.abs(np.abs(phase[orbital]) - math.pi)) < 1e-3)


def test_nested_shells_need_a_cutaway():
    # 2s at F = 0.95: a ball inside a shell.  Struts join them, but the gap between stays a
    # sealed cavity (a second surface), which the check must refuse with the reason.
    _, mesh = _mesh_mm("2s", 0.95, 64)
    assert len(solid_parts(mesh)) == 2
    model = make_printable(mesh)
    with pytest.raises(UserInputError, match="sealed cavity.*--cutaway"):
        require_single_solid(model.mesh)
    opened = make_printable(mesh, PrintOptions(cutaway=True))
    _check_one_solid(opened.mesh)
    # half of the model, lying on its cut face
    assert opened.mesh.extents[2] == pytest.approx(0.5 * SIZE_MM, rel=0.05)


def test_wall_check_measures_a_shell_of_known_thickness():
    # A spherical shell: outer radius 10 mm, inner 9.4 mm, so every wall is 0.6 mm
    # (along the radius; the normals of an icosphere are radial).
    outer = trimesh.creation.icosphere(4, radius=10.0)
    inner = trimesh.creation.icosphere(4, radius=9.4)
    inner.invert()
    shell = trimesh.util.concatenate([outer, inner])
    spots = thin_spots(shell, 1.0, "wall", samples=500)
    assert spots.below == spots.checked
    # icosphere facets lie inside the sphere by up to r (1 - cos(edge/2r)); 1 % covers it
    assert spots.minimum_mm == pytest.approx(0.6, rel=0.02)
    assert len(spots.locations_mm) == 20
    thick = thin_spots(outer, 1.0, "wall", samples=200)
    assert thick.below == 0


def test_gap_check_measures_a_known_gap():
    # Two balls of radius 5 mm whose surfaces are 0.3 mm apart along x.
    a = trimesh.creation.icosphere(4, radius=5.0)
    b = trimesh.creation.icosphere(4, radius=5.0).apply_translation([10.3, 0, 0])
    pair = trimesh.util.concatenate([a, b])
    spots = thin_spots(pair, 0.5, "gap", samples=len(pair.vertices))
    assert spots.below > 0
    assert spots.minimum_mm == pytest.approx(0.3, rel=0.03)
    assert all(abs(x - 5.15) < 0.5 for x, _, _ in spots.locations_mm)


def test_an_open_surface_cannot_be_a_solid():
    cut = trimesh.creation.icosphere(2)
    cut.update_faces(np.arange(len(cut.faces)) > 3)
    with pytest.raises(UserInputError, match="not closed"):
        solid_parts(cut)


def test_bad_print_options_are_refused():
    with pytest.raises(UserInputError, match="min thickness mm must be a positive"):
        PrintOptions(min_thickness_mm=0.0)
    with pytest.raises(UserInputError, match="unknown base"):
        PrintOptions(base="tripod")


def test_face_components_of_the_joined_model_is_one():
    _, mesh = _mesh_mm("3dz2", 0.9)
    assert len(face_components(mesh)) >= 3
    assert len(face_components(make_printable(mesh).mesh)) == 1
