"""Isosurfaces holding a fraction F: geometry, topology and vertex psi against outside references."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from scipy.optimize import brentq
from scipy.spatial import cKDTree
from scipy.special import sph_harm_y
from sympy.physics.hydrogen import R_nl

from orbitalrender.lattice.grid import Box, Lattice
from orbitalrender.lattice.sampler import sample
from orbitalrender.state.model import eigenstate, real_orbital
from orbitalrender.surface.extract import extract_surface, vertex_normals
from orbitalrender.surface.topology import split_components, topology

_r = sympy.symbols("r", positive=True)


def _radial_density(n: int, l: int, Z: float = 1.0):
    """R_nl(r)^2 from sympy.physics.hydrogen."""
    return sympy.lambdify(_r, R_nl(n, l, _r, Z) ** 2, "numpy")


def _psi_reference(n, l, m, xyz, Z=1.0):
    """psi_nlm from sympy's R_nl times scipy.special.sph_harm_y (Condon-Shortley)."""
    x, y, z = xyz.T
    r = np.sqrt(x * x + y * y + z * z)
    theta = np.arccos(np.clip(z / r, -1, 1))
    phi = np.arctan2(y, x)
    radial = sympy.lambdify(_r, R_nl(n, l, _r, Z), "numpy")(r)
    return radial * sph_harm_y(l, m, theta, phi)


def _one_s_radius(fraction: float) -> float:
    # 1s: P(r < R) = 1 - e^{-2R}(1 + 2R + 2R^2), R in a0 (e.g. Griffiths, Introduction to
    # Quantum Mechanics, problem 4.14)
    return brentq(lambda R: 1 - math.exp(-2 * R) * (1 + 2 * R + 2 * R * R) - fraction, 1e-6, 50)


@pytest.mark.parametrize("fraction", [0.25, 0.5, 0.9, 0.99])
def test_1s_surface_is_the_sphere_of_the_closed_form(fraction):
    surf = extract_surface(eigenstate(1, 0, 0), fraction, resolution=96)
    radius = np.linalg.norm(surf.vertices_a0, axis=1)
    expected = _one_s_radius(fraction)
    assert abs(radius.mean() / expected - 1) < 0.005
    assert np.max(np.abs(radius / expected - 1)) < 0.02
    topo = topology(surf)
    assert topo.components == 1 and topo.genus == (0,) and topo.closed
    # volume of the mesh against (4/3) pi R^3: a polyhedron with vertices on the sphere
    # falls short by about (edge / R)^2, the edges being about one lattice spacing
    tolerance = (surf.spacing_a0[0] / expected) ** 2
    assert topo.volume_a0_3 == pytest.approx(4 / 3 * math.pi * expected**3, rel=tolerance)
    assert topo.volume_a0_3 < 4 / 3 * math.pi * expected**3


def test_vertex_psi_is_exact_and_normals_point_outward():
    surf = extract_surface(eigenstate(3, 2, -1), 0.8, resolution=48)
    ref = _psi_reference(3, 2, -1, surf.vertices_a0)
    assert np.max(np.abs(surf.psi - ref)) <= 1e-10 * np.max(np.abs(ref))
    # every vertex lies near the level: |psi|^2 within the lattice interpolation error
    assert np.median(np.abs(np.abs(ref) ** 2 / surf.level - 1)) < 0.05
    assert np.allclose(np.linalg.norm(surf.normals, axis=1), 1.0)
    # the normals agree with the outward mesh normals (faces counter-clockwise from outside)
    agree = np.einsum("ij,ij->i", surf.normals, vertex_normals(surf.vertices_a0, surf.faces))
    assert np.mean(agree > 0) > 0.995 and np.mean(agree > 0.9) > 0.9


def test_2pz_two_lobes_related_by_inversion_with_opposite_phase():
    surf = extract_surface(real_orbital(2, 1, 0), 0.9)
    topo = topology(surf)
    assert topo.components == 2 and topo.genus == (0, 0) and topo.closed
    up, down = sorted(split_components(surf), key=lambda s: -s.vertices_a0[:, 2].mean())
    # parity: psi(-r) = (-1)^l psi(r) (Y_l^m parity, DLMF 14.30.4) -> the lobes map onto
    # each other under r -> -r, with phases pi apart
    dist, _ = cKDTree(-down.vertices_a0).query(up.vertices_a0)
    assert np.max(dist) < 0.5 * surf.spacing_a0[0]
    assert np.all(up.vertices_a0[:, 2] > 0) and np.all(down.vertices_a0[:, 2] < 0)
    gap = np.angle(np.mean(up.psi) / np.mean(down.psi))
    assert abs(abs(gap) - math.pi) < 1e-9
    assert np.all(np.abs(np.angle(up.psi)) < 1e-9)  # Y_1^0 > 0 on +z


@pytest.mark.parametrize("m", [1, -1])
def test_complex_2p_ring_winds_once_with_the_sign_of_m(m):
    surf = extract_surface(eigenstate(2, 1, m), 0.9)
    topo = topology(surf)
    assert topo.components == 1 and topo.genus == (1,) and topo.closed
    x, y = surf.vertices_a0[:, 0], surf.vertices_a0[:, 1]
    phi = np.arctan2(y, x)
    # Y_1^{+-1} = -+ sqrt(3/8pi) sin(theta) e^{+-i phi} (Condon-Shortley): arg psi - m phi
    # is the same constant at every vertex, so the phase advances by 2 pi m around the ring
    offset = np.angle(surf.psi * np.exp(-1j * m * phi))
    spread = np.angle(np.exp(1j * (offset - offset[0])))
    assert np.max(np.abs(spread)) < 1e-9
    ring = np.abs(surf.vertices_a0[:, 2]) < 0.5
    order = np.argsort(phi[ring])
    winding = np.sum(np.angle(np.exp(1j * np.diff(np.angle(surf.psi[ring][order]))))) / (2 * math.pi)
    assert round(winding) == m


def test_3dz2_two_lobes_and_a_ring():
    surf = extract_surface(real_orbital(3, 2, 0), 0.9)
    topo = topology(surf)
    # Y_2^0 ~ 3cos^2(theta) - 1 has nodal cones at cos^2(theta) = 1/3 (DLMF 14.5.? /
    # any table of spherical harmonics): two lobes (sphere-like) and a torus around z
    assert topo.components == 3 and topo.closed
    assert sorted(topo.genus) == [0, 0, 1]
    assert sum(topo.euler_characteristics) == 4


def _lobe_maxima(n: int, l: int) -> list[float]:
    """Largest R_nl^2 in each radial lobe (between consecutive nodes), from sympy."""
    radial = sympy.lambdify(_r, R_nl(n, l, _r, 1), "numpy")
    r = np.linspace(1e-9, 6 * n * n + 30, 400_001)
    v = radial(r)
    cuts = np.flatnonzero(np.sign(v[1:]) != np.sign(v[:-1])) + 1
    return [float(np.max(seg**2)) for seg in np.split(v, cuts)]


@pytest.mark.parametrize("n,fraction", [(2, 0.01), (2, 0.5), (2, 0.99), (3, 0.01), (3, 0.3),
                                        (3, 0.9), (3, 0.99)])
def test_ns_nested_shells(n, fraction):
    # ns has n - 1 spherical nodes (zeros of L_{n-1}^1): the set {|psi|^2 >= t} is one ball
    # plus one shell for every outer radial lobe whose peak density exceeds t; a ball has
    # one boundary sphere, a shell two.  The count expected at the level is worked out
    # from sympy's R_nl, the count found from the mesh.
    surf = extract_surface(eigenstate(n, 0, 0), fraction)
    peaks = np.array(_lobe_maxima(n, 0)) / (4 * math.pi)  # |Y_0^0|^2 = 1/(4 pi)
    lobes = int(np.count_nonzero(peaks >= surf.level))
    expected = 1 + 2 * (lobes - 1) if peaks[0] >= surf.level else 2 * lobes
    topo = topology(surf)
    assert topo.closed
    assert topo.components == expected
    assert topo.regions == lobes
    assert all(g == 0 for g in topo.genus)
    if fraction >= 0.9:  # high F: every lobe is present
        assert lobes == n


def test_3s_at_F09_has_three_nested_parts():
    # 3s nodes at r = (9 +- 3 sqrt 3)/2 a0 = 1.90, 7.10 a0 (roots of 27 - 18r + 2r^2,
    # R_30 from any table of hydrogen radial functions); at F = 0.9 the level lies below
    # the peaks of all three lobes: a ball and two shells, five boundary spheres.
    surf = extract_surface(eigenstate(3, 0, 0), 0.9)
    topo = topology(surf)
    assert (topo.components, topo.regions) == (5, 3)
    radii = [np.linalg.norm(p.vertices_a0, axis=1) for p in split_components(surf)]
    nodes = sorted([(9 - 3 * math.sqrt(3)) / 2, (9 + 3 * math.sqrt(3)) / 2])
    # every boundary sphere lies within one lobe: none straddles a node
    for r in radii:
        assert sum(1 for a in nodes if r.min() < a < r.max()) == 0


def test_enclosed_volume_converges_with_resolution():
    # 1s ball: (4/3) pi R^3 with R from the closed form above
    exact = 4 / 3 * math.pi * _one_s_radius(0.8) ** 3
    errors = [abs(topology(extract_surface(eigenstate(1, 0, 0), 0.8, resolution=n)).volume_a0_3 - exact)
              for n in (24, 48, 96)]
    assert errors[2] < errors[1] < errors[0]
    assert errors[2] / exact < 0.005
    # 2p_z lobes: no closed form; successive differences shrink (Cauchy)
    vols = [topology(extract_surface(real_orbital(2, 1, 0), 0.8, resolution=n)).volume_a0_3
            for n in (32, 64, 128)]
    assert abs(vols[2] - vols[1]) < abs(vols[1] - vols[0])


def test_Z2_surface_is_the_Z1_surface_scaled_by_one_half():
    # hydrogen-like scaling: psi_Z(r) = Z^{3/2} psi_1(Z r) (Bethe & Salpeter, section 3)
    one = extract_surface(real_orbital(3, 2, 1), 0.7, resolution=64)
    two = extract_surface(real_orbital(3, 2, 1, Z=2.0), 0.7, resolution=64)
    assert two.level == pytest.approx(8 * one.level, rel=1e-6)
    dist, _ = cKDTree(one.vertices_a0).query(2 * two.vertices_a0)
    assert np.max(dist) < 1e-3 * one.spacing_a0[0]
    assert topology(two).components == topology(one).components == 4


def test_user_field_surface_interpolates_psi():
    state = real_orbital(3, 2, 0)
    lat = sample(state, resolution=64)
    user = Lattice(lat.values, lat.origin_a0, lat.spacing_a0, None)
    surf = extract_surface(user, 0.9)
    assert surf.state is None and surf.fraction_error is not None
    assert topology(surf).components == 3
    exact = state.psi(*surf.vertices_a0.T)
    assert np.median(np.abs(surf.psi - exact)) < 0.05 * np.sqrt(surf.level)


def test_general_complex_state_uses_magnitude_and_stays_closed():
    # |2p, +1> + |2p, 0>: complex with mixed m, nodes are lines only
    from orbitalrender.state.model import superpose
    state = superpose([(1, eigenstate(2, 1, 1)), (1, eigenstate(2, 1, 0))])
    surf = extract_surface(state, 0.8, resolution=64)
    topo = topology(surf)
    assert topo.closed and topo.components >= 1
    assert np.allclose(surf.psi, state.psi(*surf.vertices_a0.T))


@pytest.mark.parametrize("fraction", [0.0, 1.0, 2.0, -1.0])
def test_fraction_outside_open_interval_is_refused(fraction):
    with pytest.raises(ValueError, match="fraction"):
        extract_surface(eigenstate(1, 0, 0), fraction, resolution=16)


def test_surface_cut_by_the_box_is_refused():
    state = eigenstate(2, 1, 0)
    small = sample(state, resolution=24, box=Box((0, 0, 0), 2.0))
    with pytest.raises(ValueError, match="edge"):
        extract_surface(Lattice(small.values, small.origin_a0, small.spacing_a0, None), 0.5)
    with pytest.raises(ValueError, match="edge"):
        extract_surface(state, 0.9, resolution=24, box=Box((0, 0, 0), 2.0))


def test_empty_surface_is_refused():
    # F = 1e-6 of 1s is a ball of radius ~0.01 a0, far inside the nearest points of a
    # lattice over the default box (spacing ~0.9 a0)
    with pytest.raises(ValueError, match="empty"):
        extract_surface(sample(eigenstate(1, 0, 0), resolution=16), 1e-6)


def test_default_cube_fits_the_surface_so_small_fractions_resolve():
    # the cube is chosen for F: the 1e-3 ball (radius 0.16 a0, closed form above) gets the
    # whole lattice
    surf = extract_surface(eigenstate(1, 0, 0), 1e-3, resolution=32)
    radius = np.linalg.norm(surf.vertices_a0, axis=1)
    assert abs(radius.mean() / _one_s_radius(1e-3) - 1) < 0.01
    assert topology(surf).closed


def test_box_with_a_lattice_is_refused():
    lat = sample(eigenstate(1, 0, 0), resolution=16)
    with pytest.raises(ValueError, match="box"):
        extract_surface(lat, 0.5, box=Box((0, 0, 0), 3.0))


def test_describe_command_reports_the_surface(capsys):
    import json

    from orbitalrender.cli import main

    assert main(["describe", "3dz2", "--fraction", "0.9", "--resolution", "64", "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    # same expectations as test_3dz2_two_lobes_and_a_ring, through the command line
    assert report["components"] == 3 and sum(report["euler_characteristics"]) == 4
    assert sorted(report["genus"]) == [0, 0, 1] and report["closed"] is True
    assert report["volume_a0_3"] == pytest.approx(sum(report["volumes_a0_3"]))
    assert report["fraction_enclosed"] == pytest.approx(0.9, abs=1e-9)
    assert main(["describe", "2pz", "--fraction", "1.5"]) == 2
    assert main(["describe", "2pz", "--fraction", "0.9", "--box", "2"]) == 2
