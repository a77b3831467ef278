"""Tests of cross-sections (picture.section, .nodal, .density, .section_figure) against closed
forms and sympy."""

import math
import re
import zlib

import numpy as np
import pytest
from PIL import Image
from scipy.optimize import brentq
from skimage.color import rgb2lab
from sympy import lambdify, symbols
from sympy.physics.hydrogen import Psi_nlm

from orbitalrender.colormap import phase_to_rgb
from orbitalrender.lattice.grid import Lattice
from orbitalrender.lattice.sampler import sample
from orbitalrender.picture.density import density_weight, shade
from orbitalrender.picture.nodal import level_contour, nodal_lines, section_lines
from orbitalrender.picture.output import save_figure
from orbitalrender.picture.plane import plane
from orbitalrender.picture.section import cross_section
from orbitalrender.picture.section_figure import draw_section, section_figure
from orbitalrender.state.model import eigenstate, real_orbital, superpose
from orbitalrender.state.units import a0_to


def _all_vertices(lines):
    assert lines, "no lines found"
    return np.concatenate(lines)


def test_2pz_in_xz_has_its_node_along_z_equals_0():
    # 2p_z: psi = z e^{-r/2} / (4 sqrt(2 pi)) (closed form, e.g. Bethe & Salpeter, Quantum
    # Mechanics of One- and Two-Electron Atoms, sec. 3): psi = 0 exactly on the plane z = 0,
    # which the xz section cuts along the line z = 0 and nowhere else.
    s = cross_section(real_orbital(2, 1, 0), plane("xz"), half_width_a0=10.0, pixels=128, fraction=None)
    assert s.signed is not None
    v = _all_vertices(nodal_lines(s))
    np.testing.assert_allclose(v[:, 1], 0.0, atol=1e-9)
    assert v[:, 0].min() < -9.8 and v[:, 0].max() > 9.8  # across the whole window


def test_3dz2_nodes_are_the_cones_of_the_magic_angle():
    # 3d_z2 ~ (3 cos^2 theta - 1) r^2 e^{-r/3} (closed form; Bethe & Salpeter, sec. 3): nodal
    # cones at cos theta = +-1/sqrt(3), theta = 54.7356 deg; no radial node (n - l - 1 = 0).
    s = cross_section(real_orbital(3, 2, 0), plane("xz"), half_width_a0=20.0, pixels=200, fraction=None)
    v = _all_vertices(nodal_lines(s))
    r = np.hypot(v[:, 0], v[:, 1])
    far = r > 20 * s.pixel_a0  # the lines cross at the nucleus, where the angle is undefined
    cos_theta = np.abs(v[far, 1]) / r[far]
    np.testing.assert_allclose(cos_theta, 1 / math.sqrt(3), atol=2e-3)
    # all four half-lines are there
    quadrants = {(bool(a > 0), bool(b > 0)) for a, b in v[far]}
    assert len(quadrants) == 4


def test_2s_section_has_a_nodal_circle_at_2_a0():
    # R_20 ~ (2 - r) e^{-r/2} (closed form, r in a0): one radial node, the sphere r = 2 a0.
    for spec in ("xy", (1.0, -2.0, 0.5)):
        s = cross_section(eigenstate(2, 0, 0), plane(spec), half_width_a0=5.0, pixels=160, fraction=None)
        v = _all_vertices(nodal_lines(s))
        np.testing.assert_allclose(np.hypot(v[:, 0], v[:, 1]), 2.0, atol=2e-3)
        angles = np.sort(np.arctan2(v[:, 1], v[:, 0]))
        assert np.max(np.diff(np.concatenate([angles, angles[:1] + 2 * np.pi]))) < 0.1  # closed


def _one_s_radius(fraction):
    # P(r < x) = 1 - e^{-2x}(1 + 2x + 2x^2) for 1s (closed form, x in a0)
    return brentq(lambda x: 1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - fraction, 1e-6, 50.0,
                  xtol=1e-14)


@pytest.mark.parametrize("spec, fraction", [("xy", 0.9), ("yz", 0.5), ((0.3, -1.0, 2.0), 0.95)])
def test_1s_enclosing_contour_is_the_closed_form_circle(spec, fraction):
    # The F surface of 1s is the sphere of radius x with 1 - e^{-2x}(1+2x+2x^2) = F, so its
    # cut by any plane through the nucleus is a circle of that radius.
    x = _one_s_radius(fraction)
    s = cross_section(eigenstate(1, 0, 0), plane(spec), half_width_a0=1.3 * x, pixels=200, fraction=fraction)
    v = _all_vertices(level_contour(s))
    np.testing.assert_allclose(np.hypot(v[:, 0], v[:, 1]), x, rtol=2e-4)


def test_complex_m1_hue_winds_once_in_xy():
    # sympy.physics.hydrogen.Psi_nlm(2, 1, 1) = -r e^{-r/2} e^{i phi} sin(theta) / (8 sqrt(pi))
    # (Condon-Shortley phase): on the xy plane arg psi = phi + pi, so the hue winds once,
    # counter-clockwise, around the nucleus.
    r_, ph_, th_ = symbols("r phi theta", positive=True)
    psi_ref = lambdify((r_, ph_, th_), Psi_nlm(2, 1, 1, r_, ph_, th_), "numpy")
    s = cross_section(eigenstate(2, 1, 1), plane("xy"), half_width_a0=8.0, pixels=128, fraction=None)
    u, v = np.meshgrid(s.u_a0, s.v_a0)
    rr, phi = np.hypot(u, v), np.arctan2(v, u)
    reference = psi_ref(rr, phi, np.full_like(rr, np.pi / 2))
    np.testing.assert_allclose(s.psi, reference, atol=1e-12)
    import matplotlib.figure
    ax = matplotlib.figure.Figure().add_subplot()
    draw_section(ax, s, section_lines(s), scheme="uniform", scale="linear")
    image = np.asarray(ax.images[0].get_array())[..., :3]
    expected = shade(phase_to_rgb(phi + np.pi, "uniform"), density_weight(np.abs(reference) ** 2))
    np.testing.assert_allclose(image, expected, atol=1e-9)
    # walk a circle of radius 2 a0 (the maximum of r^2 R_21^2 ... of |psi| in the plane):
    # the CIELAB hue of the pixels turns by +2 pi exactly once
    t = np.linspace(0, 2 * np.pi, 73)[:-1]
    h = s.pixel_a0
    cols = np.round((2.0 * np.cos(t) - s.u_a0[0]) / h).astype(int)
    rows = np.round((2.0 * np.sin(t) - s.v_a0[0]) / h).astype(int)
    lab = rgb2lab(image[rows, cols][None])[0]
    hue = np.unwrap(np.arctan2(lab[:, 2], lab[:, 1]))
    turns = (hue[-1] - hue[0] + (hue[1] - hue[0])) / (2 * np.pi)
    assert round(turns) == 1 and abs(turns - 1) < 0.1
    assert np.all(np.diff(hue) > 0)
    # the phase of psi itself winds once as well
    phase = np.unwrap(np.angle(s.psi[rows, cols]))
    assert round((phase[-1] - phase[0] + (phase[1] - phase[0])) / (2 * np.pi)) == 1


def test_complex_section_node_is_the_radial_circle():
    # sympy: Psi_nlm(3, 1, 1) = r (r - 6) e^{i phi - r/3} sin(theta) / (81 sqrt(pi)): on the xy
    # plane psi is genuinely complex, vanishing on the circle r = 6 a0 (and at the nucleus, a
    # point).  Only the circle may be drawn: none of the zero lines of Re or Im alone.
    s = cross_section(eigenstate(3, 1, 1), plane("xy"), half_width_a0=10.0, pixels=200, fraction=None)
    assert s.signed is None
    v = _all_vertices(nodal_lines(s))
    np.testing.assert_allclose(np.hypot(v[:, 0], v[:, 1]), 6.0, atol=5e-3)
    angles = np.sort(np.arctan2(v[:, 1], v[:, 0]))
    assert np.max(np.diff(np.concatenate([angles, angles[:1] + 2 * np.pi]))) < 2.5 * s.pixel_a0 / 6.0


def test_near_nodes_of_a_complex_superposition_are_not_drawn():
    # (1s + 2p_z)/sqrt 2 at t = 10 au: psi = a psi_100 + b e^{-i (E_2 - E_1) t} psi_210 with a
    # relative phase that is not real, so psi = 0 needs psi_100 = 0 -- never (psi_100 > 0, closed
    # form e^{-r}/sqrt(pi)).  Far out along z = 0 the 1s term is tiny and |psi| nearly vanishes on
    # a line; that near-node must not be drawn.
    s = cross_section(superpose([(1, eigenstate(1, 0, 0)), (1, eigenstate(2, 1, 0))], time_au=10.0),
                      plane("xz"), half_width_a0=13.0, pixels=200, fraction=None)
    assert s.signed is None
    assert nodal_lines(s) == []


def test_eigenstate_on_a_plane_through_z_is_signed():
    # |n l m> = R P_l^m(cos theta) e^{i m phi}: on the xz plane e^{i m phi} = +-1, so psi is real
    # up to one global phase there and the nodes of 3,2,1 (cos theta sin theta = 0) are the x
    # and z axes (closed form of P_2^1 ~ cos theta sin theta).
    s = cross_section(eigenstate(3, 2, 1), plane("xz"), half_width_a0=15.0, pixels=150, fraction=None)
    assert s.signed is not None
    v = _all_vertices(nodal_lines(s))
    on_axis = np.minimum(np.abs(v[:, 0]), np.abs(v[:, 1]))
    np.testing.assert_allclose(on_axis, 0.0, atol=1e-9)


def test_user_lattice_is_interpolated():
    # A user field (state=None) of 2p_z: trilinear interpolation keeps the node on z = 0 and
    # stays within the interpolation error of the exact psi.
    lat = sample(real_orbital(2, 1, 0), resolution=96, dtype=np.complex128)
    user = Lattice(lat.values, lat.origin_a0, lat.spacing_a0, None)
    s = cross_section(user, plane("xz", 0.37), half_width_a0=12.0, pixels=96, fraction=None)
    assert not s.exact
    exact = cross_section(real_orbital(2, 1, 0), plane("xz", 0.37), half_width_a0=12.0, pixels=96,
                          fraction=None)
    peak = np.nanmax(np.abs(exact.psi))
    # linear interpolation error ~ h^2 |psi''| / 8 with h = 0.42 a0 here: a few per cent of the peak
    assert np.nanmax(np.abs(s.psi - exact.psi)) < 0.04 * peak
    v = _all_vertices(nodal_lines(s))
    np.testing.assert_allclose(v[:, 1], 0.0, atol=1e-9)
    with pytest.raises(ValueError, match="misses the lattice"):
        cross_section(user, plane("xy", 1e3), pixels=32, fraction=None)


def test_window_beyond_a_user_lattice_is_blank():
    lat = sample(real_orbital(2, 1, 0), resolution=24, dtype=np.complex128)
    user = Lattice(lat.values, lat.origin_a0, lat.spacing_a0, None)
    s = cross_section(user, plane("xy", 1.0), half_width_a0=4.0 * lat.extent_a0()[0][1], pixels=64,
                      fraction=None)
    assert np.isnan(s.psi[0, 0]) and np.isfinite(s.psi[32, 32])
    section_figure(s, section_lines(s))  # draws without complaint


def test_plane_that_misses_the_state_is_an_error():
    with pytest.raises(ValueError, match="misses"):
        cross_section(eigenstate(1, 0, 0), plane("xy", 500.0), pixels=32, fraction=None)
    with pytest.raises(ValueError, match="pixels"):
        cross_section(eigenstate(1, 0, 0), plane("xy"), pixels=8, fraction=None)
    with pytest.raises(ValueError, match="unknown plane"):
        plane("xw")
    with pytest.raises(ValueError, match="zero vector"):
        plane((0, 0, 0))


def test_nodal_plane_is_reported_not_drawn():
    # 2p_z vanishes on the whole xy plane (closed form psi ~ z)
    s = cross_section(real_orbital(2, 1, 0), plane("xy"), half_width_a0=8.0, pixels=32, fraction=None)
    assert s.is_nodal_plane and nodal_lines(s) == []
    fig = section_figure(s, section_lines(s))
    assert any("nodal plane" in t.get_text() for t in fig.axes[0].texts)


def test_sign_map_needs_a_real_section():
    s = cross_section(eigenstate(2, 1, 1), plane("xy"), half_width_a0=8.0, pixels=32, fraction=None)
    with pytest.raises(ValueError, match="sign map"):
        section_figure(s, section_lines(s), scheme="sign")
    # a real orbital keeps its conventional sign: 3d_z2 positive along z (3 cos^2 0 - 1 = 2)
    s = cross_section(real_orbital(3, 2, 0), plane((1, 1, 1)), half_width_a0=12.0, pixels=32, fraction=None)
    assert s.rotation == 1
    j = int(np.argmax(s.v_a0 > 5.0))
    assert s.signed[j, 16] > 0


def test_log_weight_states_its_range():
    rho = np.array([2.0, 2e-1, 2e-2, 2e-3, 2e-4, 0.0])
    np.testing.assert_allclose(density_weight(rho, scale="log", decades=3.0), [1, 2 / 3, 1 / 3, 0, 0, 0],
                               atol=1e-12)
    np.testing.assert_allclose(density_weight(rho, scale="linear"), rho / 2.0)


def test_axes_in_angstrom(tmp_path):
    # 1 a0 = 0.529177... angstrom (CODATA Bohr radius via scipy.constants)
    s = cross_section(eigenstate(1, 0, 0), plane("xz"), half_width_a0=4.0, pixels=32, fraction=None)
    fig = section_figure(s, section_lines(s), units="angstrom")
    ax = fig.axes[0]
    assert ax.get_xlim()[1] == pytest.approx(4.0 * a0_to("angstrom"))
    assert "Å" in ax.get_xlabel()


def test_svg_and_pdf_keep_the_lines_as_vectors(tmp_path):
    s = cross_section(eigenstate(2, 0, 0), plane("xz"), half_width_a0=8.0, pixels=64, fraction=0.9)
    fig = section_figure(s, section_lines(s))
    svg = save_figure(fig, tmp_path / "s.svg", {"state": "2s"}).read_text()
    for gid in ("enclosing-contour", "nodal-lines"):
        group = re.search(rf'<g id="{gid}">(.*?)</g>', svg, re.S)
        assert group and group.group(1).count("<path") >= 1
    assert svg.count("<image") >= 1  # the density is a raster image
    pdf = save_figure(fig, tmp_path / "s.pdf", {"state": "2s"}).read_bytes()
    assert b"/Subtype /Image" in pdf
    # page content (Flate streams, ISO 32000-1 sec. 7.4.4): the circles are stroked polylines,
    # hundreds of "l" (line-to) operators, not pixels
    content = b"".join(zlib.decompressobj().decompress(m.group(1)) for m in
                       re.finditer(rb"stream\r?\n(.*?)\r?\nendstream", pdf, re.S) if m.group(1)[:1] == b"x")
    assert len(re.findall(rb" l\n", content)) > 200 and b"\nS\n" in content


def test_same_inputs_same_picture(tmp_path):
    def draw(name):
        s = cross_section(eigenstate(3, 2, 1), plane("xz"), half_width_a0=15.0, pixels=64, fraction=0.9)
        fig = section_figure(s, section_lines(s), scale="log")
        return save_figure(fig, tmp_path / name, {"state": "3,2,1"}, dpi=50)
    assert draw("a.png").read_bytes() == draw("b.png").read_bytes()


def test_figure_looks_sane(tmp_path):
    # every part drawn, nothing blank: the section is mostly white with coloured lobes
    s = cross_section(real_orbital(3, 2, 0), plane("xz"), pixels=96, fraction=0.9)
    fig = section_figure(s, section_lines(s), scale="log")
    out = save_figure(fig, tmp_path / "s.png", {"state": "3dz2"}, dpi=60)
    with Image.open(out) as im:
        rgb = np.asarray(im.convert("RGB"), dtype=float) / 255
    assert 0.3 < np.mean(np.all(rgb > 0.97, axis=-1)) < 0.95
