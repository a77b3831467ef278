"""Picture step, shading colours: each phase colour at every lightness, with its hue kept.

Light and shadow on a surface change only the CIELAB lightness L* of a phase
colour; its hue angle h and its chroma C* stay as they are, and the chroma is
reduced only where that lightness cannot hold it inside the sRGB gamut.  So one
phase reads as one colour in light and in shadow.  (Multiplying linear RGB by the
light, as a plain renderer does, keeps the CIELAB hue angle too, but lowers the
chroma with the lightness: a yellow-green in shadow goes muddy and reads as a
colour of its own.)

The shade of a point is the factor s by which the light scales the luminance Y of
its colour (ambient + diffuse, :class:`Lighting`); its lightness is
L* = L*(s Y_0), the lightness of that luminance (CIE 15:2004), so light and shadow
are as strong as in a linear-light renderer.  The colours are tabulated over phase
and s once per map and looked up per pixel (interpolated in s), so the render does
no colour conversion per pixel.

References
----------
.. [1] CIE 15:2004, *Colorimetry*, 3rd ed. (CIELAB, D65 white).
.. [2] IEC 61966-2-1:1999, sRGB.
"""

from __future__ import annotations

from functools import cache

import numpy as np

from ..colormap import (
    cie_lightness,
    lab_to_linear,
    linear_to_lab,
    linear_to_srgb,
    phase_to_rgb,
    srgb_to_linear,
)

__all__ = ["SHADE_PHASES", "SHADE_LEVELS", "shade_colours", "shade_table", "shade_lookup"]

#: Phase entries of the table: steps of 0.35 degree, far below a visible difference.
SHADE_PHASES = 1024
#: Shade levels from s = 0 to s = s_max, interpolated linearly between them: 64 levels keep
#: the interpolation error in L* below 0.3 (measured), under a just-noticeable difference (~1).
SHADE_LEVELS = 64
#: Bisection steps for the largest in-gamut chroma: 2^-16 of the chroma, far below a visible step.
_CHROMA_STEPS = 16


def _in_gamut(linear: np.ndarray) -> np.ndarray:
    """True where linear RGB (..., 3) lies in [0, 1] (tolerance 1e-6, far below one 8-bit step)."""
    return np.all((linear >= -1e-6) & (linear <= 1.0 + 1e-6), axis=-1)


def shade_colours(base_srgb: np.ndarray, s_max: float) -> np.ndarray:
    """Linear-light RGB (P, SHADE_LEVELS, 3) float32 of sRGB colours (P, 3) at every shade.

    Entry [p, k] is colour p at shade s = s_max k / (SHADE_LEVELS - 1): lightness
    L*(s Y_0), the hue and chroma of colour p, the chroma lowered (by bisection) only as
    far as the sRGB gamut needs.
    """
    base = np.asarray(base_srgb, dtype=float).reshape(-1, 3)
    linear = srgb_to_linear(base)
    lab = linear_to_lab(linear)
    y0 = linear @ np.array([0.2126, 0.7152, 0.0722])  # IEC 61966-2-1 luminance
    s = s_max * np.arange(SHADE_LEVELS) / (SHADE_LEVELS - 1)
    lightness = np.clip(cie_lightness(np.outer(y0, s)), 0.0, 100.0)
    chroma_max = np.hypot(lab[:, 1], lab[:, 2])
    hue = np.arctan2(lab[:, 2], lab[:, 1])
    direction = np.stack([np.cos(hue), np.sin(hue)], axis=-1)[:, None, :]

    def colour(light: np.ndarray, c: np.ndarray, dirs: np.ndarray = direction) -> np.ndarray:
        return lab_to_linear(np.concatenate([light[..., None], c[..., None] * dirs], axis=-1))

    chroma = np.broadcast_to(chroma_max[:, None], lightness.shape).copy()
    out = colour(lightness, chroma)
    bad = ~_in_gamut(out)
    if bad.any():  # the largest chroma in gamut, by bisection, where the full one is not
        light, lo, hi = lightness[bad], np.zeros(int(bad.sum())), chroma[bad]
        dirs = np.broadcast_to(direction, lightness.shape + (2,))[bad]
        for _ in range(_CHROMA_STEPS):
            mid = 0.5 * (lo + hi)
            ok = _in_gamut(colour(light, mid, dirs))
            lo = np.where(ok, mid, lo)
            hi = np.where(ok, hi, mid)
        out[bad] = colour(light, lo, dirs)
    return np.ascontiguousarray(np.clip(out, 0.0, 1.0), dtype=np.float32)


@cache
def shade_table(scheme: str, s_max: float) -> np.ndarray:
    """:func:`shade_colours` of the phase map `scheme` at SHADE_PHASES phases 2 pi p / SHADE_PHASES.

    Examples
    --------
    >>> t = shade_table("uniform", 1.0)
    >>> t.shape, bool(t.min() >= 0.0 and t.max() <= 1.0)
    ((1024, 64, 3), True)
    """
    phases = 2.0 * np.pi * np.arange(SHADE_PHASES) / SHADE_PHASES
    return shade_colours(phase_to_rgb(phases, scheme), s_max)


def shade_lookup(phase_rad: np.ndarray, shade: np.ndarray, scheme: str = "uniform",
                 s_max: float = 1.0) -> np.ndarray:
    """sRGB (..., 3) of phases at shades s in [0, s_max], as the render looks them up.

    For checks and legends; the render itself reads :func:`shade_table` in its kernels.

    Examples
    --------
    >>> rgb = shade_lookup(np.array([0.0, 0.0]), np.array([0.3, 1.0]))
    >>> bool(rgb[0].sum() < rgb[1].sum())
    True
    """
    table = shade_table(scheme, float(s_max))
    p = np.rint(np.mod(phase_rad, 2 * np.pi) * (SHADE_PHASES / (2 * np.pi))).astype(int) % SHADE_PHASES
    x = np.clip(np.asarray(shade, dtype=float) / s_max, 0.0, 1.0) * (SHADE_LEVELS - 1)
    k = np.minimum(x.astype(int), SHADE_LEVELS - 2)
    f = (x - k)[..., None]
    return linear_to_srgb((1 - f) * table[p, k] + f * table[p, k + 1])
