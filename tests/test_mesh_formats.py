"""Mesh files: each format reloads with trimesh unchanged; colours and phase survive where the format
has room for them; the byte layouts follow the published format descriptions."""

from __future__ import annotations

import json
import struct
from functools import cache

import numpy as np
import pytest
import trimesh

from orbitalrender.mesh.export import surface_mesh, write_bodies
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import extract_surface

FORMATS = [".ply", ".obj", ".stl", ".glb"]


@cache
def _surface():
    # complex 2p m=+1 at F = 0.7: one ring around z whose phase runs once through 2 pi,
    # so every colour of the map and every phase value appear
    return extract_surface(parse_state("2,1,1"), 0.7, resolution=48)


def _mesh():
    return surface_mesh(_surface(), 1.0, "uniform")


@pytest.mark.parametrize("suffix", FORMATS)
def test_every_format_reloads_with_the_same_counts(tmp_path, suffix):
    # Reference: trimesh's own readers (trimesh.exchange), independent of our writers for
    # OBJ and of the byte layout we document for PLY and GLB.
    mesh = _mesh()
    path = tmp_path / f"ring{suffix}"
    write_bodies(path, [mesh], comment="2,1,1; units a0", units="a0")
    loaded = trimesh.load(path, process=False, force="mesh")
    if suffix == ".stl":  # STL stores three corners per triangle, shared vertices are merged on reading
        loaded.merge_vertices()
    assert len(loaded.faces) == len(mesh.faces)
    assert len(loaded.vertices) == len(mesh.vertices)
    # same geometry: float32 coordinates in every format
    assert abs(loaded.volume - mesh.volume) <= 1e-5 * abs(mesh.volume)


def test_ply_is_binary_little_endian_with_colour_phase_and_density(tmp_path):
    # Reference: the PLY format description (G. Turk, "The PLY polygon file format", 1994):
    # header lines up to "end_header", then packed records in the declared property order.
    surface = _surface()
    mesh = _mesh()
    path = tmp_path / "ring.ply"
    write_bodies(path, [mesh], comment="2,1,1; units a0")
    data = path.read_bytes()
    header, _, body = data.partition(b"end_header\n")
    lines = header.decode("ascii").splitlines()
    assert lines[:2] == ["ply", "format binary_little_endian 1.0"]
    props = [ln.split()[1:] for ln in lines if ln.startswith("property") and "list" not in ln]
    assert props == [["float", "x"], ["float", "y"], ["float", "z"], ["uchar", "red"], ["uchar", "green"],
                     ["uchar", "blue"], ["uchar", "alpha"], ["float", "phase"], ["float", "density"]]
    dtype = np.dtype([("xyz", "<f4", 3), ("rgba", "u1", 4), ("phase", "<f4"), ("density", "<f4")])
    records = np.frombuffer(body, dtype=dtype, count=len(mesh.vertices))
    np.testing.assert_allclose(records["xyz"], surface.vertices_a0, rtol=1e-6, atol=1e-5)
    np.testing.assert_allclose(records["phase"], np.angle(surface.psi), atol=1e-6)
    np.testing.assert_allclose(records["density"], np.abs(surface.psi) ** 2, rtol=1e-6)
    np.testing.assert_array_equal(records["rgba"], mesh.visual.vertex_colors)
    # and trimesh reads the same colours and properties back
    loaded = trimesh.load(path, process=False)
    np.testing.assert_array_equal(loaded.visual.vertex_colors, mesh.visual.vertex_colors)
    raw = loaded.metadata["_ply_raw"]["vertex"]["data"]
    np.testing.assert_allclose(raw["phase"], np.angle(surface.psi), atol=1e-6)


def test_glb_carries_color_0_and_phase(tmp_path):
    # Reference: glTF 2.0 specification (Khronos Group): a GLB starts with magic "glTF",
    # version 2 and the total length; custom vertex attributes begin with "_".
    mesh = _mesh()
    path = tmp_path / "ring.glb"
    write_bodies(path, [mesh], units="a0")
    data = path.read_bytes()
    magic, version, length = struct.unpack_from("<4sII", data)
    assert (magic, version, length) == (b"glTF", 2, len(data))
    chunk_length, chunk_type = struct.unpack_from("<I4s", data, 12)
    assert chunk_type == b"JSON"
    gltf = json.loads(data[20:20 + chunk_length])
    attributes = gltf["meshes"][0]["primitives"][0]["attributes"]
    assert {"POSITION", "COLOR_0", "_phase", "_density"} <= set(attributes)
    loaded = trimesh.load(path, process=False, force="mesh")
    np.testing.assert_array_equal(loaded.visual.vertex_colors, mesh.visual.vertex_colors)
    np.testing.assert_allclose(np.ravel(loaded.vertex_attributes["_phase"]), mesh.vertex_attributes["phase"])


def test_obj_vertex_lines_hold_position_and_colour(tmp_path):
    # The "v x y z r g b" extension: six numbers, colour in [0, 1].
    mesh = _mesh()
    path = tmp_path / "ring.obj"
    write_bodies(path, [mesh])
    rows = np.array([ln.split()[1:] for ln in path.read_text().splitlines() if ln.startswith("v ")], float)
    assert rows.shape == (len(mesh.vertices), 6)
    # eight significant digits of the largest coordinate
    np.testing.assert_allclose(rows[:, :3], mesh.vertices, rtol=0, atol=1e-7 * np.abs(mesh.vertices).max())
    # four decimals identify each of the 256 levels of an 8-bit channel exactly
    np.testing.assert_array_equal(np.round(rows[:, 3:] * 255), mesh.visual.vertex_colors[:, :3])
    loaded = trimesh.load(path, process=False)
    np.testing.assert_array_equal(loaded.visual.vertex_colors[:, :3], mesh.visual.vertex_colors[:, :3])


def test_stl_is_binary_with_the_published_layout(tmp_path):
    # Reference: binary STL (3D Systems, "StereoLithography Interface Specification", 1989):
    # 80-byte header, uint32 triangle count, 50 bytes per triangle.
    mesh = _mesh()
    path = tmp_path / "ring.stl"
    write_bodies(path, [mesh], comment="2,1,1")
    data = path.read_bytes()
    (count,) = struct.unpack_from("<I", data, 80)
    assert count == len(mesh.faces) and len(data) == 84 + 50 * count
    assert not data.startswith(b"solid")  # an ASCII STL starts so


def test_several_bodies_keep_their_names_in_glb(tmp_path):
    mesh = _mesh()
    other = mesh.copy()
    other.apply_translation([20.0, 0, 0])
    path = tmp_path / "two.glb"
    write_bodies(path, [mesh, other], names=["positive", "negative"])
    scene = trimesh.load(path, process=False)
    assert set(scene.geometry) == {"positive", "negative"}


def test_3mf_reloads_with_the_same_counts_in_millimetres(tmp_path):
    # Reference: trimesh's 3MF reader (trimesh.exchange.threemf), independent of our writer;
    # the unit name is the core specification's (3MF Core Specification 1.3, <model unit>).
    mesh = _mesh()
    path = tmp_path / "ring.3mf"
    write_bodies(path, [mesh], names=["ring"], units="mm")
    scene = trimesh.load(path, process=False)
    assert scene.units == "millimeter" and set(scene.geometry) == {"ring"}
    loaded = scene.geometry["ring"]
    assert (len(loaded.vertices), len(loaded.faces)) == (len(mesh.vertices), len(mesh.faces))
    assert loaded.is_watertight
    assert np.abs(loaded.vertices - mesh.vertices).max() <= 1e-6 * np.abs(mesh.vertices).max()
    with pytest.raises(ValueError, match="millimetres"):
        write_bodies(tmp_path / "a0.3mf", [mesh], units="a0")


def test_3mf_gives_each_body_its_own_named_material(tmp_path):
    # With several bodies, one <basematerials> group and one <base> per body, each object
    # referring to its own entry (pid, pindex): 3MF Core Specification 1.3, sec. 5.
    import xml.etree.ElementTree as ET
    import zipfile

    mesh = _mesh()
    other = mesh.copy()
    other.apply_translation([20.0, 0, 0])
    path = tmp_path / "two.3mf"
    write_bodies(path, [mesh, other], names=["psi>0", "psi<0"], units="mm")
    ns = {"m": "http://schemas.microsoft.com/3dmanufacturing/core/2015/02"}
    root = ET.fromstring(zipfile.ZipFile(path).read("3D/3dmodel.model"))
    bases = root.findall("m:resources/m:basematerials/m:base", ns)
    assert [b.get("name") for b in bases] == ["psi>0", "psi<0"]
    objects = root.findall("m:resources/m:object", ns)
    assert [(o.get("name"), o.get("pindex")) for o in objects] == [("psi>0", "0"), ("psi<0", "1")]
    assert len(root.findall("m:build/m:item", ns)) == 2
    scene = trimesh.load(path, process=False)
    assert set(scene.geometry) == {"psi>0", "psi<0"}


@pytest.mark.parametrize("suffix", [".ply", ".obj", ".stl"])
def test_our_readers_see_what_trimesh_reads(tmp_path, suffix):
    # Reference: trimesh's readers (trimesh.exchange.ply, .obj, .stl) on the same file; ours
    # check every plain export before it replaces a file, so they must agree with them.
    from orbitalrender.mesh.obj import read_obj
    from orbitalrender.mesh.ply import read_ply
    from orbitalrender.mesh.stl import read_stl

    path = tmp_path / f"ring{suffix}"
    write_bodies(path, [_mesh()], comment="2,1,1; units a0")
    ours = {".ply": read_ply, ".obj": read_obj, ".stl": read_stl}[suffix](path.read_bytes())
    theirs = trimesh.load(path, process=False, force="mesh")
    np.testing.assert_array_equal(ours.faces, theirs.faces)
    np.testing.assert_allclose(ours.vertices, theirs.vertices, rtol=0, atol=1e-6)
    if suffix != ".stl":
        np.testing.assert_array_equal(ours.rgba, theirs.visual.vertex_colors)
    if suffix == ".ply":
        raw = theirs.metadata["_ply_raw"]["vertex"]["data"]
        np.testing.assert_allclose(ours.attributes["phase"], raw["phase"])


@pytest.mark.parametrize("suffix, cut", [(".ply", 7), (".stl", 50)])
def test_a_truncated_binary_file_is_refused_by_our_readers(tmp_path, suffix, cut):
    # a file cut short (a full disk, a killed writer) must not pass the read-back check;
    # a text OBJ cut at a line end still reads, and the face count of write_bodies refuses it
    from orbitalrender.mesh.export import _reload

    path = tmp_path / f"ring{suffix}"
    write_bodies(path, [_mesh()])
    path.write_bytes(path.read_bytes()[:-cut])
    with pytest.raises(OSError):
        _reload(path, suffix)
