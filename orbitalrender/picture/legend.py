"""Picture legends: the phase wheel (or sign swatches) and the length scale bar.

Pure drawing functions: each takes matplotlib axes and draws into them, using
the colour tables of :mod:`orbitalrender.colormap` (there is no second
colour map here).

The wheel shows phase 0 to the right and increases counter-clockwise, the usual
orientation of the complex plane, so that a point of the wheel has the colour of
a psi value pointing the same way in the Argand diagram.
"""

from __future__ import annotations

import math

import numpy as np
from matplotlib.patches import Rectangle

from ..colormap import PHASE_SCHEMES, phase_to_rgb, sign_colours
from ..state.units import a0_to, unit_label

__all__ = [
    "nice_length",
    "draw_phase_legend",
    "draw_phase_wheel",
    "draw_sign_swatches",
    "draw_scale_bar",
]

#: How each length unit is written on axes and scale bars (matplotlib mathtext).
#: Pixels per side of the wheel image; the annulus edge is smooth at legend sizes.
_WHEEL_PIXELS = 256
_CORNERS = ("lower left", "lower right", "upper left", "upper right")
#: Phase marks of the wheel: (angle in rad, label in mathtext).
_WHEEL_MARKS = ((0.0, "0"), (0.5 * math.pi, r"$\pi/2$"), (math.pi, r"$\pi$"),
                (1.5 * math.pi, r"$3\pi/2$"))


def nice_length(at_most: float) -> float:
    """The largest length 1, 2 or 5 x 10^k (integer k) not exceeding `at_most`.

    Examples
    --------
    >>> [nice_length(x) for x in (1.0, 3.7, 9.99, 0.42, 250.0)]
    [1.0, 2.0, 5.0, 0.2, 200.0]
    """
    if not (at_most > 0 and math.isfinite(at_most)):
        raise ValueError(f"a scale bar needs a positive finite length, got {at_most}")
    k = math.floor(math.log10(at_most))
    best = 10.0 ** k
    for mantissa in (1.0, 2.0, 5.0, 10.0):
        candidate = mantissa * 10.0 ** k
        if candidate <= at_most * (1 + 1e-12):
            best = candidate
    return float(f"{best:.12g}")  # strip binary noise such as 0.30000000000000004


def _wheel_rgba(scheme: str, inner: float, pixels: int = _WHEEL_PIXELS) -> np.ndarray:
    """RGBA image (pixels, pixels, 4) of the annulus inner <= r <= 1 on [-1, 1]^2, y up."""
    c = (np.arange(pixels) + 0.5) / pixels * 2.0 - 1.0
    x, y = np.meshgrid(c, c[::-1])  # row 0 is the top (y = +1)
    r = np.hypot(x, y)
    rgba = np.zeros((pixels, pixels, 4))
    rgba[..., :3] = phase_to_rgb(np.arctan2(y, x), scheme)
    half_px = 1.0 / pixels  # one pixel is 2 / pixels wide: a one-pixel soft edge
    rgba[..., 3] = np.clip((1.0 - r) / half_px + 0.5, 0, 1) * np.clip((r - inner) / half_px + 0.5, 0, 1)
    return rgba


def _finish(ax, title: str | None, fontsize: float, pad_em: float, half_width: float,
            ylim: tuple[float, float]) -> None:
    """Title (`pad_em` font sizes above), limits, equal aspect and no frame for a legend's axes."""
    if title:
        ax.set_title(title, fontsize=fontsize, pad=fontsize * pad_em)
    ax.set_xlim(-half_width, half_width)
    ax.set_ylim(*ylim)
    ax.set_aspect("equal")
    ax.set_axis_off()


def draw_phase_wheel(ax, scheme: str = "uniform", inner_radius: float = 0.55,
                     title: str | None = r"arg $\psi$", fontsize: float = 8.0) -> None:
    """Draw the phase wheel of `scheme` into `ax`: an annulus coloured by the map with the
    marks 0, pi/2, pi, 3pi/2 as text labels outside it.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Axes given to the legend alone; its frame and ticks are switched off.
    scheme : {"uniform", "cvd"}
        Phase map (for ``"sign"`` use :func:`draw_sign_swatches` or :func:`draw_phase_legend`).
    inner_radius : float
        Inner radius of the annulus as a fraction of the outer one.
    title : str or None
        Text above the wheel.
    fontsize : float
        Label size in points.

    Examples
    --------
    >>> import matplotlib.figure
    >>> ax = matplotlib.figure.Figure().add_subplot()
    >>> draw_phase_wheel(ax, "cvd")
    >>> [t.get_text() for t in ax.texts][:4]
    ['0', '$\\\\pi/2$', '$\\\\pi$', '$3\\\\pi/2$']
    """
    if scheme not in PHASE_SCHEMES or scheme == "sign":
        raise ValueError(f"the phase wheel is drawn for the schemes uniform and cvd, not {scheme!r}")
    if not 0.0 <= inner_radius < 1.0:
        raise ValueError(f"inner_radius must lie in [0, 1), got {inner_radius}")
    ax.imshow(_wheel_rgba(scheme, inner_radius), extent=(-1, 1, -1, 1), origin="upper",
              interpolation="antialiased")
    label_r = 1.22
    for angle, text in _WHEEL_MARKS:
        ha = "left" if math.cos(angle) > 0.5 else "right" if math.cos(angle) < -0.5 else "center"
        va = "bottom" if math.sin(angle) > 0.5 else "top" if math.sin(angle) < -0.5 else "center"
        ax.text(label_r * math.cos(angle) - (0.1 if ha == "left" else -0.1 if ha == "right" else 0),
                label_r * math.sin(angle) - (0.1 if va == "bottom" else -0.1 if va == "top" else 0),
                text, ha=ha, va=va, fontsize=fontsize)
    _finish(ax, title, fontsize, 1.6, 1.75, (-1.45, 1.45))


def draw_sign_swatches(ax, title: str | None = r"sign of $\psi$", fontsize: float = 8.0) -> None:
    """Draw the two tones of the sign scheme into `ax`, labelled + and −.

    The sign is that of psi after its global phase is removed
    (:func:`orbitalrender.state.phase.sign_rotation`).

    Examples
    --------
    >>> import matplotlib.figure
    >>> ax = matplotlib.figure.Figure().add_subplot()
    >>> draw_sign_swatches(ax)
    >>> [t.get_text() for t in ax.texts]
    ['+', '−']
    """
    for row, (key, text) in enumerate((("positive", "+"), ("negative", "\u2212"))):
        y = 0.6 - row * 1.0
        ax.add_patch(Rectangle((-0.9, y), 0.8, 0.6, facecolor=sign_colours()[key], edgecolor="0.3",
                               linewidth=0.5))
        ax.text(0.1, y + 0.3, text, ha="left", va="center", fontsize=fontsize * 1.4)
    _finish(ax, title, fontsize, 0.8, 1.2, (-0.7, 1.5))


def draw_phase_legend(ax, scheme: str = "uniform", fontsize: float = 8.0) -> None:
    """The legend that belongs to `scheme`: the wheel, or the two swatches for ``"sign"``."""
    if scheme == "sign":
        draw_sign_swatches(ax, fontsize=fontsize)
    else:
        draw_phase_wheel(ax, scheme, fontsize=fontsize)


def draw_scale_bar(ax, data_per_a0: float = 1.0, units: str = "a0", max_fraction: float = 0.3,
                   corner: str = "lower left", colour: str = "black", fontsize: float = 8.0,
                   margin_fraction: float = 0.05) -> float:
    """Draw a scale bar of a "nice" length (1, 2 or 5 x 10^k in `units`) into `ax`.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Axes showing a picture whose horizontal data coordinate is a length; its
        x limits must already be set.
    data_per_a0 : float
        Data units per a0 along x (1 when the axes are in a0; pixels per a0 for an image).
    units : {"a0", "angstrom", "nm", "pm"}
        Unit written on the bar.
    max_fraction : float
        The bar is the longest nice length not wider than this fraction of the axes.
    corner : {"lower left", "lower right", "upper left", "upper right"}
    colour : str
        Colour of bar and label.
    fontsize : float
        Label size in points.
    margin_fraction : float
        Distance of the bar from the axes edges, as a fraction of the axes size.

    Returns
    -------
    float
        The bar length in `units`.

    Examples
    --------
    >>> import matplotlib.figure
    >>> ax = matplotlib.figure.Figure().add_subplot()
    >>> _ = ax.set_xlim(-10, 10); _ = ax.set_ylim(-10, 10)
    >>> draw_scale_bar(ax, 1.0, "a0")   # 30 % of 20 a0 is 6 a0 -> 5 a0
    5.0
    """
    if not (data_per_a0 > 0 and math.isfinite(data_per_a0)):
        raise ValueError(f"data_per_a0 must be positive, got {data_per_a0}")
    per_a0 = a0_to(units)
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    width, height = abs(x1 - x0), abs(y1 - y0)
    length_units = nice_length(max_fraction * width / data_per_a0 * per_a0)
    length_data = length_units / per_a0 * data_per_a0
    if corner not in _CORNERS:
        raise ValueError(f"unknown corner {corner!r}: use one of {', '.join(_CORNERS)}")
    vertical, horizontal = corner.split()
    sx = 1.0 if x1 > x0 else -1.0
    sy = 1.0 if y1 > y0 else -1.0
    left = x0 + sx * margin_fraction * width if horizontal == "left" \
        else x1 - sx * (margin_fraction * width + length_data)
    base = y0 + sy * margin_fraction * height if vertical == "lower" \
        else y1 - sy * 1.6 * margin_fraction * height
    ax.plot([left, left + sx * length_data], [base, base], color=colour, linewidth=2.0,
            solid_capstyle="butt", scalex=False, scaley=False)
    ax.text(left + sx * 0.5 * length_data, base + sy * 0.015 * height,
            f"{length_units:g} {unit_label(units)}", ha="center", va="bottom", color=colour,
            fontsize=fontsize)
    return length_units
