"""Picture step, section drawing: a section's coloured density with its lines, legends and metadata.

:func:`draw_section` draws into matplotlib axes:

* hue from the phase of psi (:mod:`orbitalrender.colormap`), lightness from
  |psi|^2 (white where it vanishes, darker where it is large; linear, or
  logarithmic over a stated number of decades; see
  :func:`orbitalrender.picture.density.shade`);
* the contour |psi|^2 = t, the cut through the F surface, and the nodal lines
  (:func:`orbitalrender.picture.nodal.section_lines`);
* the nuclei that lie in the plane, as small crosses.

:func:`section_figure` adds a phase legend and the shading scale beside the
picture.  Lines are matplotlib vector artists, so SVG and PDF keep them as paths;
the coloured density is one embedded raster image.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import matplotlib.figure
import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.lines import Line2D

from ..colormap import PHASE_SCHEMES, phase_to_rgb
from ..state.notation import pretty_label
from ..state.phase import sign_rotation
from ..state.units import a0_to, unit_label
from .density import density_weight, shade
from .legend import draw_phase_legend
from .nodal import SectionLines
from .section import Section

__all__ = ["draw_section", "section_figure", "section_metadata"]

#: Dash pattern of nodal lines (offset, (on, off) in points).
_NODE_DASH = (0, (4.0, 2.0))
#: Neutral grey (sRGB) of the shading scale bar: about the lightness of the uniform map.
_NEUTRAL = (0.68, 0.68, 0.68)


def _section_rgb(section: Section, scheme: str, scale: str, decades: float) -> np.ndarray:
    if scheme == "sign":
        signed = (section.psi * np.conj(sign_rotation(section.state, section.psi))).real
        rgb = phase_to_rgb(np.where(signed < 0, np.pi, 0.0), "sign")
    elif scheme in PHASE_SCHEMES:
        rgb = phase_to_rgb(np.angle(np.nan_to_num(section.psi)), scheme)
    else:
        raise ValueError(f"unknown phase colour scheme {scheme!r}: use one of {', '.join(PHASE_SCHEMES)}")
    return shade(rgb, density_weight(section.density, scale=scale, decades=decades))


def _draw_weight_scale(ax, scale: str, decades: float, fontsize: float) -> None:
    """A vertical bar showing how |psi|^2 / max sets the shading (on a neutral grey)."""
    ramp = np.linspace(0.0, 1.0, 256)
    ax.imshow(shade(np.full((256, 1, 3), _NEUTRAL), ramp[:, None]), origin="lower", extent=(0, 1, 0, 1),
              aspect="auto", interpolation="nearest")
    ax.set_xticks([])
    ax.yaxis.tick_right()
    ax.yaxis.set_label_position("right")
    if scale == "linear":
        ax.set_yticks([0.0, 0.5, 1.0], ["0", "0.5", "1"])
        ax.set_ylabel(r"$|\psi|^2$ / max", fontsize=fontsize)
    else:
        whole = int(math.floor(decades))
        ticks = [1.0 - k / decades for k in range(whole + 1)]
        ax.set_yticks(ticks, [f"$10^{{{-k}}}$" if k else "1" for k in range(whole + 1)])
        ax.set_ylabel(r"$|\psi|^2$ / max (log)", fontsize=fontsize)
    ax.tick_params(labelsize=fontsize, length=2)
    for spine in ax.spines.values():
        spine.set_linewidth(0.5)


def draw_section(ax, section: Section, lines: SectionLines, *, scheme: str = "uniform",
                 scale: str = "linear", decades: float = 3.0, units: str = "a0",
                 fontsize: float = 9.0) -> list[Line2D]:
    """Draw `section` into `ax`: the coloured density, the F contour, nodal lines, nuclei.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    section : Section
    lines : SectionLines
        The section's lines (:func:`orbitalrender.picture.nodal.section_lines`).
    scheme : {"uniform", "cvd", "sign"}
        Phase map; ``"sign"`` only for a real state or field (a complex one is refused).
    scale : {"linear", "log"}
        Opacity from |psi|^2 / max, linear or logarithmic over `decades`.
    decades : float
        Dynamic range of the logarithmic scale.
    units : {"a0", "angstrom", "nm", "pm"}
        Length unit of the axes.
    fontsize : float
        Label size in points.

    Returns
    -------
    list of Line2D
        Proxy artists for a line legend (F contour, nodal line, nucleus), as drawn.
    """
    k = a0_to(units)
    half = section.half_width_a0 * k
    extent = (-half, half, -half, half)
    ax.set_facecolor("white")
    ax.imshow(_section_rgb(section, scheme, scale, decades), origin="lower", extent=extent,
              interpolation="antialiased", zorder=0)
    proxies = []
    if lines.contour:
        ax.add_collection(LineCollection([line * k for line in lines.contour], colors="black",
                                         linewidths=1.1, zorder=3, gid="enclosing-contour"))
        pct = f"{100 * section.fraction_requested:.4g} %"
        proxies.append(Line2D([], [], color="black", lw=1.1, label=f"{pct} surface"))
    if lines.nodes:
        ax.add_collection(LineCollection([line * k for line in lines.nodes], colors="0.2", linewidths=0.8,
                                         linestyles=[_NODE_DASH], zorder=2, gid="nodal-lines"))
        proxies.append(Line2D([], [], color="0.2", lw=0.8, ls=_NODE_DASH, label="nodal line"))
    centres = section.centres_in_plane()
    if centres:
        cu, cv = np.array(centres).T * k
        ax.plot(cu, cv, linestyle="none", marker="+", color="black", markersize=6, mew=1.0, zorder=4)
        proxies.append(Line2D([], [], linestyle="none", marker="+", color="black", markersize=6,
                              mew=1.0, label="nucleus"))
    if section.is_nodal_plane:
        ax.text(0.5, 0.5, r"$\psi = 0$ on this plane" "\n(a nodal plane)", transform=ax.transAxes,
                ha="center", va="center", fontsize=fontsize, color="0.3")
    a, b = section.plane.axis_names
    unit = unit_label(units)
    ax.set_xlabel(f"${a}$ ({unit})", fontsize=fontsize)
    ax.set_ylabel(f"${b}$ ({unit})", fontsize=fontsize)
    ax.set_xlim(-half, half)
    ax.set_ylim(-half, half)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=fontsize - 1, direction="out", length=3)
    return proxies


def _vector_text(values: Sequence[float]) -> str:
    return "(" + ", ".join(f"{c:.3g}" for c in values) + ")"


def section_figure(section: Section, lines: SectionLines, *, scheme: str = "uniform",
                   scale: str = "linear", decades: float = 3.0, units: str = "a0",
                   title: str | None = None, width_in: float = 6.4,
                   label: str | None = None) -> matplotlib.figure.Figure:
    """A complete figure of `section`: the picture, with phase legend, opacity scale and a
    legend of the lines to its right.

    Parameters are those of :func:`draw_section`; `title` defaults to `label` (default
    the state label, or "user field"), the time if it is not 0, and the plane;
    `width_in` is the figure width in inches (height 0.75 of it).

    Examples
    --------
    >>> from orbitalrender.picture.nodal import section_lines
    >>> from orbitalrender.picture.plane import plane
    >>> from orbitalrender.picture.section import cross_section
    >>> from orbitalrender.state.model import real_orbital
    >>> s = cross_section(real_orbital(2, 1, 0, label="2pz"), plane("xz"), half_width_a0=8.0, pixels=32,
    ...                   fraction=None)
    >>> fig = section_figure(s, section_lines(s))
    >>> fig.axes[0].get_xlabel()
    '$x$ ($a_0$)'
    """
    fig = matplotlib.figure.Figure(figsize=(width_in, 0.75 * width_in))
    grid = fig.add_gridspec(3, 2, width_ratios=(4.0, 1.25), height_ratios=(1.1, 1.0, 0.8),
                            left=0.1, right=0.95, bottom=0.1, top=0.88, wspace=0.12, hspace=0.3)
    ax = fig.add_subplot(grid[:, 0])
    proxies = draw_section(ax, section, lines, scheme=scheme, scale=scale, decades=decades,
                           units=units)
    state = section.state
    if label is None:
        label = pretty_label(state.label) if state is not None and state.label else "user field"
    if state is not None and state.time_au != 0.0:
        label += f" at t = {state.time_au:.4g} au"
    if title is None:
        title = f"{label}: {section.plane.describe(units=units)}"
    ax.set_title(title, fontsize=10)
    draw_phase_legend(fig.add_subplot(grid[0, 1]), scheme, fontsize=8)
    bar_slot = grid[1, 1].subgridspec(1, 3, width_ratios=(1.0, 0.35, 1.0))
    _draw_weight_scale(fig.add_subplot(bar_slot[0, 1]), scale, decades, fontsize=7)
    lax = fig.add_subplot(grid[2, 1])
    lax.set_axis_off()
    if proxies:
        lax.legend(handles=proxies, loc="upper center", fontsize=7, frameon=False, handlelength=2.2)
    if not section.plane.name:
        lax.text(0.5, 0.0, f"u = {_vector_text(section.plane.u)}\nv = {_vector_text(section.plane.v)}",
                 transform=lax.transAxes, fontsize=7, color="0.3", ha="center", va="bottom")
    return fig


def section_metadata(section: Section, lines: SectionLines, *, scheme: str = "uniform",
                     scale: str = "linear", decades: float = 3.0, units: str = "a0",
                     **extra) -> dict:
    """The metadata of a section figure (:func:`orbitalrender.picture.output.figure_metadata`
    keys plus the plane, window, level method, nodal line count and drawing options).

    Parameters are those given to :func:`section_figure`; `extra` is added as is.

    Examples
    --------
    >>> import orbitalrender as orb
    >>> s = orb.cross_section(orb.eigenstate(2, 0, 0), orb.plane("xy"), half_width_a0=6.0, pixels=32,
    ...                       fraction=None)
    >>> md = section_metadata(s, orb.section_lines(s))
    >>> md["plane"], md["nodal_lines"], md["resolution"]
    ('xy', 1, 32)
    """
    from .output import figure_metadata

    where = section.plane
    return figure_metadata(
        section.state, section.fraction_requested, section.level, len(section.u_a0), command="section",
        plane=where.name or None, normal=where.normal, offset_a0=where.offset_a0, u_axis=where.u,
        v_axis=where.v, centre_a0=section.centre_a0, half_width_a0=section.half_width_a0,
        pixel_a0=section.pixel_a0, exact=section.exact, fraction_enclosed=section.fraction_enclosed,
        fraction_error=section.fraction_error, level_method=section.level_method,
        nodal_lines=len(lines.nodes), nodal_plane=section.is_nodal_plane,
        scale=scale, decades=decades if scale == "log" else None, phase_map=scheme, units=units, **extra)

