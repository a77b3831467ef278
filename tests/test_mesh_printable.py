"""Print preparation: joined models are one closed solid at the printed size asked for; split
bodies carry the right phase."""

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


@pytest.mark.parametrize(("text", "fraction", "cutaway", "size"), [
    ("2pz", 0.9, False, 60.0), ("3dz2", 0.9, False, 80.0), ("3s", 0.9, True, 70.0), ("2s", 0.95, True, 45.0),
])
def test_size_mm_is_the_largest_side_of_the_whole_printed_object(text, fraction, cutaway, size):
    # The base, struts and cut are part of what is printed: the largest side of the joined
    # solid's own bounding box (trimesh) is the size asked for, within 1 %.
    _, mesh = _mesh_mm(text, fraction, 48)
    options = PrintOptions(cutaway=cutaway, base="none" if cutaway else "disc")
    model = make_printable(mesh, options, size_mm=size)
    _check_one_solid(model.mesh)
    assert max(model.mesh.extents) == pytest.approx(size, rel=0.01)
    orbital_mm = model.scale * SIZE_MM  # the orbital's own largest side in the model
    if cutaway:  # the cut through the middle keeps the full width and depth
        assert orbital_mm == pytest.approx(size, rel=0.01)
    else:  # the base and its gap take part of the height
        assert orbital_mm < 0.95 * size


def test_a_small_printed_size_keeps_struts_and_base_printable():
    # At 12 mm the fractions of the size fall below the printable minimum, which then holds:
    # struts at least min_thickness_mm across, the base at least twice as thick.
    _, mesh = _mesh_mm("2pz", 0.9, 48)
    options = PrintOptions()
    model = make_printable(mesh, options, size_mm=12.0)
    assert max(model.mesh.extents) == pytest.approx(12.0, rel=0.01)
    struts = [s for s in model.supports if s.kind in ("axial", "radial")]
    assert struts and all(s.diameter_mm >= options.min_thickness_mm for s in struts)
    (disc,) = [s for s in model.supports if s.kind == "disc"]
    assert disc.end_mm[2] - disc.start_mm[2] >= 2 * options.min_thickness_mm - 1e-9
    with pytest.raises(UserInputError, match="leaves no room for the orbital"):
        make_printable(mesh, options, size_mm=1.0)
