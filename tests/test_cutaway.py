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
