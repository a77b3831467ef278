"""Tests of the bodies split by sign and by phase (orbitalrender.mesh.split), against the
Condon-Shortley closed forms of 2p_z and 2p m=+1."""

import math

import numpy as np
import pytest

from orbitalrender.lattice.sampler import sample
from orbitalrender.mesh.export import surface_mesh
from orbitalrender.mesh.split import phase_band_surfaces, split_by_sign
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import extract_surface


def test_sign_split_of_2pz_gives_two_lobes_pi_apart():
    surface = extract_surface(parse_state("2pz"), 0.9, resolution=56)
    bodies = split_by_sign(surface_mesh(surface), surface.psi, state=surface.state)
    assert set(bodies) == {"positive", "negative"}
    means = {}
    for name, body in bodies.items():
        assert body.is_watertight and body.body_count == 1
        means[name] = np.angle(np.mean(np.exp(1j * body.vertex_attributes["phase"].astype(float))))
        # psi has one sign on each lobe: every vertex's phase is the lobe's
        assert np.all(np.abs(np.exp(1j * body.vertex_attributes["phase"]) - np.exp(1j * means[name])) < 1e-3)
    difference = abs(np.angle(np.exp(1j * (means["positive"] - means["negative"]))))
    assert difference == pytest.approx(math.pi, abs=1e-3)
    # 2p_z is positive on +z (Condon-Shortley Y_1^0 ~ cos theta)
    assert bodies["positive"].centroid[2] > 0 > bodies["negative"].centroid[2]


def test_phase_bands_of_a_complex_ring():
    # 2p m=+1 with the Condon-Shortley phase: Y_1^1 = -sqrt(3 / 8 pi) sin(theta) e^{i phi}
    # (e.g. Griffiths, Introduction to Quantum Mechanics, table 4.3), so arg psi = phi + pi and
    # band k (arg psi near 2 pi k / K) is the wedge of the ring around phi = 2 pi k / K - pi.
    state = parse_state("2,1,1")
    deficits = []
    for resolution in (48, 64):
        lattice = sample(state, resolution)
        surface = extract_surface(lattice, 0.7)
        bands = phase_band_surfaces(lattice, surface.level, 4)
        assert len(bands) == 4
        total = 0.0
        for k, band in enumerate(bands):
            mesh = surface_mesh(band)
            assert mesh.is_watertight and mesh.volume > 0 and mesh.body_count == 1
            total += mesh.volume
            centre = np.mean(band.vertices_a0, axis=0)
            offset = math.atan2(centre[1], centre[0]) - (2 * math.pi * k / 4 - math.pi)
            assert abs(np.angle(np.exp(1j * offset))) < 0.05
            # every vertex of band k has its phase within the band (plus a lattice step of slack)
            spread = np.angle(band.psi * np.exp(-2j * math.pi * k / 4))
            assert np.all(np.abs(spread) <= math.pi / 4 + 0.15)
        ring = surface_mesh(surface).volume
        deficits.append(1 - total / ring)
    # the wedges fill the ring but for the edges that marching cubes rounds (about one spacing
    # along each cut): a few per cent, shrinking as the lattice is refined
    assert 0 <= deficits[1] < deficits[0] < 0.05
