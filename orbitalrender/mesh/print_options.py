"""Mesh step, print options: the choices a printable model is made with, and their defaults.

Only the standard library is loaded here (the preparation itself, in
:mod:`orbitalrender.mesh.printable`, needs manifold3d and trimesh), so option
definitions can read :data:`BASES` and the defaults cheaply.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import UserInputError

__all__ = ["BASES", "DEFAULT_MIN_THICKNESS_MM", "DEFAULT_MIN_GAP_MM", "DEFAULT_STRUT_FRACTION",
           "PrintOptions", "DEFAULT_PRINT_OPTIONS"]

BASES = ("disc", "plate", "none")
#: Minimum wall thickness, mm: common practice for fused-filament printers with a 0.4 mm nozzle
#: (two to three extrusion widths).
DEFAULT_MIN_THICKNESS_MM = 1.0
#: Narrowest gap that stays open, mm: common practice for fused-filament printing (narrower gaps fuse).
DEFAULT_MIN_GAP_MM = 0.5
#: Strut diameter as a fraction of the model's largest extent (our choice: visible but slight).
DEFAULT_STRUT_FRACTION = 0.05


@dataclass(frozen=True)
class PrintOptions:
    """How to prepare a model for printing; lengths in mm.

    Attributes
    ----------
    min_thickness_mm : float
        Walls thinner than this are reported; struts are at least this thick.
    min_gap_mm : float
        Gaps narrower than this are reported.
    strut_fraction : float
        Strut diameter as a fraction of the model's largest extent.
    base : str
        ``"disc"``, ``"plate"`` or ``"none"``.
    cutaway : bool
        Remove the half y > 0 to open nested shells; lays the model on the cut face.
    """

    min_thickness_mm: float = DEFAULT_MIN_THICKNESS_MM
    min_gap_mm: float = DEFAULT_MIN_GAP_MM
    strut_fraction: float = DEFAULT_STRUT_FRACTION
    base: str = "disc"
    cutaway: bool = False

    def __post_init__(self) -> None:
        for name in ("min_thickness_mm", "min_gap_mm", "strut_fraction"):
            value = getattr(self, name)
            if not (value > 0 and math.isfinite(value)):
                raise UserInputError(f"{name.replace('_', ' ')} must be a positive number, got {value:g}")
        if self.base not in BASES:
            raise UserInputError(f"unknown base {self.base!r}: use one of {', '.join(BASES)}")


#: The options used when none are given.
DEFAULT_PRINT_OPTIONS = PrintOptions()
