"""Tests of the shading colours (orbitalrender.picture.shadetable): light and shadow keep hue.

Reference: CIELAB from skimage.color.rgb2lab (an outside implementation of CIE 15:2004,
D65 white), applied to the sRGB the render writes; the hue angle is atan2(b*, a*) and
the chroma hypot(a*, b*).
"""

import numpy as np
import pytest
from skimage.color import rgb2lab
from skimage.measure import marching_cubes

from orbitalrender import render_surfaces
from orbitalrender.colormap import linear_to_srgb, phase_to_rgb
from orbitalrender.picture.shadetable import SHADE_LEVELS, shade_lookup, shade_table
from orbitalrender.surface.model import Surface


def _hue_chroma(srgb):
    lab = rgb2lab(np.asarray(srgb, dtype=float).reshape(1, -1, 3))[0]
    return lab[:, 0], np.degrees(np.arctan2(lab[:, 2], lab[:, 1])), np.hypot(lab[:, 1], lab[:, 2])


def _hue_difference(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


@pytest.mark.parametrize("scheme", ["uniform", "cvd"])
def test_every_shade_keeps_the_hue_of_its_phase(scheme):
    table = shade_table(scheme, 1.0)
    phases = 2 * np.pi * np.arange(table.shape[0]) / table.shape[0]
    _, hue0, chroma0 = _hue_chroma(phase_to_rgb(phases, scheme))
    for k in range(SHADE_LEVELS // 4, SHADE_LEVELS):  # L* above about 30; darker, hue means little
        L, hue, chroma = _hue_chroma(linear_to_srgb(table[:, k]))
        coloured = chroma0 > 5.0
        # the hue stays to within 8-bit rounding; the chroma is never raised
        assert _hue_difference(hue[coloured], hue0[coloured]).max() < 1.5
        assert np.all(chroma <= chroma0 + 0.5)
    # at full shade the table gives the phase colour itself
    np.testing.assert_allclose(linear_to_srgb(table[:, -1]), phase_to_rgb(phases, scheme), atol=2e-3)


def test_lightness_follows_the_shade():
    rgb = shade_lookup(np.full(5, 0.5 * np.pi), np.linspace(0.2, 1.0, 5))
    L, _, _ = _hue_chroma(rgb)
    assert np.all(np.diff(L) > 3.0)


def _sphere_of_one_phase(phase):
    g = np.linspace(-3, 3, 40)
    v, f, n, _ = marching_cubes(np.add.outer(np.add.outer(g**2, g**2), g**2), 4.0,
                                spacing=(g[1] - g[0],) * 3, gradient_direction="ascent")
    v = v - 3.0
    psi = np.full(len(v), np.exp(1j * phase))
    return Surface(v, f, n, psi, 1.0, None, None, None, (40,) * 3, (g[1] - g[0],) * 3, None)


@pytest.mark.parametrize("phase", [0.0, 0.5 * np.pi, 2.0, 1.5 * np.pi])
def test_lit_and_shadowed_pixels_of_one_phase_have_one_hue(phase):
    # a sphere whose psi has one phase everywhere: every pixel should read as one colour
    render = render_surfaces(_sphere_of_one_phase(phase), 160, 160, supersample=2, background=None)
    covered = render.rgba[..., 3] > 0.999
    L, hue, chroma = _hue_chroma(render.rgba[..., :3][covered])
    lit = (L > np.percentile(L, 70)) & (L < np.percentile(L, 85))  # lit, below the highlight
    shadow = L < np.percentile(L, 5)
    assert L[lit].mean() - L[shadow].mean() > 20.0  # there is light and shadow
    assert _hue_difference(np.median(hue[lit]), np.median(hue[shadow])) <= 10.0
    # and the shadow keeps the colour's strength: a linear-light scaling of the colour would
    # lower the chroma with the lightness (to about 0.7 of it here, measured)
    assert np.median(chroma[shadow]) >= 0.9 * np.median(chroma[lit])
