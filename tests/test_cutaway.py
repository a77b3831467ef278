"""Tests of the cutaway text form and its planes (orbitalrender.picture.cutaway)."""

import pytest

from orbitalrender.picture.cutaway import Cutaway, parse_cutaway


def test_cutaway_text():
    cut = parse_cutaway(" x > 0 & (0,2,0) > 1 ")
    assert cut.normals == ((1.0, 0.0, 0.0), (0.0, 1.0, 0.0))
    assert cut.offsets_a0 == (0.0, 0.5)
    for bad in ("x>", "w>0", "(0,0,0)>1", "x=0"):
        with pytest.raises(ValueError):
            parse_cutaway(bad)
    with pytest.raises(ValueError):
        Cutaway(((1.0, 0.0, 0.0),), (0.0, 1.0))


def test_front_cut_is_seen_at_an_angle():
    # the default camera sees the plane of the `front` cut obliquely (not as a face-on disc):
    # its normal is at least 30 degrees from the line of sight, and the cut keeps the half
    # away from the eye (the eye lies in the removed region)
    import math

    import numpy as np

    from orbitalrender.picture.camera import DEFAULT_CAMERA

    normals, offsets = parse_cutaway("front").world_planes(DEFAULT_CAMERA, (0.0, 0.0, 0.0))
    toward = DEFAULT_CAMERA.basis()[2]
    angle = math.degrees(math.acos(float(normals[0] @ toward)))
    assert 30.0 <= angle <= 60.0
    eye = 100.0 * toward
    assert normals[0] @ eye > offsets[0]
    assert np.isclose(normals[0][2], 0.0)  # a vertical plane: z stays upright in the cut
