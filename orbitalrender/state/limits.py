"""State step, supported ranges: the Z, nuclear mass, n, centres and fraction F the tool computes reliably.

Every range is defined here once, with the reason for its bounds; the state layer,
the surface step, the command line and the gallery schema check against these
values, and docs/guide.md states them.  This module imports nothing heavy.
"""

from __future__ import annotations

import math

from ..errors import UserInputError

__all__ = ["Z_RANGE", "N_MAX", "NUCLEUS_MASS_RATIO_MIN", "REDUCED_MASS_RATIO_RANGE", "CENTRE_MAX_A0",
           "FRACTION_MAX", "SIZE_MM_RANGE", "check_z", "check_n", "check_nucleus_mass_ratio",
           "check_reduced_mass_ratio", "check_centre", "check_fraction", "check_finite"]

#: Nuclear charge Z (units of e).  Above Z = 137 (Z alpha > 1, fine-structure constant
#: alpha ~ 1/137) the Dirac equation of a point nucleus has no normalisable 1s state, so
#: the non-relativistic picture drawn here has no meaning; below 0.01 a state is a
#: hundred times larger than at Z = 1 and no screened charge of a real atom is that small.
Z_RANGE = (0.01, 137.0)
#: Largest principal quantum number.  Every derived number is computed in scaled or
#: closed form up to this n (state/hydrogen.py, state/properties.py), and a 3D lattice
#: that resolved the n - 1 nodes of higher states would not fit in memory anyway.
N_MAX = 200
#: Lightest nucleus, in electron masses: the positron (positronium).  Nothing lighter binds
#: an electron.
NUCLEUS_MASS_RATIO_MIN = 1.0
#: mu / m_e of a State: from positronium (1/2) up to exotic atoms whose orbiting particle
#: is heavier than the electron (muonic hydrogen, mu/m_e ~ 186; an antiproton bound to a
#: heavy nucleus approaches 1836); 1e4 bounds them all with a margin.
REDUCED_MASS_RATIO_RANGE = (0.5, 1.0e4)
#: Largest distance of a centre from the origin, a0.  Bonds are a few a0 long; a lattice
#: that holds a centre 1e4 a0 away and the origin has a step of several a0 at any
#: resolution that fits in memory, far coarser than the orbitals it should show.
CENTRE_MAX_A0 = 1.0e4
#: Printed size of a whole model, mm (used by the mesh step; kept here with the other
#: ranges): below 0.1 mm an object is finer than the nozzle or pixel of any common
#: printer, and 10 m bounds the largest build volumes (common practice).
SIZE_MM_RANGE = (0.1, 10000.0)
#: Largest enclosed fraction F.  The level quadratures (surface/level.py) give the
#: enclosed probability to about 1e-5, so 1 - F must stay ten times above that for the
#: surface to be the F surface and not the quadrature's round-off.
FRACTION_MAX = 0.9999


def _text(value) -> str:
    return f"{value:g}" if isinstance(value, float) else repr(value)


def check_finite(value, what: str) -> float:
    """`value` as a finite float, or UserInputError naming `what`.

    Examples
    --------
    >>> check_finite("2.5", "the time")
    2.5
    """
    try:
        x = float(value)
    except (TypeError, ValueError, OverflowError):
        raise UserInputError(f"{what} must be a finite number, got {value!r}") from None
    if not math.isfinite(x):
        raise UserInputError(f"{what} must be a finite number, got {_text(x)}")
    return x


def _in_range(value, lo: float, hi: float, what: str, why: str) -> float:
    x = check_finite(value, what)
    if not lo <= x <= hi:
        raise UserInputError(f"{what} must be from {lo:g} to {hi:g} ({why}), got {_text(x)}")
    return x


def check_z(Z) -> float:
    """Z as float, or UserInputError outside :data:`Z_RANGE`.

    Examples
    --------
    >>> check_z(2)
    2.0
    """
    return _in_range(Z, *Z_RANGE, "Z", "above 137, Z alpha > 1 and a non-relativistic state means nothing")


def check_n(n: int) -> int:
    """UserInputError if n is above :data:`N_MAX` (n >= 1 is checked with l and m)."""
    if n > N_MAX:
        raise UserInputError(f"n must be at most {N_MAX}, the largest n computed reliably, got n={n}")
    return n


def check_nucleus_mass_ratio(ratio) -> float:
    """A nucleus-to-electron mass ratio as float, or UserInputError below the positron's 1.

    Examples
    --------
    >>> check_nucleus_mass_ratio("1836.15")
    1836.15
    """
    x = check_finite(ratio, "the nucleus-to-electron mass ratio") if not (
        isinstance(ratio, float) and ratio == math.inf) else math.inf
    if not x >= NUCLEUS_MASS_RATIO_MIN:
        raise UserInputError(f"the nucleus-to-electron mass ratio must be at least "
                             f"{NUCLEUS_MASS_RATIO_MIN:g} (the positron, the lightest partner), "
                             f"got {_text(x)}")
    return x


def check_reduced_mass_ratio(ratio) -> float:
    """mu / m_e as float, or UserInputError outside :data:`REDUCED_MASS_RATIO_RANGE`."""
    return _in_range(ratio, *REDUCED_MASS_RATIO_RANGE, "the reduced mass ratio mu/m_e",
                     "positronium to exotic atoms")


def check_centre(centre_a0) -> tuple[float, float, float]:
    """A centre (x, y, z) in a0 as floats, or UserInputError if not finite or beyond
    :data:`CENTRE_MAX_A0` from the origin.

    Examples
    --------
    >>> check_centre((0, 0, 1))
    (0.0, 0.0, 1.0)
    """
    xyz = tuple(check_finite(c, "a centre coordinate (a0)") for c in centre_a0)
    if max(abs(c) for c in xyz) > CENTRE_MAX_A0:
        raise UserInputError(f"a centre must lie within {CENTRE_MAX_A0:g} a0 of the origin (a lattice "
                             f"holding it could not resolve an orbital), got {xyz}")
    return xyz


def check_fraction(fraction, what: str = "the enclosed fraction F") -> float:
    """F as float, or UserInputError unless 0 < F <= :data:`FRACTION_MAX`.

    Examples
    --------
    >>> check_fraction(0.9)
    0.9
    >>> try:
    ...     check_fraction(0.999999999999)
    ... except ValueError as exc:
    ...     print(str(exc)[:64])
    the enclosed fraction F must lie above 0 and at most 0.9999 (the
    """
    f = check_finite(fraction, what)
    if not 0.0 < f <= FRACTION_MAX:
        raise UserInputError(f"{what} must lie above 0 and at most {FRACTION_MAX:g} (the level "
                             f"quadratures resolve the enclosed probability to about 1e-5), "
                             f"got {f!r}")
    return f
