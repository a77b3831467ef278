"""Property-based tests (hypothesis) over random states, fractions, STATE strings and configs.

Norms and overlaps are integrated with a product rule of our own, independent of the
project's quadratures: Gauss-Legendre in r (panels) and in cos(theta), and the
trapezoid rule in phi, which is exact for the trigonometric polynomials e^{i k phi},
|k| < number of nodes (standard results, e.g. Davis & Rabinowitz, Methods of Numerical
Integration, 1984).  Orthonormality of |n l m> on one centre is the textbook result
(any quantum-mechanics text; distinct eigenvalues of commuting H, L^2, L_z).
Closedness is checked with trimesh (``is_watertight``).  The examples are kept few
(max_examples) so the whole file runs in well under a minute.
"""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest
import trimesh
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.special import roots_legendre

from orbitalrender.cli import main
from orbitalrender.gallery.config import load_config, parse_config
from orbitalrender.lattice.grid import Lattice
from orbitalrender.lattice.sampler import sample
from orbitalrender.state.model import State, eigenstate, real_orbital, superpose
from orbitalrender.state.notation import parse_state
from orbitalrender.state.phase import is_real
from orbitalrender.state.radial import radius_holding
from orbitalrender.surface.extract import extract_surface
from orbitalrender.surface.level import level_for_fraction

# The profile (tests/conftest.py) sets derandomization, deadline and database; SOME takes its
# number of examples, FEW (tests that sample whole lattices) a fifth of it.
SOME = settings()
FEW = settings(max_examples=max(1, settings.default.max_examples // 5))


# -- strategies --------------------------------------------------------------------------------
@st.composite
def nlm(draw, n_max: int = 7):
    n = draw(st.integers(1, n_max))
    l = draw(st.integers(0, n - 1))
    m = draw(st.integers(-l, l))
    return n, l, m


@st.composite
def orbital(draw, Z: float, n_max: int = 7) -> State:
    n, l, m = draw(nlm(n_max))
    make = draw(st.sampled_from([eigenstate, real_orbital]))
    return make(n, l, m, Z=Z)


z_values = st.floats(0.5, 10.0, allow_nan=False)
coefficients = st.complex_numbers(min_magnitude=0.2, max_magnitude=2.0, allow_nan=False,
                                  allow_infinity=False)


@st.composite
def one_centre_state(draw, n_max: int = 7) -> State:
    """A normalised superposition of 1-3 distinct orbitals on one centre, real or complex."""
    Z = draw(z_values)
    parts = draw(st.lists(orbital(Z, n_max), min_size=1, max_size=3,
                          unique_by=lambda s: (s.terms[0].n, s.terms[0].l, s.terms[0].m, is_real(s))))
    if draw(st.booleans()):  # real coefficients keep a superposition of real orbitals real
        cs = [complex(draw(st.floats(0.2, 2.0)) * draw(st.sampled_from([1, -1]))) for _ in parts]
    else:
        cs = [draw(coefficients) for _ in parts]
    return parts[0] if len(parts) == 1 else superpose(list(zip(cs, parts)))


# -- an independent product quadrature on one centre ----------------------------------------------
def _sphere_rule(terms, Z: float):
    """Points (x, y, z) and weights of a product rule about the origin that integrates
    psi_a* psi_b of these terms exactly in angle, and to ~1e-10 in r."""
    l_max = max(t.l for t in terms)
    m_max = max(abs(t.m) for t in terms)
    r_max = max(radius_holding(t.n, t.l, 1 - 1e-13, Z) for t in terms)
    xr, wr = roots_legendre(32)
    panels = 24
    edges = np.linspace(0.0, r_max, panels + 1)
    half = 0.5 * np.diff(edges)
    r = ((0.5 * (edges[1:] + edges[:-1]))[:, None] + half[:, None] * xr).ravel()
    w_r = (half[:, None] * wr).ravel() * r**2
    c, w_c = roots_legendre(l_max + 2)  # exact for polynomials of degree 2 l_max + 3 in cos(theta)
    n_phi = 2 * m_max + 2  # exact for e^{i k phi}, |k| <= 2 m_max
    phi = 2 * np.pi * np.arange(n_phi) / n_phi
    w_phi = np.full(n_phi, 2 * np.pi / n_phi)
    R, C, P = np.meshgrid(r, c, phi, indexing="ij")
    S = np.sqrt(1 - C**2)
    W = w_r[:, None, None] * w_c[None, :, None] * w_phi[None, None, :]
    return (R * S * np.cos(P)).ravel(), (R * S * np.sin(P)).ravel(), (R * C).ravel(), W.ravel()


def _inner(a: State, b: State) -> complex:
    """<a|b> by the product rule (both on the origin, same Z)."""
    x, y, z, w = _sphere_rule(a.terms + b.terms, a.Z)
    return complex(np.sum(np.conj(a.psi(x, y, z)) * b.psi(x, y, z) * w))


@FEW
@given(one_centre_state())
def test_random_states_are_normalised(state):
    assert abs(_inner(state, state) - 1.0) < 1e-8


@FEW
@given(z_values, nlm(), nlm(), st.booleans())
def test_distinct_orbitals_on_one_centre_are_orthogonal(Z, a, b, real):
    if a == b:
        return
    make = real_orbital if real else eigenstate
    overlap = _inner(make(*a, Z=Z), make(*b, Z=Z))
    assert abs(overlap) < 1e-8, (a, b, overlap)


# -- the level and the enclosed fraction ---------------------------------------------------------
@FEW
@given(z_values, nlm(), st.sampled_from([eigenstate, real_orbital]),
       st.lists(st.floats(0.02, 0.98), min_size=2, max_size=4, unique=True))
def test_enclosed_fraction_grows_with_f_for_orbitals(Z, q, make, fractions):
    state = make(*q, Z=Z)
    results = [level_for_fraction(state, f) for f in sorted(fractions)]
    levels = [r.level for r in results]
    enclosed = [r.fraction_enclosed for r in results]
    assert all(b < a for a, b in zip(levels, levels[1:]))  # larger F, lower level
    assert all(b > a for a, b in zip(enclosed, enclosed[1:]))
    assert all(abs(r.fraction_enclosed - r.fraction_requested) < 1e-3 for r in results)


def _as_field(state: State, resolution: int) -> Lattice:
    lattice = sample(state, resolution)
    return Lattice(lattice.values, lattice.origin_a0, lattice.spacing_a0, None)


@FEW
@given(one_centre_state(n_max=4), st.lists(st.floats(0.05, 0.95), min_size=2, max_size=3, unique=True))
def test_enclosed_fraction_grows_with_f_for_superpositions_on_a_lattice(state, fractions):
    field = _as_field(state, 32)
    results = []
    for f in sorted(fractions):
        try:
            results.append(level_for_fraction(field, f))
        except ValueError as exc:
            # refused only when one lattice point already holds a share of about F
            assert "too small to resolve" in str(exc)
            density = field.density().astype(np.float64)
            assert density.max() / density.sum() > 0.5 * f
    levels = [r.level for r in results]
    enclosed = [r.fraction_enclosed for r in results]
    assert all(b <= a for a, b in zip(levels, levels[1:]))
    assert all(b >= a for a, b in zip(enclosed, enclosed[1:]))


# -- closed surfaces ----------------------------------------------------------------------------
def _closed(surface) -> bool:
    return trimesh.Trimesh(surface.vertices_a0, surface.faces, process=False).is_watertight


@FEW
@given(z_values, nlm(n_max=5), st.sampled_from([eigenstate, real_orbital]), st.floats(0.05, 0.95))
def test_surfaces_of_random_orbitals_are_closed(Z, q, make, fraction):
    s = extract_surface(make(*q, Z=Z), fraction, resolution=40)
    assert len(s.faces) > 0 and _closed(s)


@FEW
@given(one_centre_state(n_max=4), st.floats(0.05, 0.95))
def test_surfaces_of_random_superpositions_are_closed(state, fraction):
    # the field path (no state): the level from the lattice, marching cubes on |psi| or on
    # the signed real field
    field = _as_field(state, 40)
    try:
        s = extract_surface(field, fraction)
    except ValueError as exc:
        # refused only when no lattice point lies above the level (a set of zero volume)
        assert "empty at this resolution" in str(exc)
        level = level_for_fraction(field, fraction).level
        assert not np.any(field.density() > level)
    else:
        assert len(s.faces) > 0 and _closed(s)


# -- random mutations never give a traceback ----------------------------------------------------
VALID_STATES = ["3,2,-1", "3dz2", "2p_z", "1s@(0,0,-0.7) - 1s@(0,0,0.7)", "0.6*2,1,1 + 0.8i*2,1,-1",
                "real(4,3,-2)", "(0.6+0.8i)*3,1,0 - 2s", "4fxyz + 4fz(x2-y2)"]
ALPHABET = "0123456789,.+-*@()spdfxyzij e_/\\\"'\n\t#%é∞"


@st.composite
def mutated(draw, seeds: list[str], alphabet: str = ALPHABET) -> str:
    text = draw(st.sampled_from(seeds))
    for _ in range(draw(st.integers(1, 4))):
        pos = draw(st.integers(0, len(text)))
        op = draw(st.sampled_from(["insert", "delete", "replace", "duplicate"]))
        ch = draw(st.sampled_from(alphabet))
        if op == "insert":
            text = text[:pos] + ch + text[pos:]
        elif op == "delete":
            text = text[:pos] + text[pos + 1:]
        elif op == "replace":
            text = text[:pos] + ch + text[pos + 1:]
        else:
            text = text[:pos] + text[pos:pos + draw(st.integers(1, 6))] + text[pos:]
    return text


def _one_line(exc: Exception) -> bool:
    return "\n" not in str(exc) and len(str(exc)) > 10


@SOME
@given(mutated(VALID_STATES), z_values)
def test_mutated_state_strings_parse_or_raise_a_one_line_value_error(text, Z):
    try:
        state = parse_state(text, Z=Z)
    except ValueError as exc:
        assert _one_line(exc), repr(str(exc))
    else:
        assert isinstance(state, State)
        assert math.isfinite(state.extent_a0())


VALID_CONFIG = '''title = "Kestrel Ridge open day"

[defaults]
fraction = 0.9
resolution = 48
Z = 1

[[outputs]]
name = "shell2"
kind = "layout"
states = ["2s", "2px", "2py", "2pz"]

[[outputs]]
name = "ring"
kind = "figure"
state = "3,2,2"
cutaway = "front"
width_px = 400
height_px = 300

[[outputs]]
name = "cut"
kind = "section"
state = "3dz2"
plane = "xz"
pixels = 128

[[outputs]]
name = "model"
kind = "mesh"
state = "2pz"
size_mm = 60
printable = true

[[outputs]]
name = "radial"
kind = "radial"
states = ["1s", "2s", "3s"]
quantity = ["R", "density"]
'''
_VALUES = ['0', '-1', '1.5', 'nan', 'inf', '1e309', '"2pz"', '"2,9,0"', 'true', '[1, 2]', '[]', '""',
           '"front"', '{a = 1}', '4096', '"../x.png"', '"a b"', '1979-05-27', "'x'", '"9x"']


@st.composite
def mutated_config(draw) -> str:
    lines = VALID_CONFIG.splitlines()
    for _ in range(draw(st.integers(1, 3))):
        i = draw(st.integers(0, len(lines) - 1))
        op = draw(st.sampled_from(["value", "drop", "duplicate", "chars", "key"]))
        if op == "value" and " = " in lines[i]:
            lines[i] = lines[i].split(" = ")[0] + " = " + draw(st.sampled_from(_VALUES))
        elif op == "drop":
            del lines[i]
        elif op == "duplicate":
            lines.insert(i, lines[i])
        elif op == "key" and " = " in lines[i]:
            key = draw(st.sampled_from(["pixels", "fraction", "kind", "name", "file", "states", "state",
                                        "resolution", "box_a0", "Z", "nucleus", "field", "bogus"]))
            lines[i] = key + " = " + lines[i].split(" = ", 1)[1]
        else:
            lines[i] = draw(mutated([lines[i] or " "], ALPHABET + "[]=\"'"))
        if not lines:
            lines = [""]
    return "\n".join(lines) + "\n"


@SOME
@given(mutated_config())
def test_mutated_configs_validate_or_raise_a_one_line_value_error(text):
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        return  # the loader turns this into a config error (test_reliability_cli checks the message)
    try:
        config = parse_config(data, "open-day.toml")
    except ValueError as exc:
        assert _one_line(exc), repr(str(exc))
        assert str(exc).startswith("open-day.toml"), str(exc)
    else:
        assert len(config.outputs) >= 1


@settings(max_examples=max(1, settings.default.max_examples * 5 // 12),
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(mutated(VALID_STATES[:3] + VALID_STATES[4:]))
def test_mutated_states_on_the_command_line_give_status_0_or_2_never_a_traceback(capsys, text):
    # (the two-centre seed is left out: each of its valid mutants costs a Becke quadrature)
    try:
        status = main(["describe", text, "--json"])
    except SystemExit as exc:  # argparse: a STATE that starts like an option
        status = exc.code
    out, err = capsys.readouterr()
    assert status in (0, 2), err
    assert "Traceback" not in err
    if status == 2:
        assert len(err.strip().splitlines()) == 1


@SOME
@given(st.binary(min_size=1, max_size=4), st.integers(0, len(VALID_CONFIG.encode())), st.booleans())
def test_config_files_with_random_bytes_load_or_raise_a_config_error(tmp_path_factory, junk, at, replace):
    data = VALID_CONFIG.encode()
    data = data[:at] + junk + data[at + (len(junk) if replace else 0):]
    path = tmp_path_factory.mktemp("cfg") / "open-day.toml"
    path.write_bytes(data)
    try:
        config = load_config(path)
    except ValueError as exc:
        assert _one_line(exc) and "open-day.toml" in str(exc), repr(str(exc))
    else:
        assert len(config.outputs) >= 1


@pytest.mark.parametrize("text", VALID_STATES)
def test_the_seed_states_are_valid(text):
    assert isinstance(parse_state(text), State)


def test_the_seed_config_is_valid():
    assert len(parse_config(tomllib.loads(VALID_CONFIG), "open-day.toml").outputs) == 5
