"""Physical constants and unit conversions, all taken from scipy.constants (CODATA).

Nothing here is typed in by hand: each value is looked up in
``scipy.constants.physical_constants`` by its CODATA name, on first use (module
attributes resolved by :func:`__getattr__`), so that importing this module, naming its
units and presets or converting a0 to a0 does not load scipy (about 0.13 s).
"""

from __future__ import annotations

import math
from functools import cache

from .limits import check_nucleus_mass_ratio

__all__ = [
    "HARTREE_EV",  # noqa: F822 - resolved by __getattr__
    "BOHR_RADIUS_M",  # noqa: F822 - resolved by __getattr__
    "AU_TIME_S",  # noqa: F822 - resolved by __getattr__
    "NUCLEUS_NAMES",
    "NUCLEUS_PRESETS",  # noqa: F822 - resolved by __getattr__
    "LENGTH_UNITS",
    "LENGTH_UNITS_PER_A0",  # noqa: F822 - resolved by __getattr__
    "reduced_mass_ratio",
    "nucleus_reduced_mass_ratio",
    "femtoseconds_to_au",
    "a0_to",
    "UNIT_LABELS",
    "unit_label",
]

#: Length units of axes, scale bars and mesh coordinates.
LENGTH_UNITS = ("a0", "angstrom", "nm", "pm")
#: Each length unit per metre (SI prefixes, exact); a0 is taken from CODATA.
_UNITS_PER_M = {"angstrom": 1e10, "nm": 1e9, "pm": 1e12}
#: Named two-body systems (see :data:`NUCLEUS_PRESETS` for their masses).
NUCLEUS_NAMES = ("infinite", "hydrogen", "deuterium", "positronium", "muonic-hydrogen")
#: Module attributes and the CODATA name each is read from.
_CODATA_NAMES = {
    "HARTREE_EV": "Hartree energy in eV",
    "BOHR_RADIUS_M": "Bohr radius",
    "AU_TIME_S": "atomic unit of time",
}


@cache
def _codata(name: str) -> float:
    """The CODATA value called `name` (scipy.constants.physical_constants, SI units)."""
    from scipy.constants import physical_constants

    return float(physical_constants[name][0])


@cache
def _presets() -> dict[str, tuple[float, float]]:
    proton, muon = _codata("proton-electron mass ratio"), _codata("muon-electron mass ratio")
    masses = [(1.0, math.inf), (1.0, proton), (1.0, _codata("deuteron-electron mass ratio")), (1.0, 1.0),
              (muon, proton)]
    return dict(zip(NUCLEUS_NAMES, masses))


@cache
def _length_units() -> dict[str, float]:
    a0_m = _codata("Bohr radius")
    return {unit: 1.0 if unit == "a0" else a0_m * _UNITS_PER_M[unit] for unit in LENGTH_UNITS}


def __getattr__(name: str):
    """HARTREE_EV, BOHR_RADIUS_M, AU_TIME_S (SI), NUCLEUS_PRESETS (orbiting-particle mass and
    nucleus mass, both in m_e, by preset name) and LENGTH_UNITS_PER_A0 (how many of each
    length unit make one Bohr radius), looked up in CODATA on first use."""
    if name in _CODATA_NAMES:
        return _codata(_CODATA_NAMES[name])
    if name == "NUCLEUS_PRESETS":
        return _presets()
    if name == "LENGTH_UNITS_PER_A0":
        return _length_units()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


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
        if key in NUCLEUS_NAMES:
            return reduced_mass_ratio(*_presets()[key])
        try:
            name_or_ratio = float(key)
        except ValueError:
            raise ValueError(
                f"unknown nucleus {name_or_ratio!r}: use one of "
                f"{', '.join(NUCLEUS_NAMES)} or a nucleus-to-electron mass ratio") from None
    return reduced_mass_ratio(1.0, check_nucleus_mass_ratio(name_or_ratio))


def femtoseconds_to_au(t_fs: float) -> float:
    """Convert a time in femtoseconds to atomic units of time (hbar / E_h)."""
    return t_fs * 1e-15 / _codata("atomic unit of time")


def a0_to(unit: str) -> float:
    """Factor that turns a length in a0 into `unit` (a0, angstrom, nm or pm).

    Examples
    --------
    >>> a0_to("a0"), round(a0_to("pm"), 4)  # CODATA 2018: a0 = 52.9177 pm
    (1.0, 52.9177)
    """
    if unit not in LENGTH_UNITS:
        raise ValueError(f"unknown length unit {unit!r}: use one of {', '.join(LENGTH_UNITS)}")
    return 1.0 if unit == "a0" else _length_units()[unit]


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
