"""Physical constants and unit conversions, all taken from scipy.constants (CODATA).

Nothing here is typed in by hand: each value is looked up in
``scipy.constants.physical_constants`` by its CODATA name.
"""

from __future__ import annotations

import math

from scipy.constants import physical_constants as _pc

from .limits import check_nucleus_mass_ratio

__all__ = [
    "HARTREE_EV",
    "BOHR_RADIUS_M",
    "AU_TIME_S",
    "NUCLEUS_PRESETS",
    "LENGTH_UNITS_PER_A0",
    "reduced_mass_ratio",
    "nucleus_reduced_mass_ratio",
    "femtoseconds_to_au",
    "a0_to",
    "UNIT_LABELS",
    "unit_label",
]

HARTREE_EV: float = _pc["Hartree energy in eV"][0]
BOHR_RADIUS_M: float = _pc["Bohr radius"][0]
AU_TIME_S: float = _pc["atomic unit of time"][0]
_PROTON_ME: float = _pc["proton-electron mass ratio"][0]
_MUON_ME: float = _pc["muon-electron mass ratio"][0]
_DEUTERON_ME: float = _pc["deuteron-electron mass ratio"][0]

#: Named two-body systems: (orbiting-particle mass, nucleus mass), both in m_e.
NUCLEUS_PRESETS: dict[str, tuple[float, float]] = {
    "infinite": (1.0, math.inf),
    "hydrogen": (1.0, _PROTON_ME),
    "deuterium": (1.0, _DEUTERON_ME),
    "positronium": (1.0, 1.0),
    "muonic-hydrogen": (_MUON_ME, _PROTON_ME),
}

#: How many of each length unit make one Bohr radius.
LENGTH_UNITS_PER_A0: dict[str, float] = {
    "a0": 1.0,
    "angstrom": BOHR_RADIUS_M * 1e10,
    "nm": BOHR_RADIUS_M * 1e9,
    "pm": BOHR_RADIUS_M * 1e12,
}


def reduced_mass_ratio(particle_mass_me: float = 1.0, nucleus_mass_me: float = math.inf) -> float:
    """mu / m_e for a particle of mass m bound to a nucleus of mass M (both in m_e).

    mu = m M / (m + M); an infinite M gives mu = m.

    Examples
    --------
    >>> reduced_mass_ratio(1.0, 1.0)  # positronium
    0.5
    """
    if particle_mass_me <= 0 or nucleus_mass_me <= 0:
        raise ValueError("masses must be positive")
    if math.isinf(nucleus_mass_me):
        return float(particle_mass_me)
    return particle_mass_me * nucleus_mass_me / (particle_mass_me + nucleus_mass_me)


def nucleus_reduced_mass_ratio(name_or_ratio: str | float) -> float:
    """mu / m_e from a preset name (see ``NUCLEUS_PRESETS``) or a nucleus-to-electron mass ratio.

    Examples
    --------
    >>> nucleus_reduced_mass_ratio("infinite")
    1.0
    >>> nucleus_reduced_mass_ratio(1.0)
    0.5
    """
    if isinstance(name_or_ratio, str):
        key = name_or_ratio.strip().lower()
        if key in NUCLEUS_PRESETS:
            return reduced_mass_ratio(*NUCLEUS_PRESETS[key])
        try:
            name_or_ratio = float(key)
        except ValueError:
            raise ValueError(
                f"unknown nucleus {name_or_ratio!r}: use one of "
                f"{', '.join(NUCLEUS_PRESETS)} or a nucleus-to-electron mass ratio") from None
    return reduced_mass_ratio(1.0, check_nucleus_mass_ratio(name_or_ratio))


def femtoseconds_to_au(t_fs: float) -> float:
    """Convert a time in femtoseconds to atomic units of time (hbar / E_h)."""
    return t_fs * 1e-15 / AU_TIME_S


def a0_to(unit: str) -> float:
    """Factor that turns a length in a0 into `unit` (a0, angstrom, nm or pm)."""
    try:
        return LENGTH_UNITS_PER_A0[unit]
    except KeyError:
        raise ValueError(f"unknown length unit {unit!r}: use one of "
                         f"{', '.join(LENGTH_UNITS_PER_A0)}") from None


#: Axis-label text (matplotlib mathtext) of each length unit.
UNIT_LABELS: dict[str, str] = {"a0": "$a_0$", "angstrom": "Å", "nm": "nm", "pm": "pm"}


def unit_label(units: str) -> str:
    """Axis-label text of a length unit.

    Examples
    --------
    >>> unit_label("angstrom")
    'Å'
    """
    a0_to(units)  # raises a clear ValueError for an unknown unit
    return UNIT_LABELS[units]
