"""Constants and conversions against scipy.constants (CODATA)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants
from scipy.constants import physical_constants

from orbitalrender.state import units


def test_constants_are_the_codata_values():
    assert units.HARTREE_EV == physical_constants["Hartree energy in eV"][0]
    assert units.BOHR_RADIUS_M == physical_constants["Bohr radius"][0]
    # The atomic unit of time is hbar / E_h (CODATA definition).
    assert np.isclose(units.AU_TIME_S, constants.hbar / physical_constants["Hartree energy"][0], rtol=1e-9)


def test_length_conversions():
    # a0 = 0.529177 angstrom (CODATA 2018, from memory), and the SI prefixes.
    assert np.isclose(units.a0_to("angstrom"), 0.529177210, rtol=1e-8)
    assert np.isclose(units.a0_to("nm") * 10, units.a0_to("angstrom"))
    assert np.isclose(units.a0_to("pm"), units.a0_to("nm") * 1000)
    assert units.a0_to("a0") == 1.0
    with pytest.raises(ValueError, match="unknown length unit"):
        units.a0_to("furlong")


def test_reduced_mass_presets():
    # mu = m M / (m + M) with CODATA mass ratios.
    mp = physical_constants["proton-electron mass ratio"][0]
    md = physical_constants["deuteron-electron mass ratio"][0]
    mmu = physical_constants["muon-electron mass ratio"][0]
    assert units.nucleus_reduced_mass_ratio("infinite") == 1.0
    assert units.nucleus_reduced_mass_ratio("positronium") == 0.5
    assert np.isclose(units.nucleus_reduced_mass_ratio("Hydrogen"), mp / (1 + mp), rtol=1e-15)
    assert np.isclose(units.nucleus_reduced_mass_ratio("deuterium"), md / (1 + md), rtol=1e-15)
    assert np.isclose(units.nucleus_reduced_mass_ratio("muonic-hydrogen"), mmu * mp / (mmu + mp), rtol=1e-15)
    assert np.isclose(units.nucleus_reduced_mass_ratio("1836.15267343"), mp / (1 + mp), rtol=1e-10)
    assert units.nucleus_reduced_mass_ratio(math.inf) == 1.0


@pytest.mark.parametrize("bad", ["tritium-ish", "", "-3", "0"])
def test_bad_nucleus_is_refused(bad):
    with pytest.raises(ValueError):
        units.nucleus_reduced_mass_ratio(bad)


def test_femtoseconds():
    # 1 fs = 41.341374 atomic units of time (CODATA 2018, from memory).
    assert np.isclose(units.femtoseconds_to_au(1.0), 41.341374, rtol=1e-7)
    assert units.femtoseconds_to_au(0.0) == 0.0
