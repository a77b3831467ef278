"""Tests of the phase legend and the scale bar (orbitalrender.picture.legend)."""

import math

import matplotlib.figure
import numpy as np
import pytest

from orbitalrender.colormap import phase_to_rgb, sign_colours
from orbitalrender.picture.legend import (
    draw_phase_legend,
    draw_phase_wheel,
    draw_scale_bar,
    draw_sign_swatches,
    nice_length,
)
from orbitalrender.state.units import a0_to


def _axes():
    return matplotlib.figure.Figure(figsize=(3, 3)).add_subplot()


@pytest.mark.parametrize("scheme", ["uniform", "cvd"])
def test_wheel_colours_are_the_maps(scheme):
    # The wheel must show, at polar angle theta (counter-clockwise from +x, the orientation of
    # the complex plane), the colour that phase_to_rgb gives to phase theta.
    ax = _axes()
    draw_phase_wheel(ax, scheme)
    image = ax.images[0]
    rgba = np.asarray(image.get_array())
    n = rgba.shape[0]
    left, right, bottom, top = image.get_extent()
    assert (left, right, bottom, top) == (-1, 1, -1, 1)
    for theta in np.linspace(0, 2 * np.pi, 13)[:-1]:
        r = 0.8  # middle of the annulus (inner radius 0.55, outer 1)
        x, y = r * math.cos(theta), r * math.sin(theta)
        col = int((x + 1) / 2 * n)
        row = int((1 - y) / 2 * n)  # origin="upper": row 0 is y = +1
        assert rgba[row, col, 3] == pytest.approx(1.0)
        pixel_phase = math.atan2(1 - 2 * (row + 0.5) / n, 2 * (col + 0.5) / n - 1)
        np.testing.assert_allclose(rgba[row, col, :3], phase_to_rgb(pixel_phase, scheme), atol=1e-12)
    # transparent in the hole and outside the ring
    assert rgba[n // 2, n // 2, 3] == 0.0
    assert rgba[0, 0, 3] == 0.0


def test_wheel_marks_the_quarter_phases():
    ax = _axes()
    draw_phase_wheel(ax)
    texts = {t.get_text(): t.get_position() for t in ax.texts}
    assert set(texts) == {"0", r"$\pi/2$", r"$\pi$", r"$3\pi/2$"}
    # each label sits outside the ring in the direction of its angle
    for label, angle in (("0", 0.0), (r"$\pi/2$", math.pi / 2), (r"$\pi$", math.pi),
                         (r"$3\pi/2$", 1.5 * math.pi)):
        x, y = texts[label]
        assert math.hypot(x, y) > 1.0
        assert math.cos(math.atan2(y, x) - angle) > 0.95


def test_sign_swatches_use_the_sign_tones():
    ax = _axes()
    draw_sign_swatches(ax)
    faces = [tuple(p.get_facecolor()[:3]) for p in ax.patches]
    np.testing.assert_allclose(faces[0], sign_colours()["positive"])
    np.testing.assert_allclose(faces[1], sign_colours()["negative"])
    assert [t.get_text() for t in ax.texts] == ["+", "\u2212"]
    # and they are the tones the sign map gives to phase 0 and pi
    np.testing.assert_allclose(faces[0], phase_to_rgb(0.0, "sign"))
    np.testing.assert_allclose(faces[1], phase_to_rgb(math.pi, "sign"))


def test_phase_legend_picks_by_scheme():
    ax = _axes()
    draw_phase_legend(ax, "sign")
    assert not ax.images and len(ax.patches) == 2
    ax = _axes()
    draw_phase_legend(ax, "uniform")
    assert len(ax.images) == 1
    with pytest.raises(ValueError, match="uniform and cvd"):
        draw_phase_wheel(_axes(), "sign")


@pytest.mark.parametrize("value, expected", [(1.0, 1.0), (1.99, 1.0), (2.0, 2.0), (4.99, 2.0),
                                             (5.0, 5.0), (9.999, 5.0), (10.0, 10.0), (0.031, 0.02),
                                             (730.0, 500.0), (1.3e-4, 1e-4)])
def test_nice_length_is_the_largest_1_2_5_step(value, expected):
    # 1-2-5 series: common practice for scale bars and axis ticks
    assert nice_length(value) == pytest.approx(expected, rel=1e-12)


def test_nice_length_rejects_nonsense():
    for bad in (0.0, -1.0, math.inf, math.nan):
        with pytest.raises(ValueError):
            nice_length(bad)


@pytest.mark.parametrize("units", ["a0", "angstrom", "pm"])
def test_scale_bar_length_in_data_units(units):
    # Axes in pixels, 7 px per a0, 400 px wide: the bar must be the nice length in `units`
    # that fits 30 % of the width, and its drawn length must be that many units converted with
    # the CODATA Bohr radius (a0_to, from scipy.constants).
    ax = _axes()
    ax.set_xlim(0, 400)
    ax.set_ylim(300, 0)  # image-style inverted y
    px_per_a0 = 7.0
    length = draw_scale_bar(ax, px_per_a0, units)
    expected = nice_length(0.3 * 400 / px_per_a0 * a0_to(units))
    assert length == pytest.approx(expected)
    (line,) = ax.lines
    xs = line.get_xdata()
    assert abs(xs[1] - xs[0]) == pytest.approx(length / a0_to(units) * px_per_a0)
    assert abs(xs[1] - xs[0]) <= 0.3 * 400
    label = ax.texts[0].get_text()
    assert label.startswith(f"{length:g} ")
    # the lower-left corner of an inverted axis is at large y
    assert line.get_ydata()[0] > 150


def test_scale_bar_bad_corner():
    ax = _axes()
    with pytest.raises(ValueError, match="corner"):
        draw_scale_bar(ax, 1.0, corner="middle")
    with pytest.raises(ValueError, match="unit"):
        draw_scale_bar(ax, 1.0, units="furlong")
