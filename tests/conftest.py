"""Test-suite settings and shared fixtures.

One verdict per commit for the property-based (hypothesis) tests.

The default profile ``ci`` draws the same examples on every run (``derandomize``: the
examples follow from each test's source), keeps no example database and has no
deadline (the machine may be shared).  The profile ``hunt`` draws fresh random examples,
many more of them, for bug hunts::

    python -m pytest -p no:cacheprovider tests/test_properties_hypothesis.py --hypothesis-profile=hunt

or ``ORBITALRENDER_HYPOTHESIS_PROFILE=hunt``.  Each counterexample a hunt finds
becomes an explicit regression test.  Tests that draw whole lattices take a fifth of
the profile's examples (``settings.default.max_examples // 5``, read after the profile is
loaded).
"""

from __future__ import annotations

import os
import signal

import pytest
from hypothesis import HealthCheck, settings

from orbitalrender.state.model import eigenstate, real_orbital
from orbitalrender.surface.extract import extract_surface

_COMMON = dict(deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
settings.register_profile("ci", derandomize=True, max_examples=60, **_COMMON)
settings.register_profile("hunt", derandomize=False, max_examples=1000, **_COMMON)
settings.load_profile(os.environ.get("ORBITALRENDER_HYPOTHESIS_PROFILE", "ci"))

# The tests send SIGINT to commands as a terminal's Ctrl-C reaches a job in the foreground.
# A suite started in the background of a script (``pytest &``) inherits SIGINT ignored, and
# every command it starts would keep ignoring it (as it should: see orbitalrender.__main__);
# the suite's own default handler makes its children start with the default again.
if signal.getsignal(signal.SIGINT) is signal.SIG_IGN:
    signal.signal(signal.SIGINT, signal.default_int_handler)


# -- shared fixtures: small analytic surfaces used by the render and figure tests ---------------
@pytest.fixture(scope="module")
def sphere_1s():
    return extract_surface(eigenstate(1, 0, 0), 0.9, resolution=48)


@pytest.fixture(scope="module")
def lobes_2pz():
    return extract_surface(real_orbital(2, 1, 0), 0.9, resolution=48)
