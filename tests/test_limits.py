"""Supported ranges (orbitalrender.state.limits): valid-looking extreme numbers are refused
at once with status 2 and a message that names the limit, instead of a search without
end, memory exhaustion or an internal error.

The commands run in real subprocesses with a time limit, so a search without end fails
the test instead of hanging the suite.  The bounds themselves are the tool's own
choices (the reasons are in orbitalrender/state/limits.py); the physics behind the Z
bound (Z alpha < 1 for a Dirac point-nucleus 1s state, alpha from scipy.constants) is
checked here.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from scipy.constants import fine_structure

from orbitalrender import eigenstate
from orbitalrender.state import limits
from orbitalrender.state.radial import radius_holding
from orbitalrender.surface.level import level_for_fraction

REPO = Path(__file__).resolve().parents[1]


def _cli(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO), MPLBACKEND="Agg")
    return subprocess.run([sys.executable, "-m", "orbitalrender", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=120)


F_NEAR_ONE = "0.999999999999"
_GALLERY = '[[outputs]]\nname = "p"\nkind = "figure"\nstate = "2pz"\nfraction = 0.999999999999\n'


@pytest.mark.parametrize("argv, fragment", [
    (["describe", "2pz", "--fraction", F_NEAR_ONE], "(0, 0.9999]"),
    (["figure", "2pz", "--fraction", F_NEAR_ONE, "--out", "f.png"], "(0, 0.9999]"),
    (["section", "2pz", "--fraction", F_NEAR_ONE, "--out", "s.png"], "(0, 0.9999]"),
    (["mesh", "2pz", "--fraction", F_NEAR_ONE, "--out", "m.stl"], "(0, 0.9999]"),
    (["radial", "2pz", "--fraction", "0.9999999999999999", "--out", "r.png"], "(0, 0.9999]"),
    (["gallery", "g.toml", "--out", "out"], "key 'fraction' must be a number in (0, 0.9999]"),
    (["describe", "2pz", "--Z", "1e-300"], "Z must be a number in [0.01, 137]"),
    (["figure", "2pz", "--Z", "1e-300", "--out", "f.png"], "Z must be a number in [0.01, 137]"),
    (["describe", "2pz", "--nucleus", "1e-200"], "must be at least 1"),
    (["radial", "2pz", "--nucleus", "1e-200", "--out", "r.png"], "must be at least 1"),
    (["describe", "201,0,0"], "n must be at most 200"),
    (["describe", "1s@(1e300,0,0) + 1s"], "within 10000 a0 of the origin"),
    (["describe", "(nan+1i)*1s + 2pz"], "finite"),
    (["radial", "1e309*2pz + 2pz", "--out", "r.png"], "finite"),
])
def test_extreme_numbers_are_refused_quickly_with_status_2(argv, fragment, tmp_path):
    (tmp_path / "g.toml").write_text(_GALLERY, encoding="utf-8")
    done = _cli(*argv, cwd=tmp_path)
    assert done.returncode == 2, done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and fragment in lines[0], done.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["g.toml"]  # nothing written


def test_the_z_bound_is_where_z_alpha_reaches_one():
    # Dirac point-nucleus 1s energy m c^2 sqrt(1 - (Z alpha)^2) is real only for Z alpha <= 1
    # (Bethe and Salpeter, section 14); alpha from scipy.constants (CODATA).
    assert limits.Z_RANGE[1] == pytest.approx(1.0 / fine_structure, abs=0.04)


def test_the_largest_fraction_still_has_a_surface():
    result = level_for_fraction(eigenstate(2, 1, 0), limits.FRACTION_MAX)
    assert abs(result.fraction_enclosed - limits.FRACTION_MAX) < 1e-5


def test_a_radius_search_for_a_fraction_a_float_cannot_reach_stops():
    # 1 - 1e-16 rounds to the largest double below 1; the quadrature sum never reaches it
    with pytest.raises(ValueError, match="no radius holds"):
        radius_holding(2, 1, 0.9999999999999999)


@pytest.mark.parametrize("Z, ratio", [(limits.Z_RANGE[0], limits.REDUCED_MASS_RATIO_RANGE[0]),
                                      (limits.Z_RANGE[1], limits.REDUCED_MASS_RATIO_RANGE[1])])
def test_the_corners_of_the_ranges_give_finite_radii(Z, ratio):
    # <r> scales as n^2 a_mu / Z (Bethe and Salpeter, eq. 3.26), so R_90 of 1s does too:
    # 2.6612 a0 at Z = mu/m_e = 1 (1 - e^{-2x}(1 + 2x + 2x^2) = 0.9, solved by hand).
    assert radius_holding(1, 0, 0.9, Z, ratio) == pytest.approx(2.6612 / (Z * ratio), rel=1e-4)
