"""Picture step, section shading: how |psi|^2 sets the lightness of a section's colours.

:func:`density_weight` turns |psi|^2 into a weight in [0, 1] (linear, or
logarithmic over a stated number of decades) and :func:`shade` mixes the phase
colour with white by that weight.  Only numpy is loaded here, so option
definitions can read :data:`DENSITY_SCALES` cheaply.
"""

from __future__ import annotations

import math

import numpy as np

from ..colormap import linear_to_srgb, srgb_to_linear

__all__ = ["DENSITY_SCALES", "density_weight", "shade"]

DENSITY_SCALES = ("linear", "log")
#: Shading (see shade): linear-light factor of the map colour at the densest pixels.
_DARKEST = 0.35


def density_weight(density: np.ndarray, *, scale: str = "linear", decades: float = 3.0) -> np.ndarray:
    """Opacity in [0, 1] from |psi|^2: ``rho / max`` (linear) or
    ``1 + log10(rho / max) / decades`` clipped at 0 (log); NaN -> 0.

    Examples
    --------
    >>> import numpy as np
    >>> density_weight(np.array([1.0, 0.1, 0.001, 0.0]), scale="log", decades=3).round(6).tolist()
    [1.0, 0.666667, 0.0, 0.0]
    """
    if scale not in DENSITY_SCALES:
        raise ValueError(f"unknown density scale {scale!r}: use one of {', '.join(DENSITY_SCALES)}")
    if not (decades > 0 and math.isfinite(decades)):
        raise ValueError(f"the logarithmic range needs a positive number of decades, got {decades}")
    rho = np.where(np.isfinite(density), density, 0.0)
    peak = float(rho.max()) if rho.size else 0.0
    if peak <= 0.0:
        return np.zeros_like(rho)
    if scale == "linear":
        return np.clip(rho / peak, 0.0, 1.0)
    with np.errstate(divide="ignore"):
        return np.clip(1.0 + np.log10(rho / peak) / decades, 0.0, 1.0)


def shade(rgb: np.ndarray, weight: np.ndarray) -> np.ndarray:
    """Map colours `rgb` (sRGB) to paper by a weight w in [0, 1]: white at w = 0, through the
    map colour, to the map colour at ``_DARKEST`` of its linear-light intensity at w = 1.

    In linear light, ``out = (1 - w)^2 white + 2 w (1 - w) c + w^2 k c`` (a quadratic
    Bezier curve from white through c to k c): it mixes with white and scales, so
    the hue is kept; lightness falls smoothly and monotonically with w (no band where
    the full colour is reached); the lightness differences the map itself carries
    (the cvd scheme) are kept as ratios.  k = 0.35 is our choice: the densest pixels
    of the uniform map come out near L* = 50, well apart from white and not muddy.

    Examples
    --------
    >>> import numpy as np
    >>> c = np.array([0.2, 0.5, 0.8])
    >>> shade(c, np.array(0.0)).round(12).tolist()
    [1.0, 1.0, 1.0]
    """
    lin = srgb_to_linear(np.asarray(rgb, dtype=float))
    w = np.clip(np.asarray(weight, dtype=float), 0.0, 1.0)[..., None]
    out = (1.0 - w) ** 2 + (2.0 * w * (1.0 - w) + _DARKEST * w * w) * lin
    return linear_to_srgb(out)


