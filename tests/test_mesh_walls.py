"""Wall and gap checks: rays cast against shapes of known thickness and gap measure them."""

from __future__ import annotations

import pytest
import trimesh

from orbitalrender import thin_spots


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
