"""Tests of the one global-phase rule (orbitalrender.state.phase) and of the outputs that apply it.

Outside reference: sympy.physics.hydrogen.Psi_nlm, the closed-form hydrogen wavefunctions
with the Condon-Shortley phase, gives the sign of psi on each lobe; the real orbitals are
built from it as the usual real combinations (from memory, as in any quantum chemistry
text: p_z = psi_210, p_x = (psi_21-1 - psi_211) / sqrt 2, f_z3 = psi_430).  The figure
(its render), the mesh vertex colours, the section and the sign split must all show that
sign, after the documented rotation theta in (-pi/2, pi/2] of the coefficient.
"""

import cmath
import math

import numpy as np
import pytest
from sympy import lambdify, sqrt, symbols
from sympy.physics.hydrogen import Psi_nlm

from orbitalrender.mesh.export import surface_mesh
from orbitalrender.mesh.split import split_by_sign
from orbitalrender.picture.camera import Camera
from orbitalrender.picture.nodal import section_lines
from orbitalrender.picture.plane import plane
from orbitalrender.picture.scene import render_surfaces
from orbitalrender.picture.section import cross_section
from orbitalrender.picture.section_figure import section_figure
from orbitalrender.state.model import eigenstate
from orbitalrender.state.notation import parse_state
from orbitalrender.state.phase import (
    REAL_TOLERANCE,
    is_real,
    nearest_real_rotation,
    real_rotation,
    sign_rotation,
    state_rotation,
)
from orbitalrender.surface.extract import extract_surface

SIDE = Camera(azimuth_deg=0.0, elevation_deg=0.0)  # from +x toward the origin: right = +y, up = +z

_r, _phi, _theta = symbols("r phi theta", positive=True)
_CLOSED = {
    "2pz": Psi_nlm(2, 1, 0, _r, _phi, _theta),
    "2px": (Psi_nlm(2, 1, -1, _r, _phi, _theta) - Psi_nlm(2, 1, 1, _r, _phi, _theta)) / sqrt(2),
    "4fz3": Psi_nlm(4, 3, 0, _r, _phi, _theta),
}
_CLOSED_FN = {k: lambdify((_r, _phi, _theta), v, "numpy") for k, v in _CLOSED.items()}


def _closed_psi(terms, points):
    """sum_k c_k f_k at Cartesian points (P, 3), from the sympy closed forms."""
    x, y, z = points.T
    r = np.sqrt(x * x + y * y + z * z)
    theta, phi = np.arccos(z / r), np.arctan2(y, x)
    return sum(c * np.asarray(_CLOSED_FN[name](r, phi, theta), dtype=complex) for c, name in terms)


def _convention(c: complex) -> complex:
    """The documented rotation of a coefficient c: e^{i theta}, theta = arg c moved into (-pi/2, pi/2]."""
    theta = cmath.phase(c)
    while theta > math.pi / 2:
        theta -= math.pi
    while theta <= -math.pi / 2:
        theta += math.pi
    return cmath.exp(1j * theta)


def _tones(rgb) -> set[int]:
    """The tones of colours (..., 3): +1 for the warm (positive) one, -1 for the blue (negative)
    one.  The sign map's two tones differ in the order of red and blue, which shading (a
    factor in linear light) and mixing with white keep."""
    rgb = np.asarray(rgb, dtype=float).reshape(-1, 3)
    return set(np.sign(rgb[:, 0] - rgb[:, 2]).astype(int).tolist())


# STATE text, its terms as (coefficient, closed form), and a lobe direction in the xz plane
CASES = [
    ("2pz", [(1, "2pz")], (0.0, 0.0, 1.0)),
    ("-1*2pz", [(-1, "2pz")], (0.0, 0.0, 1.0)),
    ("i*2pz", [(1j, "2pz")], (0.0, 0.0, 1.0)),
    ("-i*2pz", [(-1j, "2pz")], (0.0, 0.0, 1.0)),
    ("(0.6+0.8i)*2pz", [(0.6 + 0.8j, "2pz")], (0.0, 0.0, 1.0)),
    ("4fz3", [(1, "4fz3")], (0.0, 0.0, 1.0)),
    ("-1*4fz3", [(-1, "4fz3")], (0.0, 0.0, 1.0)),
    ("2pz - 2px", [(1, "2pz"), (-1, "2px")], (-math.sqrt(0.5), 0.0, math.sqrt(0.5))),
]


@pytest.mark.parametrize("text,terms,direction", CASES, ids=[c[0] for c in CASES])
def test_every_output_shows_the_closed_form_sign_on_each_lobe(text, terms, direction):
    state = parse_state(text)
    surface = extract_surface(state, 0.9, resolution=40)
    render = render_surfaces(surface, 96, 96, camera=SIDE, phase_map="sign", supersample=1)
    mesh = surface_mesh(surface, 1.0, "sign")
    bodies = split_by_sign(mesh, surface.psi, state=state)
    section = cross_section(state, plane("xz"), pixels=64, fraction=None)
    image = section_figure(section, section_lines(section), scheme="sign").axes[0].images[0].get_array()
    # one global phase: the coefficients' common phase (all terms of a case share it)
    rotation = _convention(complex(terms[0][0]))
    for d in (np.array(direction), -np.array(direction)):
        # a cap of the lobe along d: the vertices farthest along d
        reach = surface.vertices_a0 @ d
        cap = np.flatnonzero(reach >= reach.max() - 0.15 * (reach.max() - reach.min()))
        points = surface.vertices_a0[cap]
        closed = _closed_psi(terms, points) * np.conj(rotation)
        assert np.allclose(closed.imag, 0, atol=1e-12)
        expected = int(np.sign(closed.real[0]))
        assert np.all(np.sign(closed.real) == expected)
        # the render: the pixel of the cap's middle (orthographic, target at the image centre)
        middle = points.mean(axis=0)
        rel = middle - np.array(render.camera.target_a0)
        row = int(48 - render.px_per_a0 * rel[2])
        col = int(48 + render.px_per_a0 * rel[1])
        assert _tones(render.rgba[row, col, :3]) == {expected}, "render"
        # the mesh's vertex colours on the cap
        assert _tones(mesh.visual.vertex_colors[cap, :3]) == {expected}, "mesh"
        # the sign split: the cap lies in the body of its sign
        body = bodies["positive" if expected > 0 else "negative"]
        assert np.isin(points.view([("", float)] * 3), body.vertices.view([("", float)] * 3)).all()
        # the section through the lobe's middle (xz plane: u = x, v = z)
        i = int(np.argmin(np.abs(section.u_a0 - (middle[0] - section.centre_a0[0]))))
        j = int(np.argmin(np.abs(section.v_a0 - (middle[2] - section.centre_a0[2]))))
        assert _tones(np.asarray(image)[j, i]) == {expected}, "section"


def test_the_rotation_follows_the_convention():
    f = np.array([0.3, -1.2, 0.7, -0.05])
    for c, u in [(1, 1), (-1, 1), (1j, 1j), (-1j, 1j), (0.6 + 0.8j, 0.6 + 0.8j), (-0.6 - 0.8j, 0.6 + 0.8j),
                 (cmath.exp(-1.2j), cmath.exp(-1.2j))]:
        got = real_rotation(c * f)
        assert got is not None and abs(got - u) < 1e-12, (c, got)
    # a real field keeps its sign exactly (u = 1, no rounding), as does one that is all zero
    assert real_rotation(-f) == 1 and real_rotation(np.zeros(3)) == 1


def test_the_tolerance_admits_complex64_round_off_and_nothing_visible():
    rng = np.random.default_rng(7)
    f = rng.normal(size=4096)
    stored = (f * np.exp(0.4j)).astype(np.complex64)  # round-off about 6e-8 of the values
    assert abs(cmath.phase(real_rotation(stored)) - 0.4) < 1e-6
    assert real_rotation(f + 1j * 10 * REAL_TOLERANCE * np.abs(f).max() * rng.normal(size=4096)) is None
    # a ring e^{i phi}: no angle makes it real
    ring = np.exp(1j * np.linspace(0, 2 * np.pi, 64, endpoint=False))
    assert real_rotation(ring) is None
    # whatever the field, the nearest rotation lies in (-pi/2, pi/2] and maximises sum Re^2
    field = rng.normal(size=64) + 0.3j * rng.normal(size=64)
    u = nearest_real_rotation(field)
    angles = np.linspace(-np.pi / 2, np.pi / 2, 2001)[1:]
    best = angles[np.argmax([np.sum((field * np.exp(-1j * a)).real ** 2) for a in angles])]
    assert -np.pi / 2 < cmath.phase(u) <= np.pi / 2 and abs(cmath.phase(u) - best) < 2e-3


def test_states():
    assert state_rotation(parse_state("-1*3dz2")) == 1       # keeps its minus sign
    assert state_rotation(parse_state("i*2pz")) == 1j
    assert is_real(parse_state("1s + 2pz")) and not is_real(parse_state("1s + 2pz").at_time(1.0))
    assert not is_real(eigenstate(2, 1, 1)) and is_real(eigenstate(2, 1, 0))


def test_every_sign_output_refuses_a_complex_state():
    state = eigenstate(2, 1, 1)
    surface = extract_surface(state, 0.9, resolution=32)
    with pytest.raises(ValueError, match="sign map needs psi real") as err:
        render_surfaces(surface, 48, 48, phase_map="sign", supersample=1)
    assert "\n" not in str(err.value)
    with pytest.raises(ValueError, match="sign map needs psi real"):
        surface_mesh(surface, 1.0, "sign")
    with pytest.raises(ValueError, match="sign split needs psi real"):
        split_by_sign(surface_mesh(surface), surface.psi, state=state)
    # also on a plane where this psi happens to be real up to a phase (xz contains the axis)
    section = cross_section(state, plane("xz"), pixels=32, fraction=None)
    assert section.signed is not None
    with pytest.raises(ValueError, match="sign map needs psi real"):
        section_figure(section, section_lines(section), scheme="sign")
    with pytest.raises(ValueError, match="the field is complex"):
        sign_rotation(None, surface.psi)


@pytest.mark.parametrize("command,extra", [("figure", ["--size", "200x160", "--resolution", "24"]),
                                           ("section", ["--pixels", "32"]),
                                           ("mesh", ["--fraction", "0.9", "--resolution", "24"])])
def test_commands_refuse_the_sign_map_of_a_complex_state_in_one_line(tmp_path, capsys, command, extra):
    from orbitalrender.cli import main

    out = tmp_path / ("x.ply" if command == "mesh" else "x.png")
    status = main([command, "2,1,1", "--phase-map", "sign", *extra, "--out", str(out)])
    err = capsys.readouterr().err
    assert status == 2 and "sign" in err and "real" in err and err.count("\n") == 1
    assert not out.exists()
