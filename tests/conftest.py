"""Shared test fixtures: small analytic surfaces used by the render and figure tests."""

import pytest

from orbitalrender.state.model import eigenstate, real_orbital
from orbitalrender.surface.extract import extract_surface


@pytest.fixture(scope="module")
def sphere_1s():
    return extract_surface(eigenstate(1, 0, 0), 0.9, resolution=48)


@pytest.fixture(scope="module")
def lobes_2pz():
    return extract_surface(real_orbital(2, 1, 0), 0.9, resolution=48)
