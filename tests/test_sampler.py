"""Lattice sampling: the symmetric fill equals direct evaluation; lattice sums give norms and overlaps."""

from __future__ import annotations

import re

import numpy as np
import pytest
from scipy.optimize import brentq

from orbitalrender.lattice import memory
from orbitalrender.lattice.grid import Box
from orbitalrender.lattice.memory import MemoryLimitError
from orbitalrender.lattice.sampler import default_box, sample
from orbitalrender.state.model import eigenstate
from orbitalrender.state.notation import parse_state
from orbitalrender.state.radial import radial_cumulative, radius_holding

STATES = ["1s", "2,1,1", "3,2,-1", "4,3,-2", "5,4,4", "3dxy", "4fxyz", "4fy(3x2-y2)", "3dz2",
          "0.6*2,1,1 + 0.8i*3,2,-1", "1s + i*2,1,0 - 0.4*4,3,3"]


def _direct(lat):
    x, y, z = np.meshgrid(*lat.axes(), indexing="ij")
    return lat.state.psi(x, y, z)


@pytest.mark.parametrize("text", STATES)
@pytest.mark.parametrize("resolution", [17, 24])
def test_symmetric_fill_equals_direct_evaluation(text, resolution):
    # The octant reflections (Condon-Shortley parities) against state.psi at every point.
    state = parse_state(text, time_au=1.7)
    lat = sample(state, resolution, dtype=np.complex128)
    ref = _direct(lat)
    assert np.max(np.abs(lat.values - ref)) <= 1e-13 * np.max(np.abs(ref))


def test_complex64_is_the_rounded_double_result():
    state = parse_state("4,3,1 + 2,1,-1")
    single = sample(state, 20)
    double = sample(state, 20, dtype=np.complex128)
    assert single.values.dtype == np.complex64
    # float32 keeps 24 bits: a relative error of 2^-24 of the largest value (common practice bound).
    assert np.max(np.abs(single.values - double.values)) <= 2.0**-23 * np.max(np.abs(double.values))


@pytest.mark.parametrize("text", ["1s@(0,0,-0.7) - 1s@(0,0,0.7)", "2pz@(1,0,0) + 0.5i*3dxy@(-1,0.5,0)"])
def test_multi_centre_lattice_equals_direct_evaluation(text):
    lat = sample(parse_state(text), 21, dtype=np.complex128)
    ref = _direct(lat)
    assert np.max(np.abs(lat.values - ref)) <= 1e-13 * np.max(np.abs(ref))


def test_box_off_the_nucleus_is_evaluated_directly():
    state = eigenstate(3, 2, 1)
    lat = sample(state, 16, box=Box((1.0, -2.0, 0.5), 12.0), dtype=np.complex128)
    assert np.allclose(lat.origin_a0, (-11.0, -14.0, -11.5))
    assert np.max(np.abs(lat.values - _direct(lat))) <= 1e-13 * np.max(np.abs(lat.values))


def test_default_box_holds_the_requested_probability():
    # The sphere of the box half-width / padding holds 1 - 1e-4 (radial_cumulative is exact).
    for n, l in [(1, 0), (3, 2), (5, 0)]:
        b = default_box(eigenstate(n, l, 0))
        assert np.isclose(radial_cumulative(n, l, b.half_width_a0 / 1.15), 1 - 1e-4, atol=1e-10)


ALL_N5 = [(n, l, m) for n in range(1, 6) for l in range(n) for m in range(-l, l + 1)]


@pytest.mark.parametrize("n", range(1, 6))
def test_lattice_norm_of_every_state_up_to_n5(n):
    # sum |psi|^2 h^3 = 1 within 1e-3: the box loses < 1e-4 (default_box) and the midpoint
    # sum errs by O(h^2), largest at the cusp of s states at the nucleus, which therefore get
    # a finer lattice (the largest error measured at N = 96 / 160 is 5.1e-4).
    for nn, l, m in (s for s in ALL_N5 if s[0] == n):
        lat = sample(eigenstate(nn, l, m), 160 if l == 0 else 96, dtype=np.complex128)
        assert abs(lat.density().sum() * lat.voxel_volume_a0_3 - 1.0) < 1e-3, (nn, l, m)


_PAIRS = [(a, b, l, m) for l in range(4) for m in range(0, l + 1)
          for a in range(l + 1, 6) for b in range(a + 1, 6)]


def _overlap_box(a: int, b: int, l: int) -> tuple[Box, float]:
    """The smallest cube around the nucleus outside which sqrt(P_a P_b) <= 1e-4, and that bound.

    By Cauchy-Schwarz |int_outside psi_a* psi_b| <= sqrt(P_a,out P_b,out), so cutting the
    overlap integral at this box changes it by at most 1e-4; the cube holds the sphere.
    """
    def log_excess(R):
        out_a = max(1.0 - radial_cumulative(a, l, R), 1e-300)
        out_b = max(1.0 - radial_cumulative(b, l, R), 1e-300)
        return 0.5 * (np.log(out_a) + np.log(out_b)) - np.log(1e-4)

    R = brentq(log_excess, 0.1, radius_holding(b, l, 1 - 1e-4))
    return Box((0.0, 0.0, 0.0), R), float(np.exp(log_excess(R)) * 1e-4)


@pytest.mark.parametrize("l", range(4))
def test_lattice_overlap_of_same_lm_states_vanishes(l):
    # <n l m | n' l m> = 0 by radial orthogonality alone, so this checks R_nl on the lattice.
    # The lattice sum has two errors: the cut at the box (at most 1e-4, see _overlap_box) and
    # the O(h^2) midpoint error, largest at the cusp of s states, which get N = 192.  The
    # tolerance 2e-4 is about twice the largest total measured at these resolutions (9e-5).
    for a, b, _, m in (p for p in _PAIRS if p[2] == l):
        box, cut = _overlap_box(a, b, l)
        assert cut <= 1.0001e-4
        res = 192 if l == 0 else 96
        va = sample(eigenstate(a, l, m), res, box=box, dtype=np.complex128)
        vb = sample(eigenstate(b, l, m), res, box=box, dtype=np.complex128)
        assert abs(np.vdot(va.values, vb.values)) * va.voxel_volume_a0_3 < 2e-4, (a, b, l, m)


def test_lattice_overlaps_of_different_l_or_m_vanish():
    # All 14 states with n <= 3 on one lattice: pairs that differ in l or m are orthogonal
    # through the angular part (cos/sin parities and e^{i m phi}); the overlaps, divided by
    # the lattice norms, vanish to round-off by the mirror symmetries of the lattice, except
    # for m - m' = +-4: a cube is invariant under 90-degree turns only, so e^{4 i phi} sums
    # to the discretisation error (1e-5 here), not to zero.  Same-(l, m) pairs are the
    # radial test above.
    states = [(n, l, m) for n in range(1, 4) for l in range(n) for m in range(-l, l + 1)]
    box = default_box(eigenstate(3, 0, 0))
    v = np.array([sample(eigenstate(*s), 64, box=box, dtype=np.complex128).values.ravel()
                  for s in states])
    gram = np.conj(v) @ v.T
    cosine = np.abs(gram) / np.sqrt(np.outer(gram.diagonal().real, gram.diagonal().real))
    for i, (_, li, mi) in enumerate(states):
        for j, (_, lj, mj) in enumerate(states):
            if (li, mi) != (lj, mj):
                tolerance = 1e-4 if (mi - mj) % 4 == 0 else 1e-12
                assert cosine[i, j] < tolerance, (states[i], states[j], cosine[i, j])


def test_memory_refusal_names_the_largest_resolution(monkeypatch):
    monkeypatch.setattr(memory, "available_bytes", lambda: 200 * 2**20)
    with pytest.raises(MemoryLimitError, match=r"the largest resolution that fits is (\d+)") as err:
        sample(eigenstate(2, 1, 0), 1024)
    largest = int(re.search(r"fits is (\d+)", str(err.value)).group(1))
    # The named resolution must itself be accepted, and one more point per axis refused.
    memory.require_lattice_memory(largest, np.complex64, sample.__globals__["_CHUNK_BYTES"])
    with pytest.raises(MemoryLimitError):
        memory.require_lattice_memory(largest + 1, np.complex64, sample.__globals__["_CHUNK_BYTES"])


@pytest.mark.parametrize("kwargs", [{"resolution": 4}, {"dtype": np.float32}])
def test_bad_sampling_options_are_refused(kwargs):
    with pytest.raises(ValueError):
        sample(eigenstate(1, 0, 0), **kwargs)
