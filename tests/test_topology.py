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
                          "volume_a0_3", "area_a0_2", "closed", "regions"}
