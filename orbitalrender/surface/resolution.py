"""Surface step, check: whether a lattice is fine enough for the radial nodes inside the F surface.

A nodal shell of psi that is thinner than one lattice step can fall between lattice
points: marching cubes then merges or loses the shells on either side, and the
surface has spurious regions (even negative volumes).  Before a surface is extracted
from a state's lattice, :func:`unresolved_nodes_message` compares the lattice step
with the smallest spacing of the radial nodes that lie inside the radius holding F of
each (n, l) shell, and :func:`warn_unresolved_nodes` issues a
:class:`LatticeResolutionWarning` that names the resolution needed (the command line
prints it as one ``warning:`` line).
"""

from __future__ import annotations

import functools
import math
import warnings

import numpy as np

from ..state.model import State
from ..state.properties import radial_node_radii
from ..state.radial import radius_holding

__all__ = ["LatticeResolutionWarning", "unresolved_nodes_message", "warn_unresolved_nodes"]

#: Lattice points per node spacing asked for: two, so that every shell between nodes has a
#: point inside it wherever the lattice is placed (the sampling rule of thumb; common practice).
_POINTS_PER_SPACING = 2


class LatticeResolutionWarning(UserWarning):
    """The lattice step is coarser than the spacing of the state's nodes inside the surface."""


@functools.lru_cache(maxsize=64)
def _smallest_node_spacing_a0(n: int, l: int, Z: float, mu: float, fraction: float) -> float | None:
    """Smallest distance between neighbouring radial nodes (and from the nucleus to the first)
    inside the radius holding `fraction` of the (n, l) shell, a0; None without such nodes."""
    reach = radius_holding(n, l, fraction, Z, mu)
    nodes = [r for r in radial_node_radii(n, l, Z, mu) if r < reach]
    if not nodes:
        return None
    return float(np.min(np.diff([0.0, *nodes])))


def unresolved_nodes_message(state: State, fraction: float, spacing_a0, shape) -> str | None:
    """A one-line warning if the lattice step exceeds the smallest radial node spacing
    inside the F surface of any (n, l) shell of `state`, else None.

    Examples
    --------
    >>> from orbitalrender import eigenstate
    >>> unresolved_nodes_message(eigenstate(2, 0, 0), 0.9, (0.5, 0.5, 0.5), (64, 64, 64)) is None
    True
    >>> print(unresolved_nodes_message(eigenstate(30, 0, 0), 0.9, (60.0,) * 3, (64,) * 3)[:41])
    the lattice step 60 a0 is coarser than th
    """
    step = float(max(spacing_a0))
    spacings = [(s, t) for t in {(t.n, t.l) for t in state.terms}
                if (s := _smallest_node_spacing_a0(*t, float(state.Z), float(state.reduced_mass_ratio),
                                                   float(fraction))) is not None]
    if not spacings:
        return None
    smallest, (n, l) = min(spacings)
    if step <= smallest:
        return None
    span = step * (max(shape) - 1)
    needed = math.ceil(span * _POINTS_PER_SPACING / smallest) + 1
    return (f"the lattice step {step:.3g} a0 is coarser than the smallest spacing {smallest:.3g} a0 "
            f"of the radial nodes of the ({n},{l}) shell inside the F = {fraction:g} surface: its "
            f"nodal shells are not resolved and the regions and volumes of the surface are not "
            f"reliable; a resolution of about {needed} resolves them")


def warn_unresolved_nodes(state: State, fraction: float, spacing_a0, shape) -> None:
    """Issue a :class:`LatticeResolutionWarning` with :func:`unresolved_nodes_message`, if any."""
    message = unresolved_nodes_message(state, fraction, spacing_a0, shape)
    if message is not None:
        warnings.warn(message, LatticeResolutionWarning, stacklevel=3)
