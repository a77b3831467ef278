"""Test-suite settings: one verdict per commit for the property-based (hypothesis) tests.

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

from hypothesis import HealthCheck, settings

_COMMON = dict(deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
settings.register_profile("ci", derandomize=True, max_examples=60, **_COMMON)
settings.register_profile("hunt", derandomize=False, max_examples=1000, **_COMMON)
settings.load_profile(os.environ.get("ORBITALRENDER_HYPOTHESIS_PROFILE", "ci"))
