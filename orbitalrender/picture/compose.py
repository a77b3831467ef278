"""Picture step, composition: renders placed in a matplotlib figure with titles, phase legend and scale bar.

:func:`fit_geometry` lays out a grid of equal panels with a legend column,
:func:`compose_figure` places finished renders in it pixel for pixel, and
:func:`figure_3d` renders and composes one picture.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from ..state.notation import pretty_label
from ..surface.model import Surface
from .camera import as_surfaces
from .scene import Render, render_surfaces

__all__ = ["FigureGeometry", "fit_geometry", "figure_fontsize", "compose_figure", "figure_3d",
           "surface_title"]

#: Text size relative to the figure height (our choice: about 10 pt on an 8 in tall figure),
#: kept within 7-12 pt, the range journals ask for in printed figures (common practice).
_FONT_PER_HEIGHT = 0.018
_FONT_RANGE_PT = (7.0, 12.0)
#: The legend column is this many font heights wide.
_LEGEND_WIDTH_EM = 11.0


def figure_fontsize(height_px: int, dpi: float) -> float:
    """Label size (pt) for a figure `height_px` tall at `dpi`.

    Examples
    --------
    >>> figure_fontsize(800, 100)
    10.368
    """
    pt = height_px / dpi * 72.0 * _FONT_PER_HEIGHT
    return round(float(min(max(pt, _FONT_RANGE_PT[0]), _FONT_RANGE_PT[1])), 3)


@dataclass(frozen=True)
class FigureGeometry:
    """Pixel layout of a grid of equal render panels with a legend column on the right.

    Attributes
    ----------
    ncols, nrows : int
    panel_px : tuple of int
        (width, height) of each render.
    title_px : int
        Height of the band above each panel for its title (0: none).
    legend_px : int
        Width of the legend column (0: none).
    dpi : float
    fontsize_pt : float
    """

    ncols: int
    nrows: int
    panel_px: tuple[int, int]
    title_px: int
    legend_px: int
    dpi: float
    fontsize_pt: float

    @property
    def size_px(self) -> tuple[int, int]:
        """(width, height) of the whole figure."""
        pw, ph = self.panel_px
        return self.ncols * pw + self.legend_px, self.nrows * (ph + self.title_px)


def fit_geometry(width_px: int, height_px: int, *, ncols: int = 1, nrows: int = 1, titles: bool = True,
                 legend: bool = True, dpi: float = 100.0) -> FigureGeometry:
    """The geometry whose panels fill a figure of about `width_px` x `height_px`.

    The figure comes out at most ncols - 1 px narrower and nrows - 1 px lower than asked
    (panels have whole pixels).

    Raises
    ------
    ValueError
        If the panels would be smaller than 16 px.

    Examples
    --------
    >>> g = fit_geometry(900, 800)
    >>> g.size_px, g.panel_px
    ((900, 800), (742, 771))
    """
    if not (dpi > 0 and math.isfinite(dpi)) or not 10 <= dpi <= 2400:
        raise ValueError(f"dpi must lie in [10, 2400], got {dpi}")
    fs = figure_fontsize(height_px, dpi)
    em = fs * dpi / 72.0
    title_px = int(round(2.0 * em)) if titles else 0
    legend_px = int(round(_LEGEND_WIDTH_EM * em)) if legend else 0
    pw = (int(width_px) - legend_px) // int(ncols)
    ph = int(height_px) // int(nrows) - title_px
    if pw < 16 or ph < 16:
        raise ValueError(f"a {width_px} x {height_px} px figure leaves panels of {pw} x {ph} px "
                         "(at least 16 x 16 needed): make it larger")
    return FigureGeometry(int(ncols), int(nrows), (pw, ph), title_px, legend_px, float(dpi), fs)


def compose_figure(renders: Sequence[Render], geometry: FigureGeometry, *,
                   titles: Sequence[str] | None = None, units: str = "a0", legend: bool = True,
                   scale_bar: bool = True, transparent: bool = False):
    """Place renders in a grid with titles, one phase legend and one scale bar.

    The renders are shown pixel for pixel (``imshow``, no resampling), so the scale bar,
    drawn in the legend column with the renders' pixels per a0, is exact; in SVG and PDF
    the render is an embedded raster and all text stays text.

    Parameters
    ----------
    renders : sequence of Render
        Same size, phase map and scale (one legend and one scale bar serve all).
    geometry : FigureGeometry
        From :func:`fit_geometry`; its panel size must equal the renders' size.
    titles : sequence of str, optional
        One per render.
    units : {"a0", "angstrom", "nm", "pm"}
        Unit of the scale bar.
    legend, scale_bar : bool
        Draw the phase legend / the scale bar (the scale bar is left out for a
        perspective camera, whose scale changes with depth).
    transparent : bool
        Leave the figure background transparent.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.figure import Figure

    from .legend import draw_phase_legend, draw_scale_bar

    renders = list(renders)
    if not renders:
        raise ValueError("compose_figure needs at least one render")
    pw, ph = geometry.panel_px
    for r in renders:
        if r.rgba.shape[:2] != (ph, pw):
            raise ValueError(f"render of {r.rgba.shape[1]} x {r.rgba.shape[0]} px does not fit "
                             f"panels of {pw} x {ph} px")
    if len({r.phase_map for r in renders}) > 1:
        raise ValueError("the panels use different phase maps; one legend cannot serve them")
    scales = [r.px_per_a0 for r in renders]
    if scale_bar and max(scales) > min(scales) * (1 + 1e-9):
        raise ValueError("the panels are drawn at different scales; one scale bar cannot serve them")
    if len(renders) > geometry.ncols * geometry.nrows:
        raise ValueError(f"{len(renders)} panels do not fit a {geometry.nrows} x {geometry.ncols} grid")
    fw, fh = geometry.size_px
    fig = Figure(figsize=(fw / geometry.dpi, fh / geometry.dpi), dpi=geometry.dpi)
    if transparent:
        fig.patch.set_alpha(0.0)
    fs = geometry.fontsize_pt
    for k, r in enumerate(renders):
        row, col = divmod(k, geometry.ncols)
        left = col * pw
        top = row * (ph + geometry.title_px) + geometry.title_px
        ax = fig.add_axes((left / fw, 1.0 - (top + ph) / fh, pw / fw, ph / fh))
        ax.imshow(r.rgba, interpolation="none", origin="upper", extent=(0, pw, ph, 0))
        ax.set_axis_off()
        if titles is not None and geometry.title_px:
            fig.text((left + 0.5 * pw) / fw, 1.0 - (top - 0.45 * geometry.title_px) / fh, titles[k],
                     ha="center", va="center", fontsize=fs)
    if geometry.legend_px:
        lw = geometry.legend_px
        x0 = geometry.ncols * pw
        side = 0.92 * lw
        wheel_top = 0.5 * fh - 0.62 * side
        if legend:
            ax = fig.add_axes(((x0 + 0.04 * lw) / fw, 1.0 - (wheel_top + side) / fh, side / fw, side / fh))
            draw_phase_legend(ax, renders[0].phase_map, fontsize=fs)
        if scale_bar and renders[0].camera.projection == "orthographic":
            bar_h = 3.0 * fs * geometry.dpi / 72.0
            ax = fig.add_axes(((x0 + 0.04 * lw) / fw, 1.0 - (wheel_top + side + bar_h * 1.2) / fh,
                               side / fw, bar_h / fh))
            ax.set_xlim(0, side)
            ax.set_ylim(0, bar_h)
            ax.set_axis_off()
            draw_scale_bar(ax, renders[0].px_per_a0, units, max_fraction=0.8, corner="lower left",
                           fontsize=fs, margin_fraction=0.1)
    return fig


def figure_3d(surfaces: Surface | Sequence[Surface], width_px: int = 900, height_px: int = 800, *,
              dpi: float = 100.0, title: str | None = None, units: str = "a0", legend: bool = True,
              scale_bar: bool = True, transparent: bool = False, **render_options):
    """One render with its title, phase legend and scale bar, as a matplotlib Figure.

    Parameters
    ----------
    surfaces : Surface or sequence of Surface
    width_px, height_px : int
        Size of the whole figure (render, legend column and title), pixels at `dpi`.
    dpi : float
    title : str, optional
        Default: the state label and the fraction F the surface encloses.
    units, legend, scale_bar, transparent
        See :func:`compose_figure`.
    **render_options
        Passed to :func:`render_surfaces` (camera, phase_map, cutaway, ...).

    Returns
    -------
    (matplotlib.figure.Figure, Render)
    """
    surfaces = as_surfaces(surfaces)
    if title is None:
        title = surface_title(surfaces[0])
    geometry = fit_geometry(width_px, height_px, titles=bool(title), legend=legend or scale_bar, dpi=dpi)
    background = None if transparent else render_options.pop("background", (1.0, 1.0, 1.0))
    render_options.pop("background", None)
    render = render_surfaces(surfaces, *geometry.panel_px, background=background, **render_options)
    fig = compose_figure([render], geometry, titles=[title] if title else None, units=units, legend=legend,
                         scale_bar=scale_bar, transparent=transparent)
    return fig, render


def surface_title(surface: Surface) -> str:
    """Title text: the state label (typeset, :func:`pretty_label`) and the enclosed fraction F.

    Examples
    --------
    >>> import numpy as np
    >>> from orbitalrender.state.model import real_orbital
    >>> s = Surface(np.zeros((0, 3)), np.zeros((0, 3), int), np.zeros((0, 3)), np.zeros(0), 1.0,
    ...             0.9, None, None, (2, 2, 2), (1.0, 1.0, 1.0), real_orbital(3, 2, 0, label="3dz2"))
    >>> surface_title(s)
    '3d$_{z^{2}}$, F = 0.9'
    """
    label = pretty_label(surface.state.label) if surface.state is not None else "user field"
    if surface.fraction_requested is None:
        return label
    return f"{label}, F = {surface.fraction_requested:g}"
