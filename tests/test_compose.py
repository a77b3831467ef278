"""Tests of figure composition (orbitalrender.picture.compose): the render is shown pixel for
pixel beside the phase legend (colours from orbitalrender.colormap) and a scale bar."""

import math
from dataclasses import replace

import numpy as np
import pytest

from orbitalrender.colormap import phase_to_rgb
from orbitalrender.picture.camera import Camera
from orbitalrender.picture.compose import compose_figure, figure_3d, fit_geometry, surface_title
from orbitalrender.picture.scene import render_surfaces
from orbitalrender.state.model import real_orbital

SIDE = Camera(azimuth_deg=0.0, elevation_deg=0.0)   # looking from +x toward the origin, z up


def test_figure_has_the_render_pixel_for_pixel_and_the_maps_legend(sphere_1s):
    fig, render = figure_3d(sphere_1s, 400, 300, phase_map="cvd")
    images = [im for ax in fig.axes for im in ax.images]
    assert any(im.get_array().shape == render.rgba.shape for im in images)
    wheel = next(im for im in images if im.get_array().shape != render.rgba.shape)
    rgba = np.asarray(wheel.get_array())
    n = rgba.shape[0]
    for theta in (0.0, 1.0, 2.5, 4.0):
        col = int((0.8 * math.cos(theta) + 1) / 2 * n)
        row = int((1 - 0.8 * math.sin(theta)) / 2 * n)
        assert np.allclose(rgba[row, col, :3], phase_to_rgb(theta, "cvd"), atol=0.02)
    texts = [t.get_text() for ax in fig.axes for t in ax.texts] + [t.get_text() for t in fig.texts]
    assert any("a_0" in t for t in texts)      # the scale bar's label
    assert any("F = 0.9" in t for t in texts)  # the title
    assert fig.get_size_inches() * fig.dpi == pytest.approx([400, 300])


def test_compose_refuses_mismatched_panels(sphere_1s):
    g = fit_geometry(300, 200, ncols=2, nrows=1)
    a = render_surfaces(sphere_1s, *g.panel_px)
    b = render_surfaces(sphere_1s, *g.panel_px, camera=replace(SIDE, zoom=2.0))
    with pytest.raises(ValueError, match="different scales"):
        compose_figure([a, b], g)
    with pytest.raises(ValueError, match="does not fit"):
        compose_figure([render_surfaces(sphere_1s, 50, 50)], g)


def _title_texts(fig):
    return [t for t in fig.texts if "F = " in t.get_text()]


def test_titles_are_at_least_a_twentieth_of_the_panel_height():
    # a slide-friendly default (our rule: 1/20 of the panel height, measured from the rendered
    # text's extent in pixels of the PNG the figure becomes)
    from orbitalrender.picture.layout import small_multiples
    from orbitalrender.surface.extract import extract_surface

    surfaces = [extract_surface(real_orbital(3, 1, m, label=name), 0.9, resolution=32)
                for m, name in ((1, "3px"), (-1, "3py"), (0, "3pz"))]
    for width, height, ncols in ((1000, 330, 3), (1300, 440, 3), (1500, 660, 2)):
        fig, renders = small_multiples(surfaces, ncols=ncols, width_px=width, height_px=height,
                                       supersample=1)
        panel_h = renders[0].rgba.shape[0]
        renderer = fig.canvas.get_renderer()
        titles = _title_texts(fig)
        assert len(titles) == 3
        for t in titles:
            assert t.get_window_extent(renderer).height >= panel_h / 20


def test_text_size_sets_the_title_in_points(sphere_1s):
    fig, _ = figure_3d(sphere_1s, 700, 300, text_size_pt=20, supersample=1)
    (title,) = _title_texts(fig)
    assert title.get_fontsize() == 20
    # the other text follows at a fixed ratio, and a size out of range is refused
    sizes = {t.get_fontsize() for ax in fig.axes for t in ax.texts}
    assert sizes == {12.0}
    with pytest.raises(ValueError, match="text size"):
        figure_3d(sphere_1s, 400, 300, text_size_pt=200)


def test_a_long_title_is_made_to_fit_its_panel(sphere_1s):
    fig, render = figure_3d(sphere_1s, 300, 300, title="a very long title " * 4, supersample=1)
    (title,) = [t for t in fig.texts if "long" in t.get_text()]
    assert title.get_window_extent(fig.canvas.get_renderer()).width <= render.rgba.shape[1]


def test_titles_state_Z_and_the_nucleus():
    from orbitalrender.surface.extract import extract_surface

    he = extract_surface(real_orbital(2, 1, 0, Z=2.0, label="2pz"), 0.9, resolution=24)
    assert surface_title(he) == "2p$_{z}$, F = 0.9, Z = 2"
    h = extract_surface(real_orbital(2, 1, 0, label="2pz"), 0.9, resolution=24)
    assert surface_title(h) == "2p$_{z}$, F = 0.9"
    # mu / m_e of hydrogen, 1 / (1 + m_e / m_p) with the CODATA ratio (scipy.constants)
    from scipy import constants

    mp = constants.physical_constants["proton-electron mass ratio"][0]
    d = extract_surface(real_orbital(2, 1, 0, reduced_mass_ratio=1 / (1 + 1 / mp), label="2pz"), 0.9,
                        resolution=24)
    assert surface_title(d).endswith(f"$\\mu$ = {1 / (1 + 1 / mp):.6g} $m_e$ (hydrogen)")


def _lobe_direction(render):
    """Image direction (right, up) from the negative to the positive lobe of a real orbital:
    positive psi has phase 0, hue 30 degrees in CIELAB (skimage.color.rgb2lab)."""
    from skimage.color import rgb2lab

    covered = render.rgba[..., 3] > 0.5
    rows, cols = np.nonzero(covered)
    lab = rgb2lab(render.rgba[..., :3][covered][None])[0]
    hue = np.degrees(np.arctan2(lab[:, 2], lab[:, 1]))
    positive = np.abs((hue - 30.0 + 180.0) % 360.0 - 180.0) < 45.0
    d = np.array([cols[positive].mean() - cols[~positive].mean(),
                  -(rows[positive].mean() - rows[~positive].mean())])
    return d / np.linalg.norm(d)


@pytest.mark.parametrize("label, m, axis", [("2px", 1, "x"), ("2py", -1, "y"), ("2pz", 0, "z")])
@pytest.mark.parametrize("camera", [Camera(), Camera(azimuth_deg=120.0, elevation_deg=35.0)])
def test_the_triad_arrow_points_at_the_positive_lobe(label, m, axis, camera):
    # 2p_x is positive on +x (real orbitals as defined in docs/methods.md), so the x arrow of
    # the triad must point from the negative to the positive lobe as rendered
    from orbitalrender.surface.extract import extract_surface

    surface = extract_surface(real_orbital(2, 1, m, label=label), 0.9, resolution=32)
    fig, render = figure_3d(surface, 500, 400, camera=camera, transparent=True, supersample=1)
    (arrow,) = [a for ax in fig.axes for a in ax.texts if a.get_gid() == f"triad-{axis}"]
    tip = np.array(arrow.xy) / np.linalg.norm(arrow.xy)
    assert float(tip @ _lobe_direction(render)) > math.cos(math.radians(12.0))


def test_triad_by_default_only_where_orientation_matters(sphere_1s, lobes_2pz):
    def triads(fig):
        return [a for ax in fig.axes for a in _triads_in(ax)]

    assert len(triads(figure_3d(lobes_2pz, 400, 300, supersample=1)[0])) == 3
    assert triads(figure_3d(sphere_1s, 400, 300, supersample=1)[0]) == []
    assert len(triads(figure_3d(sphere_1s, 400, 300, triad="on", supersample=1)[0])) == 3
    assert triads(figure_3d(lobes_2pz, 400, 300, triad="off", supersample=1)[0]) == []
    # the triad stays outside the render: the render is shown pixel for pixel without it
    fig, render = figure_3d(lobes_2pz, 400, 300, triad="on", legend=False, supersample=1)
    triad_ax = next(ax for ax in fig.axes if _triads_in(ax))
    render_ax = next(ax for ax in fig.axes if ax.images)
    assert not triad_ax.get_position().overlaps(render_ax.get_position())


def _triads_in(ax):
    return [a for a in ax.texts if (a.get_gid() or "").startswith("triad-")]
