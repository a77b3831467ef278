"""Colour, shared by the picture and mesh steps: the complex phase of psi as hue, built in CIELAB.

This module sits below both :mod:`orbitalrender.picture` and :mod:`orbitalrender.mesh`
and imports only numpy, so option definitions can read :data:`PHASE_SCHEMES` cheaply;
the CIELAB <-> sRGB conversions are written here (CIE 15:2004 with the D65 white, the
IEC 61966-2-1 matrix and transfer function) rather than loaded from an image library.

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
.. [3] IEC 61966-2-1:1999, *Default RGB colour space - sRGB*.
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
    "cie_lightness",
    "lab_to_linear",
    "linear_to_lab",
    "lab_to_srgb",
]

PHASE_SCHEMES = ("uniform", "cvd", "sign")
#: Entries of the tabulated maps; adjacent entries differ by 2 pi / LUT_SIZE rad.
LUT_SIZE = 720
#: CIELAB hue angle (degrees) at phase 0: a warm red-orange, our own choice.
_HUE_AT_ZERO_DEG = 30.0

#: The two tones of the sign map in CIELAB (L*, a*, b*): positive a warm orange, negative a
#: mid blue (our choice).
_SIGN_LAB = {"positive": (68.0, 30.0, 62.0), "negative": (52.0, 0.0, -48.0)}
#: Bisection steps of the largest in-gamut chroma (2^-40 of the range: round-off), and the
#: first of them that every candidate lightness of the uniform map takes.
_GAMUT_STEPS, _COARSE_STEPS = 40, 8

#: D65 white point (X, Y, Z) with Y = 1, CIE 15:2004 (the values skimage also uses).
_WHITE_D65 = np.array([0.95047, 1.0, 1.08883])
#: CIE XYZ -> linear sRGB, IEC 61966-2-1:1999 (inverse of the sRGB primaries matrix), and back.
_RGB_FROM_XYZ = np.array([[3.2404542, -1.5371385, -0.4985314],
                          [-0.9692660, 1.8760108, 0.0415560],
                          [0.0556434, -0.2040259, 1.0572252]])
_XYZ_FROM_RGB = np.linalg.inv(_RGB_FROM_XYZ)
_EPSILON, _KAPPA = 216.0 / 24389.0, 24389.0 / 27.0  # CIE 15:2004, the exact forms of 0.008856, 903.3


@cache
def sign_colours() -> dict[str, tuple[float, float, float]]:
    """The two tones of the sign map in sRGB, keyed ``"positive"`` and ``"negative"``.

    Examples
    --------
    >>> sorted(sign_colours())
    ['negative', 'positive']
    """
    return {key: tuple(float(c) for c in lab_to_srgb(np.array(lab))) for key, lab in _SIGN_LAB.items()}


def _lab_in_gamut(lab: np.ndarray) -> np.ndarray:
    """True where CIELAB colours lie inside the sRGB gamut (linear RGB in [0, 1], tolerance 1e-4)."""
    linear = lab_to_linear(lab)
    return np.all((linear >= -1e-4) & (linear <= 1 + 1e-4), axis=-1)


def _bisect_in_gamut(make_lab, lo: np.ndarray, hi: np.ndarray, steps: int) -> tuple[np.ndarray, np.ndarray]:
    """`steps` bisection steps on brackets [lo, hi] of scales c, each colour set
    make_lab(c) (c of shape (count,), result (count, H, 3)) inside sRGB at lo and not at hi."""
    for _ in range(steps):
        c = 0.5 * (lo + hi)
        fits = _lab_in_gamut(make_lab(c)).all(axis=1)
        lo, hi = np.where(fits, c, lo), np.where(fits, hi, c)
    return lo, hi


def _largest_in_gamut(make_lab, upper: float, count: int = 1) -> np.ndarray:
    """Largest scales c in [0, upper] for which each of the `count` colour sets
    make_lab(c) lies entirely inside sRGB (to upper / 2^_GAMUT_STEPS); one bisection for
    all sets at once."""
    return _bisect_in_gamut(make_lab, np.zeros(count), np.full(count, upper), _GAMUT_STEPS)[0]


def _circle(lightness, chroma, hues: np.ndarray) -> np.ndarray:
    a, b = chroma * np.cos(hues), chroma * np.sin(hues)
    return np.stack([np.broadcast_to(lightness, a.shape), a, b], axis=-1)


@cache
def _uniform_lab() -> np.ndarray:
    """Constant-L* circle with the largest C* that fits in sRGB at every hue, over L* 50..85.

    Every candidate L* is bisected _COARSE_STEPS times; only those whose bracket still
    reaches the best lower bound can hold the largest chroma, and only they are bisected
    on to _GAMUT_STEPS, so the result is that of the full bisection of every candidate.
    """
    hues = np.deg2rad(_HUE_AT_ZERO_DEG) + 2 * np.pi * np.arange(LUT_SIZE) / LUT_SIZE
    candidates = np.arange(50.0, 86.0, 1.0)

    def circles(lightness):
        return lambda c: _circle(lightness[:, None], c[:, None], hues[None, :])

    lo, hi = _bisect_in_gamut(circles(candidates), np.zeros(len(candidates)), np.full(len(candidates), 130.0),
                              _COARSE_STEPS)
    near = np.flatnonzero(hi >= lo.max())
    chroma, _ = _bisect_in_gamut(circles(candidates[near]), lo[near], hi[near], _GAMUT_STEPS - _COARSE_STEPS)
    best = int(np.argmax(chroma))
    return _circle(candidates[near[best]], chroma[best], hues)


@cache
def _cvd_lab() -> np.ndarray:
    """Loop in (L*, b*) with a small a* tint: light and warm at phase 0, yellow at pi/2,
    dark and cool at pi, blue at 3 pi/2; scaled to the largest size that fits in sRGB.
    The shape ratios (L* swing : a* : b* = 0.45 : 0.25 : 1, around L* = 60) are our choice."""
    t = 2 * np.pi * np.arange(LUT_SIZE) / LUT_SIZE

    def lab(c):
        c = np.asarray(c)[..., None]
        return np.stack([60.0 + 0.45 * c * np.cos(t), 0.25 * c * np.cos(t), c * np.sin(t)], axis=-1)

    return lab(_largest_in_gamut(lab, 120.0)[0])


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
    return lab_to_srgb(lab)


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


def _lab_f(t: np.ndarray) -> np.ndarray:
    """CIE 15:2004's f(t): the cube root above epsilon, the straight line (kappa t + 16) / 116 below."""
    return np.where(t > _EPSILON, np.cbrt(np.maximum(t, _EPSILON)), (_KAPPA * t + 16.0) / 116.0)


def cie_lightness(y: np.ndarray) -> np.ndarray:
    """CIE L* of relative luminance Y (white = 1), CIE 15:2004.

    Examples
    --------
    >>> round(float(cie_lightness(0.18)), 3)  # a mid grey card, 18 % reflectance
    49.496
    """
    return 116.0 * _lab_f(np.asarray(y, dtype=float)) - 16.0


def lab_to_linear(lab: np.ndarray) -> np.ndarray:
    """Linear sRGB (..., 3) of CIELAB colours (..., 3), D65, unclipped (CIE 15:2004 inverted,
    then the IEC 61966-2-1 matrix); outside [0, 1] where a colour is outside the gamut.

    Examples
    --------
    >>> [round(float(v), 6) for v in lab_to_linear(np.array([100.0, 0.0, 0.0]))]  # white
    [1.0, 1.0, 1.0]
    """
    lab = np.asarray(lab, dtype=float)
    fy = (lab[..., 0] + 16.0) / 116.0
    f = np.stack([fy + lab[..., 1] / 500.0, fy, fy - lab[..., 2] / 200.0], axis=-1)
    cube = f ** 3
    xyz = np.where(cube > _EPSILON, cube, (116.0 * f - 16.0) / _KAPPA) * _WHITE_D65
    return xyz @ _RGB_FROM_XYZ.T


def linear_to_lab(linear: np.ndarray) -> np.ndarray:
    """CIELAB (..., 3), D65, of linear sRGB colours (..., 3): the inverse of :func:`lab_to_linear`.

    Examples
    --------
    >>> [round(float(v), 3) for v in linear_to_lab(srgb_to_linear(np.array([1.0, 0.0, 0.0])))]
    [53.241, 80.092, 67.203]
    """
    f = _lab_f(np.asarray(linear, dtype=float) @ _XYZ_FROM_RGB.T / _WHITE_D65)
    fx, fy, fz = f[..., 0], f[..., 1], f[..., 2]
    return np.stack([116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)], axis=-1)


def lab_to_srgb(lab: np.ndarray) -> np.ndarray:
    """sRGB (..., 3) in [0, 1] of CIELAB colours, clipped where a colour is outside the gamut.

    Examples
    --------
    >>> [round(float(v), 4) for v in lab_to_srgb(np.array([53.241, 80.092, 67.203]))]  # sRGB red
    [1.0, 0.0, 0.0]
    """
    return linear_to_srgb(lab_to_linear(lab))
