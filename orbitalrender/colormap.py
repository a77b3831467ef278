"""Colour, shared by the picture and mesh steps: the complex phase of psi as hue, built in CIELAB.

This module sits below both :mod:`orbitalrender.picture` and :mod:`orbitalrender.mesh`
and imports only numpy when loaded (scikit-image is loaded when a table is first built),
so option definitions can read :data:`PHASE_SCHEMES` cheaply.

Three schemes, all of our own construction:

``"uniform"``
    A circle of constant lightness L* and constant chroma C* in CIELAB, so that
    equal steps of phase are roughly equal steps of perceived colour and hue
    alone carries phase.  L* is chosen to allow the largest chroma that stays
    inside the sRGB gamut at every hue.
``"cvd"``
    A loop that carries phase in lightness L* and the blue-yellow axis b* (the
    axes that protan and deutan vision keep), with a small red-green a* tint:
    still distinguishable under the common red-green colour-vision deficiencies.
``"sign"``
    Two tones for real states: one for psi > 0, one for psi < 0 (after removing
    the state's global phase, see :mod:`orbitalrender.state.phase`).

References
----------
.. [1] CIE 15:2004, *Colorimetry*, 3rd ed. (CIELAB, D65 white).
.. [2] P. Kovesi, "Good colour maps: how to design them", arXiv:1509.03700 (2015),
       on constant-lightness cyclic maps.
"""

from __future__ import annotations

from functools import cache

import numpy as np

__all__ = [
    "PHASE_SCHEMES",
    "LUT_SIZE",
    "phase_lut",
    "phase_to_rgb",
    "psi_to_rgb",
    "sign_colours",
    "srgb_to_linear",
    "linear_to_srgb",
]

PHASE_SCHEMES = ("uniform", "cvd", "sign")
#: Entries of the tabulated maps; adjacent entries differ by 2 pi / LUT_SIZE rad.
LUT_SIZE = 720
#: CIELAB hue angle (degrees) at phase 0: a warm red-orange, our own choice.
_HUE_AT_ZERO_DEG = 30.0

#: The two tones of the sign map in CIELAB (L*, a*, b*): positive a warm orange, negative a
#: mid blue (our choice).
_SIGN_LAB = {"positive": (68.0, 30.0, 62.0), "negative": (52.0, 0.0, -48.0)}


@cache
def sign_colours() -> dict[str, tuple[float, float, float]]:
    """The two tones of the sign map in sRGB, keyed ``"positive"`` and ``"negative"``.

    Examples
    --------
    >>> sorted(sign_colours())
    ['negative', 'positive']
    """
    from skimage.color import lab2rgb

    return {key: tuple(float(c) for c in lab2rgb(np.array([[lab]]))[0, 0])
            for key, lab in _SIGN_LAB.items()}


def _lab_in_gamut(lab: np.ndarray) -> np.ndarray:
    """True where CIELAB colours lie inside the sRGB gamut (linear RGB in [0, 1], tolerance 1e-4)."""
    from skimage.color import lab2xyz
    from skimage.color.colorconv import rgb_from_xyz

    linear = lab2xyz(lab.reshape(1, -1, 3)).reshape(-1, 3) @ rgb_from_xyz.T
    return np.all((linear >= -1e-4) & (linear <= 1 + 1e-4), axis=1)


def _largest_in_gamut(make_lab, upper: float) -> float:
    """Largest scale c in [0, upper] for which make_lab(c) is entirely inside sRGB (bisection)."""
    lo, hi = 0.0, upper
    for _ in range(40):
        c = 0.5 * (lo + hi)
        if np.all(_lab_in_gamut(make_lab(c))):
            lo = c
        else:
            hi = c
    return lo


def _circle(lightness, chroma, hues: np.ndarray) -> np.ndarray:
    return np.stack([np.broadcast_to(lightness, hues.shape), chroma * np.cos(hues),
                     chroma * np.sin(hues)], axis=1)


@cache
def _uniform_lab() -> np.ndarray:
    """Constant-L* circle with the largest C* that fits in sRGB at every hue, over L* 50..85."""
    hues = np.deg2rad(_HUE_AT_ZERO_DEG) + 2 * np.pi * np.arange(LUT_SIZE) / LUT_SIZE
    candidates = np.arange(50.0, 86.0, 1.0)
    chroma = [_largest_in_gamut(lambda c, L=L: _circle(L, c, hues), 130.0) for L in candidates]
    best = int(np.argmax(chroma))
    return _circle(candidates[best], chroma[best], hues)


@cache
def _cvd_lab() -> np.ndarray:
    """Loop in (L*, b*) with a small a* tint: light and warm at phase 0, yellow at pi/2,
    dark and cool at pi, blue at 3 pi/2; scaled to the largest size that fits in sRGB.
    The shape ratios (L* swing : a* : b* = 0.45 : 0.25 : 1, around L* = 60) are our choice."""
    t = 2 * np.pi * np.arange(LUT_SIZE) / LUT_SIZE

    def lab(c):
        return np.stack([60.0 + 0.45 * c * np.cos(t), 0.25 * c * np.cos(t), c * np.sin(t)], axis=1)

    return lab(_largest_in_gamut(lab, 120.0))


@cache
def phase_lut(scheme: str = "uniform") -> np.ndarray:
    """The tabulated map: (LUT_SIZE, 3) sRGB in [0, 1]; entry k is phase 2 pi k / LUT_SIZE.

    Examples
    --------
    >>> lut = phase_lut("uniform")
    >>> lut.shape
    (720, 3)
    """
    if scheme == "uniform":
        lab = _uniform_lab()
    elif scheme == "cvd":
        lab = _cvd_lab()
    elif scheme == "sign":
        rgb = np.empty((LUT_SIZE, 3))
        # phase in (-pi/2, pi/2) is positive, the rest negative
        k = np.arange(LUT_SIZE)
        positive = (k < LUT_SIZE // 4) | (k >= 3 * LUT_SIZE // 4)
        rgb[positive] = sign_colours()["positive"]
        rgb[~positive] = sign_colours()["negative"]
        return rgb
    else:
        raise ValueError(f"unknown phase colour scheme {scheme!r}: use one of {', '.join(PHASE_SCHEMES)}")
    from skimage.color import lab2rgb

    return np.clip(lab2rgb(lab.reshape(1, -1, 3)).reshape(-1, 3), 0.0, 1.0)


def phase_to_rgb(phase_rad: np.ndarray, scheme: str = "uniform") -> np.ndarray:
    """sRGB colours (..., 3) in [0, 1] for phases in radians (any range; 2 pi periodic).

    Neighbouring table entries are interpolated linearly in sRGB; at 720 entries
    the step is far below a visible difference.

    Examples
    --------
    >>> import numpy as np
    >>> a, b = phase_to_rgb(np.array([0.0, 2 * np.pi]))
    >>> bool(np.allclose(a, b))
    True
    """
    lut = phase_lut(scheme)
    pos = np.mod(np.asarray(phase_rad, dtype=float), 2 * np.pi) * (LUT_SIZE / (2 * np.pi))
    i0 = np.floor(pos).astype(np.int64) % LUT_SIZE
    frac = (pos - np.floor(pos))[..., None]
    if scheme == "sign":
        return lut[i0]
    return (1.0 - frac) * lut[i0] + frac * lut[(i0 + 1) % LUT_SIZE]


def psi_to_rgb(psi: np.ndarray, scheme: str = "uniform", rotation: complex = 1.0 + 0.0j) -> np.ndarray:
    """Colours for complex psi values: hue from arg psi (``"sign"``: from the sign of
    psi * conj(`rotation`), the global phase removed by
    :func:`orbitalrender.state.phase.sign_rotation`)."""
    psi = np.asarray(psi, dtype=complex)
    if scheme == "sign":
        return phase_to_rgb(np.angle(psi * np.conj(rotation)), "sign")
    return phase_to_rgb(np.angle(psi), scheme)


def srgb_to_linear(srgb: np.ndarray) -> np.ndarray:
    """sRGB values in [0, 1] -> linear light (IEC 61966-2-1 transfer function).

    Examples
    --------
    >>> round(float(srgb_to_linear(0.5)), 6)
    0.214041
    """
    srgb = np.asarray(srgb, dtype=float)
    return np.where(srgb <= 0.04045, srgb / 12.92, ((srgb + 0.055) / 1.055) ** 2.4)


def linear_to_srgb(linear: np.ndarray) -> np.ndarray:
    """Linear light -> sRGB in [0, 1] (IEC 61966-2-1), clipped to [0, 1] first.

    Examples
    --------
    >>> round(float(linear_to_srgb(srgb_to_linear(0.3))), 12)
    0.3
    """
    linear = np.clip(np.asarray(linear, dtype=float), 0.0, 1.0)
    return np.where(linear <= 0.0031308, 12.92 * linear, 1.055 * linear ** (1 / 2.4) - 0.055)
