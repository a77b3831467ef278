"""Edge cases of the pipeline: extreme fractions, n = 20, Z = 92, cancelling superpositions,
bad user fields, and requests too big for memory (refused before anything big is allocated).

References
----------
[BS] H. A. Bethe and E. E. Salpeter, Quantum Mechanics of One- and Two-Electron Atoms
     (1957), eq. (3.1) energy E_n = -Z^2/(2 n^2) hartree and eq. (3.24)
     <r> = (3 n^2 - l(l+1)) / (2 Z) a0.
1s cumulative probability P(r < R) = 1 - e^{-2R}(1 + 2R + 2R^2) (R in a0/Z): integral of
     4 r^2 e^{-2r}, any handbook table of hydrogen radial functions.
Closedness is checked with trimesh (``Trimesh.is_watertight``: every edge in exactly two faces).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tracemalloc
from pathlib import Path

import numpy as np
import pytest
import trimesh
from scipy.optimize import brentq
from scipy.special import assoc_laguerre, gammaln

from orbitalrender.cli import main
from orbitalrender.lattice import memory
from orbitalrender.lattice.grid import Box, Lattice
from orbitalrender.lattice.sampler import sample
from orbitalrender.lattice.userfield import load_field
from orbitalrender.state.model import eigenstate, superpose
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import extract_surface, surface_at_level
from orbitalrender.surface.level import level_for_fraction

MIB = 2**20


def watertight(surface) -> bool:
    return trimesh.Trimesh(surface.vertices_a0, surface.faces, process=False).is_watertight


def radius_1s(fraction: float) -> float:
    """R (a0) with P(r < R) = fraction for 1s, from the closed form above."""
    return brentq(lambda r: 1.0 - np.exp(-2 * r) * (1 + 2 * r + 2 * r * r) - fraction, 1e-6, 50.0)


# -- extreme fractions -------------------------------------------------------------------------
@pytest.mark.parametrize("fraction, box, resolution", [(0.001, Box((0, 0, 0), 0.3), 48),
                                                       (0.999, None, 96)])
def test_extreme_fractions_give_a_closed_sphere_of_the_right_radius(fraction, box, resolution):
    s = extract_surface(eigenstate(1, 0, 0), fraction, resolution, box)
    assert len(s.faces) > 100 and watertight(s)
    r = np.linalg.norm(s.vertices_a0, axis=1)
    expected = radius_1s(fraction)  # 0.0952 a0 and 5.614 a0
    assert r.mean() == pytest.approx(expected, rel=2e-3)
    assert r.std() < 1e-2 * expected
    assert abs(s.fraction_enclosed - fraction) < 1e-4 * max(fraction, 1 - fraction) + 1e-9


@pytest.mark.parametrize("fraction", [0.001, 0.999])
def test_extreme_fractions_of_a_user_field_report_a_small_error(fraction):
    # a 1s field given as numbers only: the lattice is all the level step has
    box = Box((0, 0, 0), 0.3) if fraction < 0.5 else None
    lattice = sample(eigenstate(1, 0, 0), 64, box)
    field = Lattice(lattice.values, lattice.origin_a0, lattice.spacing_a0, None)
    if fraction > 0.5:
        s = extract_surface(field, fraction)
        assert watertight(s)
        r = np.linalg.norm(s.vertices_a0, axis=1)
        # the lattice total is 1 - 1e-4 of the state (default box), so F is of that total
        assert r.mean() == pytest.approx(radius_1s(fraction * (1 - 1e-4)), rel=0.02)
    else:
        # in a 0.3 a0 box the field holds only 2.6 % of 1s: F is a share of that total
        s = extract_surface(field, fraction)
        assert watertight(s)
        inside = 1.0 - np.exp(-2 * 0.3) * (1 + 0.6 + 0.18)  # P(r < 0.3), a lower bound of the box share
        assert np.linalg.norm(s.vertices_a0, axis=1).max() < radius_1s(0.01 * inside) * 1.5
    assert s.fraction_error is not None and s.fraction_error < 0.05 * min(fraction, 1 - fraction) + 1e-3


# -- large n -----------------------------------------------------------------------------------
def test_n20_describe_matches_the_bohr_energy_and_mean_radius(capsys):
    assert main(["describe", "20,19,19", "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["energy_hartree"] == pytest.approx(-1.0 / (2 * 20**2), rel=1e-12)  # [BS] (3.1)
    assert report["mean_radius_a0"] == pytest.approx((3 * 400 - 19 * 20) / 2, rel=1e-9)  # [BS] (3.24)
    assert report["radial_nodes"] == 0 and report["angular_nodes"] == 19


def _density_20_19_19(r, cos_t):
    """|psi_{20,19,19}|^2 from scipy.special: R_nl with the generalised Laguerre polynomial
    (handbook normalisation) and |Y_l^l|^2 = (2l+1)!/(4 pi (2^l l!)^2) sin^{2l} theta."""
    n, l = 20, 19
    rho = 2.0 * r / n
    log_norm = 0.5 * (np.log((2.0 / n) ** 3) + gammaln(n - l) - np.log(2 * n) - gammaln(n + l + 1))
    radial = np.exp(log_norm + l * np.log(rho) - rho / 2) * assoc_laguerre(rho, n - l - 1, 2 * l + 1)
    log_y2 = gammaln(2 * l + 2) - np.log(4 * np.pi) - 2 * (l * np.log(2) + gammaln(l + 1))
    return radial**2 * np.exp(log_y2) * (1 - cos_t**2) ** l


def test_n20_surface_is_a_closed_ring_at_the_right_level():
    s = extract_surface(eigenstate(20, 19, 19), 0.9, 64)
    assert watertight(s)
    mesh = trimesh.Trimesh(s.vertices_a0, s.faces, process=False)
    assert mesh.body_count == 1 and mesh.euler_number == 0  # one torus (genus 1)
    # the ring goes round the most probable radius n^2 = 400 a0 on the equator
    rc = np.hypot(s.vertices_a0[:, 0], s.vertices_a0[:, 1])
    assert rc.min() < 400 < rc.max()
    # the level holds F: integrate the reference density over {rho >= level} on a fine
    # (r, cos theta) grid, midpoint rule
    r = np.linspace(0, 1500, 6001)[1:] - 0.125
    c = np.linspace(-1, 1, 4001)[1:] - 0.00025
    rho = _density_20_19_19(r[:, None], c[None, :])
    weights = 2 * np.pi * r[:, None] ** 2 * 0.25 * 0.0005
    assert np.sum(rho * weights) == pytest.approx(1.0, abs=2e-3)
    assert np.sum(np.where(rho >= s.level, rho, 0) * weights) == pytest.approx(0.9, abs=3e-3)
    # and the vertices lie on it
    rv = np.linalg.norm(s.vertices_a0, axis=1)
    assert np.median(np.abs(_density_20_19_19(rv, s.vertices_a0[:, 2] / rv) / s.level - 1)) < 0.02


def test_n20_with_radial_nodes_gives_a_closed_surface_at_modest_resolution():
    # closed even where the lattice is too coarse for the nodal shells, and the user is told
    from orbitalrender.surface.resolution import LatticeResolutionWarning

    with pytest.warns(LatticeResolutionWarning, match="radial nodes of the \\(20,2\\) shell"):
        s = extract_surface(parse_state("20,2,0"), 0.5, 96)
    assert watertight(s) and len(s.faces) > 0


# -- large Z -----------------------------------------------------------------------------------
def test_z92_lengths_scale_as_1_over_z_and_energy_as_z_squared(capsys):
    a = extract_surface(eigenstate(2, 1, 0), 0.9, 48)
    b = extract_surface(eigenstate(2, 1, 0, Z=92), 0.9, 48)
    assert watertight(b) and len(b.faces) == len(a.faces)
    assert np.allclose(b.vertices_a0 * 92, a.vertices_a0, rtol=0, atol=1e-6 * np.abs(a.vertices_a0).max())
    assert main(["describe", "2,1,0", "--Z", "92", "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["energy_hartree"] == pytest.approx(-92**2 / 8, rel=1e-12)  # [BS] (3.1)
    assert report["mean_radius_a0"] == pytest.approx(5.0 / 92, rel=1e-9)  # [BS] (3.24)


# -- cancelling superpositions -------------------------------------------------------------------
@pytest.mark.parametrize("text", ["1s - 1s", "2pz - 2,1,0", "0.5*3,2,1 - 0.5*3,2,1"])
def test_a_superposition_that_cancels_is_refused(text, capsys):
    with pytest.raises(ValueError, match="zero norm"):
        parse_state(text)
    assert main(["describe", text]) == 2
    assert "zero norm" in capsys.readouterr().err


def test_superpose_refuses_cancelling_parts():
    with pytest.raises(ValueError, match="zero norm"):
        superpose([(1.0, eigenstate(2, 1, 1)), (-1.0, eigenstate(2, 1, 1))])


# -- bad user fields ----------------------------------------------------------------------------
def test_a_field_with_nan_is_refused_naming_the_index(tmp_path):
    values = np.ones((6, 7, 8), dtype=np.complex64)
    values[1, 5, 2] = np.nan + 0j
    np.save(tmp_path / "f.npy", values)
    with pytest.raises(ValueError, match=r"index \(1, 5, 2\)"):
        load_field(tmp_path / "f.npy", 0.5)


def test_an_all_zero_field_is_refused(tmp_path):
    np.savez(tmp_path / "f.npz", values=np.zeros((8, 8, 8)), spacing_a0=0.5)
    with pytest.raises(ValueError, match="zero everywhere"):
        load_field(tmp_path / "f.npz")


def test_a_lattice_with_nan_built_in_python_is_refused_naming_the_index():
    # the same check when the field does not come from a file
    values = np.asarray(sample(eigenstate(2, 1, 0), 24).values).copy()
    values[3, 4, 5] = np.nan
    with pytest.raises(ValueError, match=r"\(3, 4, 5\)"):
        extract_surface(Lattice(values, (0, 0, 0), (0.5,) * 3), 0.5)


def test_a_field_cut_by_its_box_is_refused():
    # 2pz sampled in a box that cuts through its lobes, given as a field
    lattice = sample(eigenstate(2, 1, 0), 32, Box((0, 0, 0), 3.0))
    field = Lattice(lattice.values, lattice.origin_a0, lattice.spacing_a0, None)
    with pytest.raises(ValueError, match="edge of the lattice"):
        extract_surface(field, 0.9)


# -- memory refused before allocation ---------------------------------------------------------
def _peak_while(fn) -> int:
    """Peak bytes traced while `fn()` raises MemoryLimitError (the error is returned too)."""
    tracemalloc.start()
    try:
        with pytest.raises(memory.MemoryLimitError) as info:
            fn()
        return tracemalloc.get_traced_memory()[1], str(info.value)
    finally:
        tracemalloc.stop()


def _budget(monkeypatch, mib: float) -> None:
    """Pretend that `mib` MiB are free (80 % of it may be used)."""
    monkeypatch.setattr(memory, "available_bytes", lambda: int(mib * MIB / 0.8))


def test_sample_refuses_before_allocating(monkeypatch):
    _budget(monkeypatch, 100)
    peak, message = _peak_while(lambda: sample(eigenstate(4, 3, 1), 512))
    assert peak < 4 * MIB
    assert "512^3" in message and "GiB" in message and "largest resolution that fits is" in message


def test_extract_surface_refuses_lattice_and_surface_together_before_sampling(monkeypatch):
    # 200^3: the lattice alone would fit the 160 MiB, with its surface it does not
    _budget(monkeypatch, 160)
    memory.require_lattice_memory(200, chunk_bytes=84 * MIB)  # the sampler's own check passes
    peak, message = _peak_while(lambda: extract_surface(eigenstate(4, 3, 1), 0.9, 200))
    assert peak < 4 * MIB
    largest = int(message.rsplit(" ", 1)[1])
    assert 8 <= largest < 200


def test_surface_of_a_given_lattice_refuses_before_its_work_arrays(monkeypatch):
    lattice = sample(eigenstate(3, 2, 1), 64)
    level = level_for_fraction(lattice, 0.9)
    _budget(monkeypatch, 1)  # 64^3 * 12 B = 3 MiB of work
    peak, message = _peak_while(lambda: surface_at_level(lattice, level))
    assert peak < MIB and "64x64x64" in message


def test_render_refuses_before_its_buffers(monkeypatch):
    from orbitalrender.picture.scene import render_surfaces

    s = extract_surface(eigenstate(2, 1, 0), 0.9, 24)
    _budget(monkeypatch, 2000)
    peak, message = _peak_while(lambda: render_surfaces(s, 8192, 8192, supersample=4))
    assert peak < 4 * MIB
    assert "8192 x 8192 px" in message and "fits" in message


def test_a_field_whose_level_equals_many_of_its_values_gives_a_closed_surface():
    # 1s + i 2s at Z = 2 on a 40^3 lattice: the F = 0.375 level of the field is a value
    # that 24 lattice points share (found by the property tests)
    state = superpose([(0.7474093186836598, eigenstate(1, 0, 0, Z=2.0)),
                       (0.6643638388299198j, eigenstate(2, 0, 0, Z=2.0))])
    lattice = sample(state, 40)
    field = Lattice(lattice.values, lattice.origin_a0, lattice.spacing_a0, None)
    assert watertight(extract_surface(field, 0.375))


def test_a_field_whose_level_is_its_maximum_is_refused_as_empty():
    # F so small that the level is the top value itself: a set of zero volume
    lattice = sample(eigenstate(1, 0, 0), 40)
    field = Lattice(lattice.values, lattice.origin_a0, lattice.spacing_a0, None)
    with pytest.raises(ValueError, match="empty at this resolution"):
        extract_surface(field, 0.0625)


# A real shortage: the child process caps its own address space (RLIMIT_AS, as `ulimit -v`
# does) a few KiB above what it has mapped once numpy and the package are loaded.
_CAPPED = """
import resource, sys
import numpy as np
from orbitalrender.lattice.memory import MemoryLimitError, require_lattice_memory
mapped = next(int(ln.split()[1]) * 1024 for ln in open("/proc/self/status") if ln.startswith("VmSize:"))
resource.setrlimit(resource.RLIMIT_AS, (mapped + int(sys.argv[1]), resource.RLIM_INFINITY))
try:
    require_lattice_memory(64, np.complex64, what="lattice")
except MemoryLimitError as exc:
    print(exc)
"""


@pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="needs Linux /proc")
def test_too_little_free_memory_says_so_instead_of_suggesting_a_useless_resolution():
    # 4 KiB of room is less than an 8^3 lattice needs (it once suggested "the largest
    # resolution that fits is 2"); 64 KiB leaves room for a small lattice, which is named
    repo = Path(__file__).resolve().parents[1]
    said = {}
    for room in (4 * 1024, 64 * 1024):
        done = subprocess.run([sys.executable, "-c", _CAPPED, str(room)], cwd=repo, capture_output=True,
                              text=True, timeout=120, env={**os.environ, "PYTHONPATH": str(repo)})
        assert done.returncode == 0, done.stderr
        said[room] = done.stdout.strip()
    assert "KiB can be used" in said[4096] and "this machine has too little free memory now" in said[4096]
    largest = int(said[65536].rsplit(" ", 1)[1])
    assert 8 <= largest < 64 and "the largest resolution that fits is" in said[65536]
