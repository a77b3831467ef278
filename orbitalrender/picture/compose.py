"""Picture step, composition: renders placed in a matplotlib figure with titles, phase legend and scale bar.

:func:`fit_geometry` lays out a grid of equal panels with a legend column,
:func:`compose_figure` places finished renders in it pixel for pixel, and
:func:`figure_3d` renders and composes one picture.

Text sizes are chosen for a projected slide as well as for print: by default a panel
title is 1/20 of the height of its grid cell, the legend text 0.6 of that (at least the
7-12 pt rule of printed figures); ``text_size_pt`` sets the title size in points at the
output size instead, the rest following at the same ratio.  A title wider than its
panel is made smaller until it fits.  The axis triad (:mod:`.triad`) sits in the
legend column, where it never hides a surface.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from ..state.notation import conditions_label, pretty_label
from ..surface.model import Surface
from .camera import as_surfaces
from .output import check_text_size
from .scene import Render, render_surfaces
from .triad import draw_axis_triad, wants_triad

__all__ = ["FigureGeometry", "fit_geometry", "figure_fontsize", "title_fontsize", "compose_figure",
           "figure_3d", "surface_title"]

#: Text size relative to the figure height (our choice: about 10 pt on an 8 in tall figure),
#: kept within 7-12 pt, the range journals ask for in printed figures (common practice).
_FONT_PER_HEIGHT = 0.018
_FONT_RANGE_PT = (7.0, 12.0)
#: The legend column is this many font heights wide.
_LEGEND_WIDTH_EM = 11.0
#: Title size as a share of the height of one grid cell (title band and panel): 1/20.
_TITLE_PER_CELL = 1.0 / 20.0
#: The title band is this many title font heights tall.
_TITLE_BAND_EM = 1.9
#: Legend text relative to the title text.
_LABEL_PER_TITLE = 0.6
#: A title may fill this share of its panel's width before it is made smaller.
_TITLE_WIDTH_SHARE = 0.96


def figure_fontsize(height_px: int, dpi: float) -> float:
    """Label size (pt) for a figure `height_px` tall at `dpi`.

    Examples
    --------
    >>> figure_fontsize(800, 100)
    10.368
    """
    pt = height_px / dpi * 72.0 * _FONT_PER_HEIGHT
    return round(float(min(max(pt, _FONT_RANGE_PT[0]), _FONT_RANGE_PT[1])), 3)


def title_fontsize(cell_height_px: float, dpi: float) -> float:
    """Default panel title size (pt): 1/20 of a grid cell `cell_height_px` tall (title band and
    panel), so the title reads on a projected slide; at least the 7 pt of print.

    Examples
    --------
    >>> title_fontsize(320, 100)
    11.52
    """
    return round(max(cell_height_px * _TITLE_PER_CELL * 72.0 / dpi, _FONT_RANGE_PT[0]), 3)


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
        Size of the legend and scale bar text.
    title_pt : float
        Size of the panel titles.
    """

    ncols: int
    nrows: int
    panel_px: tuple[int, int]
    title_px: int
    legend_px: int
    dpi: float
    fontsize_pt: float
    title_pt: float

    @property
    def size_px(self) -> tuple[int, int]:
        """(width, height) of the whole figure."""
        pw, ph = self.panel_px
        return self.ncols * pw + self.legend_px, self.nrows * (ph + self.title_px)


def fit_geometry(width_px: int, height_px: int, *, ncols: int = 1, nrows: int = 1, titles: bool = True,
                 legend: bool = True, dpi: float = 100.0,
                 text_size_pt: float | None = None) -> FigureGeometry:
    """The geometry whose panels fill a figure of about `width_px` x `height_px`.

    The figure comes out at most ncols - 1 px narrower and nrows - 1 px lower than asked
    (panels have whole pixels).  `text_size_pt` is the title size in points (default
    :func:`title_fontsize` of a grid cell); the legend text is 0.6 of it, and at least
    :func:`figure_fontsize` when the size is chosen here.

    Raises
    ------
    ValueError
        If the panels would be smaller than 16 px.

    Examples
    --------
    >>> g = fit_geometry(900, 800)
    >>> g.size_px, g.panel_px, g.title_pt, g.fontsize_pt
    ((900, 800), (636, 724), 28.8, 17.28)
    """
    if not (dpi > 0 and math.isfinite(dpi)) or not 10 <= dpi <= 2400:
        raise ValueError(f"dpi must lie in [10, 2400], got {dpi}")
    if text_size_pt is None:
        title_pt = title_fontsize(int(height_px) / int(nrows), dpi)
        fs = max(figure_fontsize(height_px, dpi), round(_LABEL_PER_TITLE * title_pt, 3))
    else:
        title_pt = check_text_size(text_size_pt)
        fs = round(_LABEL_PER_TITLE * title_pt, 3)
    em = fs * dpi / 72.0
    title_px = int(round(_TITLE_BAND_EM * title_pt * dpi / 72.0)) if titles else 0
    legend_px = int(round(_LEGEND_WIDTH_EM * em)) if legend else 0
    pw = (int(width_px) - legend_px) // int(ncols)
    ph = int(height_px) // int(nrows) - title_px
    if pw < 16 or ph < 16:
        raise ValueError(f"a {width_px} x {height_px} px figure leaves panels of {pw} x {ph} px "
                         "(at least 16 x 16 needed): make it larger")
    return FigureGeometry(int(ncols), int(nrows), (pw, ph), title_px, legend_px, float(dpi), fs, title_pt)


def compose_figure(renders: Sequence[Render], geometry: FigureGeometry, *,
                   titles: Sequence[str] | None = None, units: str = "a0", legend: bool = True,
                   scale_bar: bool = True, transparent: bool = False, triad: bool = False):
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
    triad : bool
        Draw the x, y, z axis triad of the renders' camera in the legend column (all
        renders must be seen from one direction).

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
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
    if triad and len({tuple(r.camera.basis()[2].round(12)) for r in renders}) > 1:
        raise ValueError("the panels are seen from different directions; one axis triad cannot serve them")
    fw, fh = geometry.size_px
    fig = Figure(figsize=(fw / geometry.dpi, fh / geometry.dpi), dpi=geometry.dpi)
    FigureCanvasAgg(fig)  # a renderer to measure the titles with
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
            text = fig.text((left + 0.5 * pw) / fw, 1.0 - (top - 0.5 * geometry.title_px) / fh, titles[k],
                            ha="center", va="center", fontsize=geometry.title_pt)
            _fit_width(text, _TITLE_WIDTH_SHARE * pw)
    if geometry.legend_px:
        lw = geometry.legend_px
        x0 = geometry.ncols * pw
        side = 0.92 * lw
        bar_h = 3.0 * fs * geometry.dpi / 72.0
        show_bar = scale_bar and renders[0].camera.projection == "orthographic"
        triad_side = 0.7 * side if triad else 0.0
        gap = 2.2 * fs * geometry.dpi / 72.0 if triad and legend else 0.0  # the legend's title
        # stacked and centred: the triad, the phase legend, the scale bar
        stack = triad_side + gap + (side if legend else 0.0) + (1.2 * bar_h if show_bar else 0.0)
        if stack > fh:  # a low strip: the triad gives way
            triad_side = max(0.0, triad_side - (stack - fh))
            stack = fh
        top = 0.5 * (fh - stack)
        if triad_side > 0:
            ax = fig.add_axes(((x0 + 0.5 * (lw - triad_side)) / fw, 1.0 - (top + triad_side) / fh,
                               triad_side / fw, triad_side / fh))
            draw_axis_triad(ax, renders[0].camera, fontsize=fs)
            top += triad_side + gap
        if legend:
            ax = fig.add_axes(((x0 + 0.04 * lw) / fw, 1.0 - (top + side) / fh, side / fw, side / fh))
            draw_phase_legend(ax, renders[0].phase_map, fontsize=fs)
            top += side
        if show_bar:
            ax = fig.add_axes(((x0 + 0.04 * lw) / fw, 1.0 - (top + bar_h * 1.2) / fh,
                               side / fw, bar_h / fh))
            ax.set_xlim(0, side)
            ax.set_ylim(0, bar_h)
            ax.set_axis_off()
            draw_scale_bar(ax, renders[0].px_per_a0, units, max_fraction=0.8, corner="lower left",
                           fontsize=fs, margin_fraction=0.1)
    return fig


def _fit_width(text, width_px: float) -> None:
    """Make `text` smaller until it is at most `width_px` wide (measured by the Agg renderer)."""
    renderer = text.figure.canvas.get_renderer()
    for _ in range(8):  # each step lands close; a few cover the rounding of glyph widths
        wide = text.get_window_extent(renderer).width
        if wide <= width_px:
            return
        text.set_fontsize(text.get_fontsize() * width_px / wide * 0.98)


def figure_3d(surfaces: Surface | Sequence[Surface], width_px: int = 900, height_px: int = 800, *,
              dpi: float = 100.0, title: str | None = None, units: str = "a0", legend: bool = True,
              scale_bar: bool = True, transparent: bool = False, triad: str = "auto",
              text_size_pt: float | None = None, **render_options):
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
    triad : {"auto", "on", "off"}
        The x, y, z axis triad; ``auto`` draws it unless every state is spherically
        symmetric (:func:`orbitalrender.picture.triad.wants_triad`).
    text_size_pt : float, optional
        Title size in points (default: 1/20 of the figure height); see :func:`fit_geometry`.
    **render_options
        Passed to :func:`render_surfaces` (camera, phase_map, cutaway, ...).

    Returns
    -------
    (matplotlib.figure.Figure, Render)
    """
    surfaces = as_surfaces(surfaces)
    if title is None:
        title = surface_title(surfaces[0])
    show_triad = wants_triad(triad, [s.state for s in surfaces])
    geometry = fit_geometry(width_px, height_px, titles=bool(title),
                            legend=legend or scale_bar or show_triad, dpi=dpi, text_size_pt=text_size_pt)
    background = None if transparent else render_options.pop("background", (1.0, 1.0, 1.0))
    render_options.pop("background", None)
    render = render_surfaces(surfaces, *geometry.panel_px, background=background, **render_options)
    fig = compose_figure([render], geometry, titles=[title] if title else None, units=units, legend=legend,
                         scale_bar=scale_bar, transparent=transparent, triad=show_triad)
    return fig, render


def surface_title(surface: Surface, *, label: str | None = None) -> str:
    """Title text: the state label (typeset, :func:`pretty_label`), the enclosed fraction F,
    and Z and the reduced mass where they are not 1 (:func:`conditions_label`); `label`
    replaces the state's label (e.g. a hybrid set's name for all its members).

    Examples
    --------
    >>> import numpy as np
    >>> from orbitalrender.state.model import real_orbital
    >>> s = Surface(np.zeros((0, 3)), np.zeros((0, 3), int), np.zeros((0, 3)), np.zeros(0), 1.0,
    ...             0.9, None, None, (2, 2, 2), (1.0, 1.0, 1.0), real_orbital(3, 2, 0, label="3dz2"))
    >>> surface_title(s)
    '3d$_{z^{2}}$, F = 0.9'
    """
    state = surface.state
    label = label if label is not None else state.label if state is not None else None
    parts = [pretty_label(label) if label is not None else "user field"]
    if surface.fraction_requested is not None:
        parts.append(f"F = {surface.fraction_requested:g}")
    if state is not None and (extra := conditions_label(state.Z, state.reduced_mass_ratio)):
        parts.append(extra)
    return ", ".join(parts)
