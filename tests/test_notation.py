"""The STATE notation: every form in the module docstring, and clear errors for malformed text."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from orbitalrender.state.model import eigenstate, real_orbital, superpose
from orbitalrender.state.notation import REAL_LABELS, StateSyntaxError, parse_state

_P = np.array([[0.3, -1.1, 0.7], [2.0, 0.5, -1.5], [-0.4, 0.9, 2.2]]).T


def _same(a, b):
    assert np.allclose(a.psi(*_P), b.psi(*_P), rtol=1e-12, atol=1e-15)


def test_eigenstate_triples():
    _same(parse_state("3,2,-1"), eigenstate(3, 2, -1))
    _same(parse_state("(3,2,-1)"), eigenstate(3, 2, -1))
    _same(parse_state(" 3 , 2 , -1 "), eigenstate(3, 2, -1))


def test_real_forms():
    _same(parse_state("real(3,2,-2)"), real_orbital(3, 2, -2))
    for key, (l, m) in REAL_LABELS.items():
        n = l + 2
        for text in (f"{n}{key}", f"{n}{key[0]}_{key[1:]}"):
            s = parse_state(text)
            _same(s, real_orbital(n, l, m))
            assert s.label == f"{n}{key}"


def test_superpositions_coefficients_and_centres():
    s = parse_state("0.6*2,1,1 + 0.8i*2,1,-1")
    _same(s, superpose([(0.6, eigenstate(2, 1, 1)), (0.8j, eigenstate(2, 1, -1))]))
    _same(parse_state("(0.6+0.8i)*1s - 2pz"),
          superpose([(0.6 + 0.8j, eigenstate(1, 0, 0)), (-1, real_orbital(2, 1, 0))]))
    _same(parse_state("i*2px + 2py"), superpose([(1j, real_orbital(2, 1, 1)), (1, real_orbital(2, 1, -1))]))
    assert np.allclose(parse_state("1j*2s").psi(*_P), 1j * eigenstate(2, 0, 0).psi(*_P))  # phase kept
    h2 = parse_state("1s@(0,0,-0.7) + 1s@(0,0,0.7)")
    assert h2.centres_a0 == ((0.0, 0.0, -0.7), (0.0, 0.0, 0.7))
    assert parse_state("-1s").terms[0].coefficient == -1


def test_physics_options_reach_the_state():
    s = parse_state("2pz", Z=3.0, reduced_mass_ratio=0.5, time_au=2.0)
    assert (s.Z, s.reduced_mass_ratio, s.time_au) == (3.0, 0.5, 2.0)


@pytest.mark.parametrize("text,words", [
    ("", "empty"),
    ("   ", "empty"),
    ("3,2", "expected ','"),
    ("3,2,1,", "expected '+', '-' or the end"),
    ("3dq", "unknown d orbital label"),
    ("2d_xy", "does not exist"),
    ("3x", "orbital letter"),
    ("1s@(0,0)", "expected ','"),
    ("1s@(0,0,a)", "number for z"),
    ("(1+q)*1s", "complex coefficient"),
    ("1s + * 2s", "expected an integer n"),
    ("1s 2s", "expected '+', '-' or the end"),
])
def test_malformed_text_names_the_problem_and_the_position(text, words):
    with pytest.raises(StateSyntaxError, match=re.escape(words)) as err:
        parse_state(text)
    if text.strip():
        assert "position" in str(err.value)


@pytest.mark.parametrize("text", ["0,0,0", "2,2,0", "2,1,-2", "1s - 1s"])
def test_impossible_states_are_value_errors(text):
    with pytest.raises(ValueError):
        parse_state(text)


def test_nonpositive_z_and_non_text_are_refused():
    with pytest.raises(ValueError, match="Z must be from 0.01 to 137"):
        parse_state("1s", Z=0)
    with pytest.raises(StateSyntaxError):
        parse_state(3)


def test_time_gives_a_superposition_its_phases():
    # Each term carries e^{-i E_n t}; at t = pi / (E_2 - E_1) the 1s - 2s interference flips sign.
    t = math.pi / 0.375
    a, b = parse_state("1s + 2s"), parse_state("1s + 2s", time_au=t)
    c = parse_state("1s - 2s")
    assert np.allclose(b.density(*_P), c.density(*_P), rtol=1e-10)
    assert not np.allclose(a.density(*_P), b.density(*_P))
