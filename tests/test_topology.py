"""Topology report of triangle meshes against closed forms for simple solids."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from orbitalrender.surface.model import Surface
from orbitalrender.surface.topology import component_labels, split_components, topology


def _surface(vertices, faces) -> Surface:
    v = np.asarray(vertices, dtype=float)
    return Surface(v, np.asarray(faces, dtype=np.int64), np.zeros_like(v), np.ones(len(v), complex),
                   1.0, None, None, None, (2, 2, 2), (1.0, 1.0, 1.0))


def _cube(offset=(0.0, 0.0, 0.0), side=1.0):
    """Unit cube as 12 outward triangles."""
    v = np.array([[x, y, z] for x in (0, 1) for y in (0, 1) for z in (0, 1)], float) * side
    v += np.asarray(offset)
    quads = [(0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3)]
    faces = []
    for a, b, c, d in quads:
        faces += [(a, b, c), (a, c, d)]
    return v, np.array(faces)


def _torus(major=2.0, minor=0.5, nu=120, nv=60):
    """Triangulated torus, outward faces."""
    u = 2 * np.pi * np.arange(nu) / nu
    w = 2 * np.pi * np.arange(nv) / nv
    uu, ww = np.meshgrid(u, w, indexing="ij")
    rad = major + minor * np.cos(ww)
    v = np.stack([rad * np.cos(uu), rad * np.sin(uu), minor * np.sin(ww)], axis=-1).reshape(-1, 3)
    idx = np.arange(nu * nv).reshape(nu, nv)
    a = idx
    b = np.roll(idx, -1, axis=0)
    c = np.roll(np.roll(idx, -1, axis=0), -1, axis=1)
    d = np.roll(idx, -1, axis=1)
    faces = np.concatenate([np.stack([a, b, c], -1).reshape(-1, 3), np.stack([a, c, d], -1).reshape(-1, 3)])
    return v, faces


def test_cube_volume_area_and_genus():
    topo = topology(_surface(*_cube()))
    # a cube: V - E + F = 8 - 18 + 12 = 2 (Euler's polyhedron formula), volume 1, area 6
    assert topo.components == 1 and topo.euler_characteristics == (2,) and topo.genus == (0,)
    assert topo.volume_a0_3 == pytest.approx(1.0, abs=1e-12)
    assert topo.area_a0_2 == pytest.approx(6.0, abs=1e-12)
    assert topo.closed and topo.regions == 1


def test_torus_has_genus_one_and_pappus_volume():
    v, f = _torus()
    topo = topology(_surface(v, f))
    assert topo.euler_characteristics == (0,) and topo.genus == (1,) and topo.closed
    # Pappus: V = 2 pi^2 R r^2, A = 4 pi^2 R r (inscribed polyhedron is slightly smaller)
    # (the 60-gon cross-section holds 1 - sin(6 deg)/(6 deg) ~ 1.8e-3 less than the circle)
    assert topo.volume_a0_3 == pytest.approx(2 * math.pi**2 * 2.0 * 0.25, rel=3e-3)
    assert topo.area_a0_2 == pytest.approx(4 * math.pi**2 * 2.0 * 0.5, rel=3e-3)


def test_open_mesh_is_reported_open_with_unknown_genus():
    v, f = _cube()
    topo = topology(_surface(v, f[1:]))
    assert not topo.closed and topo.genus == (None,)
    # one triangle removed: V - E + F = 8 - 18 + 11 = 1 (a disc)
    assert topo.euler_characteristics == (1,)


def test_nested_cubes_and_a_cavity_count_as_one_region():
    outer_v, outer_f = _cube(side=3.0)
    inner_v, inner_f = _cube(offset=(1, 1, 1))
    inner_f = inner_f[:, ::-1]  # a cavity: faces point into it, away from the solid
    v = np.concatenate([outer_v, inner_v])
    f = np.concatenate([outer_f, inner_f + len(outer_v)])
    topo = topology(_surface(v, f))
    assert topo.components == 2 and topo.regions == 1
    assert topo.volumes_a0_3 == pytest.approx((27.0, -1.0))
    assert topo.volume_a0_3 == pytest.approx(26.0)


def test_split_components_reindexes_each_part():
    a_v, a_f = _cube()
    b_v, b_f = _torus(nu=24, nv=12)
    b_v = b_v + 10.0
    surf = _surface(np.concatenate([a_v, b_v]), np.concatenate([a_f, b_f + len(a_v)]))
    count, labels = component_labels(surf)
    assert count == 2 and set(labels) == {0, 1}
    parts = split_components(surf)
    assert [len(p.vertices_a0) for p in parts] == [8, 24 * 12]
    for p in parts:
        assert p.faces.min() == 0 and p.faces.max() == len(p.vertices_a0) - 1
    assert topology(parts[0]).volume_a0_3 == pytest.approx(1.0)
    assert topology(parts[1]).genus == (1,)
    total = topology(surf)
    assert sum(topology(p).volume_a0_3 for p in parts) == pytest.approx(total.volume_a0_3)


def test_as_dict_is_json_ready():
    report = topology(_surface(*_cube())).as_dict()
    again = json.loads(json.dumps(report))
    assert again["components"] == 1 and again["genus"] == [0] and again["closed"] is True
    assert set(again) == {"components", "euler_characteristics", "genus", "volumes_a0_3",
                          "volume_a0_3", "area_a0_2", "closed", "regions", "face_counts", "oriented"}


def test_parts_are_numbered_by_first_vertex_whatever_the_face_order():
    # the torus's vertices come first, the cube's faces first: part 0 is the torus
    b_v, b_f = _torus(nu=24, nv=12)
    a_v, a_f = _cube(offset=(10.0, 0.0, 0.0))
    surf = _surface(np.concatenate([b_v, a_v]), np.concatenate([a_f + len(b_v), b_f]))
    topo = topology(surf)
    assert topo.euler_characteristics == (0, 2) and topo.face_counts == (len(b_f), 12)
    count, labels = component_labels(surf)
    assert count == 2 and labels[0] == 0 and labels[-1] == 1


def test_a_flipped_face_is_not_oriented():
    v, f = _cube()
    f = f.copy()
    f[3] = f[3, ::-1]
    topo = topology(_surface(v, f))
    assert topo.closed and not topo.oriented
    assert topology(_surface(*_cube())).oriented


def _reference_figures(vertices, faces):
    """Parts, V - E + F per part and closedness by the direct rule: rows of sorted vertex
    pairs made unique with np.unique(axis=0), parts from the face-vertex graph."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    nv = len(vertices)
    rows = np.concatenate([faces[:, 0], faces[:, 1], faces[:, 2]])
    cols = np.concatenate([faces[:, 1], faces[:, 2], faces[:, 0]])
    graph = coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(nv, nv))
    _, labels = connected_components(graph, directed=False)
    e = np.sort(np.concatenate([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]]), axis=1)
    edges, shared = np.unique(e, axis=0, return_counts=True)
    figures = []
    for part in np.unique(labels[faces[:, 0]]):
        in_part = labels[faces[:, 0]] == part
        v_count = len(np.unique(faces[in_part]))
        e_part = labels[edges[:, 0]] == part
        figures.append((v_count - int(e_part.sum()) + int(in_part.sum()),
                        bool(np.all(shared[e_part] == 2)), int(in_part.sum())))
    return sorted(figures)


@pytest.mark.parametrize("label", ["1s", "2pz", "3,2,0", "3,2,1", "3dz2", "3s", "4fxyz", "2s + 2pz"])
def test_topology_matches_the_direct_rule_and_trimesh(label):
    import trimesh

    from orbitalrender import extract_surface, parse_state
    from orbitalrender.mesh.bodies import face_components, submesh

    surf = extract_surface(parse_state(label), 0.8, resolution=40)
    topo = topology(surf)
    mine = sorted(zip(topo.euler_characteristics, [g is not None for g in topo.genus], topo.face_counts))
    assert mine == _reference_figures(surf.vertices_a0, surf.faces)
    mesh = trimesh.Trimesh(surf.vertices_a0, surf.faces, process=False)
    parts = face_components(mesh)
    assert sorted(int(submesh(mesh, p).euler_number) for p in parts) == sorted(topo.euler_characteristics)
    assert topo.closed and topo.oriented and mesh.is_watertight
    assert topo.volume_a0_3 == pytest.approx(float(mesh.volume), rel=1e-12)
    assert topo.area_a0_2 == pytest.approx(float(mesh.area), rel=1e-12)
