"""Tests of figure composition (orbitalrender.picture.compose): the render is shown pixel for
pixel beside the phase legend (colours from orbitalrender.colormap) and a scale bar."""

import math
from dataclasses import replace

import numpy as np
import pytest

from orbitalrender.colormap import phase_to_rgb
from orbitalrender.picture.camera import Camera
from orbitalrender.picture.compose import compose_figure, figure_3d, fit_geometry
from orbitalrender.picture.scene import render_surfaces

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
