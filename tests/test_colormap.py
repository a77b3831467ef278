"""The CIELAB <-> sRGB conversions of orbitalrender.colormap, against skimage.color.

Reference: skimage.color (rgb2lab, lab2rgb, lab2xyz), an outside implementation of
CIE 15:2004 with the D65 white and the sRGB matrix of IEC 61966-2-1; and the CIE's
published L*a*b* of the sRGB primaries (CIE 15:2004 formulas applied by hand, values
from memory, to 3 decimals).  The colours are drawn with a seeded generator.
"""

import warnings

import numpy as np
import pytest
from skimage.color import lab2rgb, lab2xyz, rgb2lab
from skimage.color.colorconv import rgb_from_xyz

from orbitalrender.colormap import (
    cie_lightness,
    lab_to_linear,
    lab_to_srgb,
    linear_to_lab,
    phase_lut,
    sign_colours,
    srgb_to_linear,
)

_RNG = np.random.default_rng(20261202)
#: Random sRGB colours, the corners of the cube and a grey ramp (dark greys exercise the
#: straight-line part of CIE's f(t) and of the sRGB transfer function).
_SRGB = np.concatenate([_RNG.random((5000, 3)), np.array(np.meshgrid(*[[0.0, 1.0]] * 3)).reshape(3, -1).T,
                        np.repeat(np.linspace(0.0, 1.0, 101)[:, None], 3, axis=1)])


def test_srgb_to_lab_matches_skimage_on_many_colours():
    ours = linear_to_lab(srgb_to_linear(_SRGB))
    theirs = rgb2lab(_SRGB[None])[0]
    # skimage's matrix is rounded differently (0.412453 ... against the inverse of
    # IEC's 3.2404542 ...; its rows put sRGB white at a* = -0.0024, b* = 0.0046, ours
    # within 1e-5 of 0): the two agree to 5e-3 in L*, a*, b*, where one unit is about a
    # just-noticeable difference
    assert np.max(np.abs(ours - theirs)) < 1e-2


def _skimage_from_lab(convert, lightness, ab, count):
    """Random CIELAB colours (L* in `lightness`, a* and b* in +-`ab`), `convert` of them by
    skimage, and where skimage did not clip a negative Z to 0 (it warns there; we do not clip)."""
    lab = np.column_stack([_RNG.uniform(*lightness, count), _RNG.uniform(-ab, ab, count),
                           _RNG.uniform(-ab, ab, count)])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = convert(lab[None])[0]
    return lab, theirs, (lab[:, 0] + 16.0) / 116.0 - lab[:, 2] / 200.0 >= 0.0


def test_lab_to_srgb_matches_skimage_on_many_colours():
    lab, theirs, fz_ok = _skimage_from_lab(lab2rgb, (0.0, 100.0), 90.0, 5000)  # both clip to [0, 1]
    assert np.max(np.abs(lab_to_srgb(lab)[fz_ok] - theirs[fz_ok])) < 1e-4


def test_lab_to_linear_matches_skimage_before_clipping():
    lab, xyz, fz_ok = _skimage_from_lab(lab2xyz, (1.0, 100.0), 60.0, 3000)
    ours = lab_to_linear(lab)
    assert np.max(np.abs(ours - xyz @ rgb_from_xyz.T)[fz_ok]) < 2e-4
    # and our inverse takes it back
    np.testing.assert_allclose(linear_to_lab(ours), lab, atol=1e-9)


def test_primaries_and_white():
    # sRGB red, green, blue in CIELAB (D65), CIE 15:2004 applied to the IEC 61966-2-1
    # primaries (values from memory: red 53.241 80.092 67.203, green 87.735 -86.183 83.179,
    # blue 32.297 79.188 -107.860)
    lab = linear_to_lab(np.eye(3))
    np.testing.assert_allclose(lab, [[53.241, 80.092, 67.203], [87.735, -86.183, 83.179],
                                     [32.297, 79.188, -107.860]], atol=2e-2)
    np.testing.assert_allclose(linear_to_lab(np.ones(3)), [100.0, 0.0, 0.0], atol=1e-5)
    assert float(cie_lightness(1.0)) == pytest.approx(100.0, abs=1e-12)
    # below epsilon = 216/24389 L* is kappa Y, kappa = 24389/27 (CIE 15:2004)
    assert float(cie_lightness(0.001)) == pytest.approx(24389.0 / 27.0 * 0.001, rel=1e-12)


@pytest.mark.parametrize("scheme", ["uniform", "cvd"])
def test_phase_maps_stay_in_gamut_at_the_lightness_they_were_built_for(scheme):
    # the table's colours read back (skimage) with the lightness of their construction:
    # uniform has one L* for every phase; cvd swings 0.45 C* about L* = 60
    lab = rgb2lab(phase_lut(scheme)[None])[0]
    if scheme == "uniform":
        assert np.ptp(lab[:, 0]) < 0.05
        assert np.ptp(np.hypot(lab[:, 1], lab[:, 2])) < 0.1
    else:
        assert abs(0.5 * (lab[:, 0].max() + lab[:, 0].min()) - 60.0) < 0.05


def test_sign_colours_match_skimage():
    theirs = {"positive": lab2rgb(np.array([[[68.0, 30.0, 62.0]]]))[0, 0],
              "negative": lab2rgb(np.array([[[52.0, 0.0, -48.0]]]))[0, 0]}
    for key, rgb in sign_colours().items():
        np.testing.assert_allclose(rgb, theirs[key], atol=1e-4)
