"""Tests of the shaded 3D render (orbitalrender.picture.scene), checked on pixels.

Outside references: the closed form of the 1s enclosed probability, the sign and
phase of psi_nlm from the closed forms / scipy.special, pinhole-camera geometry,
and CIELAB hue angles computed by scikit-image (CIE 15:2004).
"""

import hashlib
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import sph_harm_y
from skimage.color import rgb2lab

from orbitalrender.colormap import phase_to_rgb
from orbitalrender.picture.axis import nodal_axis_centre
from orbitalrender.picture.camera import Camera, frame_camera
from orbitalrender.picture.cutaway import parse_cutaway
from orbitalrender.picture.scene import render_bytes, render_path, render_surfaces
from orbitalrender.state.model import eigenstate, real_orbital
from orbitalrender.surface.extract import extract_surface

SIDE = Camera(azimuth_deg=0.0, elevation_deg=0.0)   # looking from +x toward the origin, z up
TOP = Camera(azimuth_deg=0.0, elevation_deg=90.0)   # looking down from +z


def _radius_1s(fraction):
    # P(r < x) = 1 - exp(-2x)(1 + 2x + 2x^2) for 1s in units of a0 (integral of 4 r^2 e^{-2r};
    # e.g. Griffiths, Introduction to Quantum Mechanics, problem on the hydrogen ground state)
    return brentq(lambda x: 1 - math.exp(-2 * x) * (1 + 2 * x + 2 * x * x) - fraction, 0.01, 20)


def _hue_deg(rgb):
    lab = rgb2lab(np.asarray(rgb, dtype=float).reshape(1, -1, 3)).reshape(-1, 3)
    return np.degrees(np.arctan2(lab[:, 2], lab[:, 1]))


def _hue_gap(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


def _world_to_pixel(render, point):
    """Pixel (row, col) of a world point, from the render's camera (orthographic)."""
    right, up, _ = render.camera.basis()
    rel = np.asarray(point, dtype=float) - np.array(render.camera.target_a0)
    h, w = render.rgba.shape[:2]
    col = 0.5 * w + render.px_per_a0 * rel @ right
    row = 0.5 * h - render.px_per_a0 * rel @ up
    return int(row), int(col)




def test_1s_silhouette_radius_matches_the_closed_form(sphere_1s):
    r = render_surfaces(sphere_1s, 160, 160, camera=SIDE, background=None)
    area_px = float(r.rgba[..., 3].sum())
    measured = math.sqrt(area_px / math.pi)
    expected = _radius_1s(0.9) * r.px_per_a0
    assert abs(measured - expected) < 1.5
    # the same along the horizontal line through the centre (half the covered width)
    row = r.rgba[80, :, 3]
    assert abs(0.5 * row.sum() - expected) < 1.5


def test_perspective_silhouette_follows_the_pinhole_camera(sphere_1s):
    # A sphere of radius R at distance D from a pinhole subtends asin(R/D); on the image plane
    # at unit scale the silhouette radius is D tan(asin(R/D)) = R / sqrt(1 - (R/D)^2).
    cam = Camera(0.0, 0.0, projection="perspective", field_of_view_deg=60.0)
    r = render_surfaces(sphere_1s, 160, 160, camera=cam, background=None)
    radius = _radius_1s(0.9)
    d = r.camera.distance_a0
    expected = r.px_per_a0 * radius / math.sqrt(1 - (radius / d) ** 2)
    measured = math.sqrt(float(r.rgba[..., 3].sum()) / math.pi)
    assert abs(measured - expected) < 1.5
    assert expected - r.px_per_a0 * radius > 5  # the test tells perspective from orthographic


def test_silhouette_is_antialiased(sphere_1s):
    a3 = render_surfaces(sphere_1s, 96, 96, camera=SIDE, background=None, supersample=3).rgba[..., 3]
    a1 = render_surfaces(sphere_1s, 96, 96, camera=SIDE, background=None, supersample=1).rgba[..., 3]
    assert set(np.unique(a1)) <= {0.0, 1.0}
    partial = (a3 > 0) & (a3 < 1)
    assert partial.sum() > 100  # a ring of partly covered pixels around the disc
    assert np.allclose(np.unique(np.round(a3 * 9)), np.unique(np.round(a3 * 9)).astype(int))


def test_shading_is_smooth_not_faceted(sphere_1s):
    # Phong interpolation: brightness varies smoothly across the sphere.  The same mesh with
    # one normal per triangle (flat shading) shows steps; the smooth render must be far calmer.
    def roughness(surface):
        rgb = render_surfaces(surface, 200, 200, camera=SIDE).rgba[..., :3]
        lum = rgb2lab(rgb)[..., 0]
        inner = lum[60:140, 60:140]
        return float(np.percentile(np.abs(np.diff(inner, 2, axis=1)), 99))

    v, f = sphere_1s.vertices_a0, sphere_1s.faces
    tri = v[f]
    normals = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    normals /= np.linalg.norm(normals, axis=1, keepdims=True)
    normals *= np.sign(np.sum(normals * tri.mean(axis=1), axis=1))[:, None]  # outward
    faceted = replace(sphere_1s, vertices_a0=tri.reshape(-1, 3), faces=np.arange(3 * len(f)).reshape(-1, 3),
                      normals=np.repeat(normals, 3, axis=0), psi=np.repeat(sphere_1s.psi[f[:, 0]], 3))
    smooth = roughness(sphere_1s)
    assert smooth < 0.25 * roughness(faceted)
    assert smooth < 0.5  # L* units per pixel^2


def test_2pz_lobes_have_hues_pi_apart(lobes_2pz):
    # psi_210 = z exp(-r/2) / (4 sqrt(2 pi)) (closed form): phase 0 on +z, pi on -z.
    r = render_surfaces(lobes_2pz, 160, 160, camera=SIDE)
    top = r.rgba[_world_to_pixel(r, (0, 0, 3.5))][:3]
    bottom = r.rgba[_world_to_pixel(r, (0, 0, -3.5))][:3]
    ref0, refpi = phase_to_rgb(np.array([0.0, np.pi]))
    h_top, h_bottom, h0, hpi = _hue_deg([top, bottom, ref0, refpi])
    assert _hue_gap(h_top, h0) < 8
    assert _hue_gap(h_bottom, hpi) < 8
    assert _hue_gap(h_top, h_bottom) > 150


def test_complex_m1_ring_seen_from_z_shows_every_hue_once():
    # arg psi_211 = arg Y_1^1 = phi + pi (Condon-Shortley), from scipy.special.sph_harm_y.
    surface = extract_surface(eigenstate(2, 1, 1), 0.9, resolution=48)
    r = render_surfaces(surface, 200, 200, camera=TOP)
    phis = np.linspace(0, 2 * np.pi, 36, endpoint=False)
    radius = np.mean(np.hypot(surface.vertices_a0[:, 0], surface.vertices_a0[:, 1]))
    rendered, expected = [], []
    for phi in phis:
        px = _world_to_pixel(r, (radius * math.cos(phi), radius * math.sin(phi), 0.0))
        assert r.rgba[px][3] == 1.0
        rendered.append(r.rgba[px][:3])
        expected.append(phase_to_rgb(np.angle(sph_harm_y(1, 1, np.pi / 2, phi))))
    h_r = _hue_deg(rendered)
    h_e = _hue_deg(expected)
    assert np.all(_hue_gap(h_r, h_e) < 10)
    winding = np.sum(np.diff(np.unwrap(np.radians(np.append(h_r, h_r[0]))))) / (2 * np.pi)
    assert abs(abs(winding) - 1) < 0.05
    # no seam where arg psi wraps from pi to -pi (at phi = 0): neighbouring pixels along the
    # ring differ little in colour there, as everywhere else
    fine = np.linspace(-0.3, 0.3, 61)
    arc = np.array([r.rgba[_world_to_pixel(r, (radius * math.cos(p), radius * math.sin(p), 0.0))][:3]
                    for p in fine])
    lab = rgb2lab(arc.reshape(1, -1, 3)).reshape(-1, 3)
    steps = np.linalg.norm(np.diff(lab, axis=0), axis=1)
    assert steps.max() < 8  # a seam would put colours of phases pi apart side by side


def test_nearer_surface_hides_farther_whatever_the_order(sphere_1s):
    # Depth order by geometry: seen from +x, a sphere at x = +6 a0 lies in front of a larger
    # one at the origin.  A z-buffer shows the near one in the middle in either drawing order.
    near = replace(sphere_1s, vertices_a0=sphere_1s.vertices_a0 + [6.0, 0, 0])
    far = replace(sphere_1s, vertices_a0=1.6 * sphere_1s.vertices_a0, psi=-sphere_1s.psi)
    cam = replace(SIDE, target_a0=(0.0, 0.0, 0.0))
    a = render_surfaces([near, far], 120, 120, camera=cam)
    b = render_surfaces([far, near], 120, 120, camera=cam)
    assert np.array_equal(a.rgba, b.rgba)
    centre = a.rgba[60, 60, :3]
    ring = a.rgba[_world_to_pixel(a, (0, 0, 3.6))][:3]  # only the far sphere reaches there
    h_c, h_ring, h0, hpi = _hue_deg([centre, ring, *phase_to_rgb(np.array([0.0, np.pi]))])
    assert _hue_gap(h_c, h0) < 8 and _hue_gap(h_ring, hpi) < 8


def test_3dz2_ring_passes_in_front_of_and_behind_the_lobes():
    # 3d_z2 ~ (3 cos^2 theta - 1): lobes on z positive, ring in the xy plane negative.
    # Seen slightly from above, the ring covers the lower lobe's top in front (negative hue at
    # the front of the ring) and the upper lobe covers the ring's back.
    surface = extract_surface(real_orbital(3, 2, 0), 0.9, resolution=56)
    r = render_surfaces(surface, 200, 200, camera=Camera(0.0, 10.0))
    h0, hpi = _hue_deg(phase_to_rgb(np.array([0.0, np.pi])))
    rho = np.max(np.hypot(surface.vertices_a0[:, 0], surface.vertices_a0[:, 1])) * 0.8
    front = r.rgba[_world_to_pixel(r, (rho, 0.0, 0.0))][:3]     # ring, nearest part
    above = r.rgba[_world_to_pixel(r, (0.0, 0.0, 8.0))][:3]     # upper lobe
    assert _hue_gap(_hue_deg([front])[0], hpi) < 8
    assert _hue_gap(_hue_deg([above])[0], h0) < 8


def test_cutaway_cap_shows_the_inner_shell_of_2s():
    # psi_200 ~ (2 - r) exp(-r/2) (closed form): positive inside the node r = 2 a0, negative
    # outside.  Cut away x > 0 and look from +x: the cap is the plane x = 0; its centre is the
    # inner ball (phase 0), farther out the outer shell (phase pi), each cap flat in colour.
    state = eigenstate(2, 0, 0)
    surface = extract_surface(state, 0.9, resolution=96)
    cut = parse_cutaway("x>0")
    r = render_surfaces(surface, 200, 200, camera=replace(SIDE, target_a0=(0.0, 0.0, 0.0)), cutaway=cut)
    h0, hpi = _hue_deg(phase_to_rgb(np.array([0.0, np.pi])))
    inner = r.rgba[_world_to_pixel(r, (0, 0.3, 0.3))][:3]
    outer = r.rgba[_world_to_pixel(r, (0, 4.0, 3.0))][:3]
    assert _hue_gap(_hue_deg([inner])[0], h0) < 8
    assert _hue_gap(_hue_deg([outer])[0], hpi) < 8
    row, col = _world_to_pixel(r, (0, 4.0, 3.0))
    patch = r.rgba[row - 4:row + 5, col - 4:col + 5, :3]
    assert np.ptp(patch, axis=(0, 1)).max() < 0.01  # a flat cut face, evenly lit
    # without the cut the outside of the outer shell is seen instead, and it is shaded
    whole = render_surfaces(surface, 200, 200, camera=replace(SIDE, target_a0=(0.0, 0.0, 0.0)))
    assert _hue_gap(_hue_deg([whole.rgba[100, 100, :3]])[0], hpi) < 8


def test_cap_colour_is_psi_at_the_cap_point():
    # For |2 1 1> the cap x = 0 of the cut x > 0 carries arg psi = arg Y_1^1(theta, phi) with
    # phi = +-pi/2 (scipy.special.sph_harm_y), a different hue on the +y and -y halves.
    surface = extract_surface(eigenstate(2, 1, 1), 0.9, resolution=48)
    r = render_surfaces(surface, 200, 200, camera=replace(SIDE, target_a0=(0.0, 0.0, 0.0)),
                        cutaway=parse_cutaway("x>0"))
    radius = np.mean(np.hypot(surface.vertices_a0[:, 0], surface.vertices_a0[:, 1]))
    for y, phi in ((radius, np.pi / 2), (-radius, -np.pi / 2)):
        got = r.rgba[_world_to_pixel(r, (0.0, y, 0.0))][:3]
        want = phase_to_rgb(np.angle(sph_harm_y(1, 1, np.pi / 2, phi)))
        assert _hue_gap(_hue_deg([got])[0], _hue_deg([want])[0]) < 8


def test_translucent_outer_shell_lets_the_inner_one_show():
    state = eigenstate(2, 0, 0)
    surface = extract_surface(state, 0.9, resolution=96)
    cam = replace(SIDE, target_a0=(0.0, 0.0, 0.0))
    opaque = render_surfaces(surface, 160, 160, camera=cam)
    seen_through = render_surfaces(surface, 160, 160, camera=cam, translucent_outer=0.3)
    h0, hpi = _hue_deg(phase_to_rgb(np.array([0.0, np.pi])))
    assert _hue_gap(_hue_deg([opaque.rgba[80, 80, :3]])[0], hpi) < 8
    # at 30 % opacity per layer (the shell's outer and inner walls) the positive inner ball
    # shows through: the centre's hue moves over to the ball's side
    h = _hue_deg([seen_through.rgba[80, 80, :3]])[0]
    assert _hue_gap(h, h0) < _hue_gap(h, hpi)
    # the outer parts away from the ball stay the shell's colour, only fainter
    edge = _hue_deg([seen_through.rgba[80, 20, :3]])[0]
    assert _hue_gap(edge, hpi) < 8
    same = render_surfaces(surface, 160, 160, camera=cam, translucent_outer=1.0)
    assert np.array_equal(same.rgba, opaque.rgba)


def test_nodal_axis_line_is_drawn_and_hidden_behind_the_ring():
    surface = extract_surface(eigenstate(2, 1, 1), 0.9, resolution=48)
    cam = Camera(0.0, 10.0)
    plain = render_surfaces(surface, 200, 200, camera=cam)
    lined = render_surfaces(surface, 200, 200, camera=cam, nodal_axis=True)
    changed = np.any(np.abs(lined.rgba - plain.rgba) > 0.2, axis=2)
    rows = np.flatnonzero(changed.any(axis=1))
    top_z = surface.vertices_a0[:, 2].max()
    # the line shows above the surface; where the ring is in front (z = 0, the nearest point on
    # the axis' line of sight) it is hidden
    assert rows.size and rows.min() < _world_to_pixel(lined, (0, 0, top_z))[0]
    row0, col0 = _world_to_pixel(lined, (0, 0, 0))
    assert not changed[row0 - 2:row0 + 3, col0 - 2:col0 + 3].any()
    with pytest.raises(ValueError, match="no nodal axis"):
        nodal_axis_centre(extract_surface(real_orbital(2, 1, 0), 0.9, resolution=32))


def test_same_inputs_same_pixels(lobes_2pz):
    def digest():
        r = render_surfaces(lobes_2pz, 120, 100, camera=Camera(20, 30), cutaway=parse_cutaway("quadrant"))
        return hashlib.sha256(r.rgba.tobytes()).hexdigest()

    assert digest() == digest()


def test_transparent_background(sphere_1s):
    r = render_surfaces(sphere_1s, 64, 64, camera=SIDE, background=None)
    assert r.rgba[0, 0, 3] == 0 and r.rgba[32, 32, 3] == 1


def test_zoom_scales_and_fit_keeps_a_margin(lobes_2pz):
    cam = frame_camera(lobes_2pz, SIDE)
    r1 = render_surfaces(lobes_2pz, 100, 100, camera=cam)
    r2 = render_surfaces(lobes_2pz, 100, 100, camera=replace(cam, zoom=2.0))
    assert r2.px_per_a0 == pytest.approx(2 * r1.px_per_a0)
    alpha = render_surfaces(lobes_2pz, 100, 100, camera=SIDE, background=None).rgba[..., 3]
    assert alpha[0].max() == 0 and alpha[-1].max() == 0 and alpha[:, 0].max() == 0


def test_bad_render_options_are_refused(sphere_1s):
    for kwargs in (dict(width_px=8), dict(supersample=5), dict(phase_map="rainbow"),
                   dict(translucent_outer=0.0)):
        with pytest.raises(ValueError):
            render_surfaces(sphere_1s, **{"width_px": 64, "height_px": 64, **kwargs})


def test_render_path_and_its_memory_estimate():
    # the estimate must cover the path taken: banded < whole/layered < capped per pixel
    assert render_path(cutaway=False, nodal_axis=False, translucent_outer=None) == "banded"
    assert render_path(cutaway=False, nodal_axis=False, translucent_outer=1.0) == "banded"
    assert render_path(cutaway=False, nodal_axis=True, translucent_outer=None) == "whole"
    assert render_path(cutaway=False, nodal_axis=True, translucent_outer=0.5) == "layered"
    assert render_path(cutaway=True, nodal_axis=False, translucent_outer=0.5) == "capped"
    sizes = [render_bytes(400, 300, 3, p) for p in ("banded", "whole", "capped")]
    assert sizes[0] < sizes[1] < sizes[2]
