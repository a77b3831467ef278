"""Tests of the camera checks (orbitalrender.picture.camera)."""

import math

import pytest

from orbitalrender.picture.camera import Camera


@pytest.mark.parametrize("kwargs", [dict(projection="fisheye"), dict(elevation_deg=91),
                                    dict(zoom=0.0), dict(zoom=1e3), dict(azimuth_deg=math.inf)])
def test_bad_views_are_refused(kwargs):
    with pytest.raises(ValueError):
        Camera(**kwargs)
