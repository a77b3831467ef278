"""The picture step for point clouds: dots drawn from |psi|^2, coloured by the phase of psi.

The points are projected with the same :class:`Camera` as the surface figures and
coloured with the same phase maps, so a cloud and a surface of one state, drawn with
one camera, line up.  Each point is a translucent dot about 1.5 px across; dots are
composited without regard to depth (a cloud has no surfaces to hide behind), so the
picture is the same whatever order the points come in.  The dot opacity is chosen from
the data: the busiest tenth of the occupied pixels reaches 85 % coverage.

An optional surface (usually the one enclosing the fraction F) is drawn underneath at a
quarter of its opacity, for comparison with the cloud.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from ..colormap import PHASE_SCHEMES, linear_to_srgb, psi_to_rgb, srgb_to_linear
from ..lattice.cloud import Cloud, Slab
from ..lattice.memory import require_bytes
from ..state.model import State
from ..state.notation import pretty_label
from ..state.phase import sign_rotation
from ..surface.level import level_for_fraction
from ..surface.model import Surface
from .camera import DEFAULT_CAMERA, Camera, frame_camera, pixel_projection
from .compose import compose_figure, fit_geometry
from .scene import Render, render_surfaces

__all__ = ["render_cloud", "cloud_figure", "cloud_report", "cloud_title", "point_colours",
           "picture_bytes"]

#: Samples per pixel side of the dot raster.
_SUPERSAMPLE = 3
#: Dot radius in supersampled pixels: 2.25 / 3 = 0.75 px, a dot about 1.5 px across.
_DOT_RADIUS = 2.25
#: Coverage reached by the 90th percentile of occupied samples (our choice: dense cores
#: read as nearly solid without hiding the gradation outside them).
_BUSY_QUANTILE, _BUSY_COVERAGE = 0.9, 0.85
_ALPHA_RANGE = (0.01, 0.9)
#: Opacity of the comparison surface drawn under the dots.
_SURFACE_OPACITY = 0.25
#: Share of points left out at each end, per axis, when the camera is fitted to the cloud
#: (a million points reach far into the tail; the picture shows the bulk).
_FIT_TAIL = 0.002
#: Bytes per point of the raster (projected position, linear colour, and the pixel index,
#: mask and weights of one footprint offset at a time; an upper bound of the numpy
#: temporaries) and per supersampled pixel (count, colour sums and the composite).
_BYTES_PER_POINT = 128
_BYTES_PER_PIXEL_SAMPLE = 96


def _footprint() -> np.ndarray:
    r = math.ceil(_DOT_RADIUS)
    dy, dx = np.mgrid[-r:r + 1, -r:r + 1]
    inside = dx * dx + dy * dy <= _DOT_RADIUS**2
    return np.stack([dy[inside], dx[inside]], axis=1)


def point_colours(psi: np.ndarray, phase_map: str = "uniform", state: State | None = None) -> np.ndarray:
    """sRGB colours (N, 3) of the points from arg psi, with the same maps as the surfaces;
    the ``"sign"`` map reads the sign after the one rule of
    :func:`orbitalrender.state.phase.sign_rotation` for `state` (a complex state is refused)."""
    rotation = sign_rotation(state, psi) if phase_map == "sign" else 1.0 + 0.0j
    return psi_to_rgb(psi, phase_map, rotation)


def picture_bytes(count: int, width_px: int, height_px: int) -> int:
    """Peak bytes of :func:`render_cloud` for `count` points on a `width_px` x `height_px` image
    (the cloud itself not included)."""
    return int(count * _BYTES_PER_POINT + width_px * height_px * _SUPERSAMPLE**2 * _BYTES_PER_PIXEL_SAMPLE)


def _fit_points(points: np.ndarray) -> np.ndarray:
    lo = np.quantile(points, _FIT_TAIL, axis=0)
    hi = np.quantile(points, 1 - _FIT_TAIL, axis=0)
    return np.array([[(lo, hi)[i][0], (lo, hi)[j][1], (lo, hi)[k][2]]
                     for i in (0, 1) for j in (0, 1) for k in (0, 1)])


def render_cloud(cloud: Cloud, width_px: int = 800, height_px: int = 800, *,
                 camera: Camera = DEFAULT_CAMERA, phase_map: str = "uniform", slab: Slab | None = None,
                 surface: Surface | None = None,
                 background: tuple[float, float, float] | None = (1.0, 1.0, 1.0)) -> Render:
    """Draw the points of `cloud` as phase-coloured dots.

    Parameters
    ----------
    cloud : Cloud
        From :func:`orbitalrender.lattice.cloud.draw_cloud`.
    width_px, height_px : int
        Image size, 16 to 8192 px.
    camera : Camera
        Unset target and half-extent are fitted to the bulk of the cloud (all but 0.2 %
        at each end per axis), so a slab is drawn at the scale of the whole cloud.
    phase_map : {"uniform", "cvd", "sign"}
    slab : Slab, optional
        Draw only the points inside it.
    surface : Surface, optional
        Drawn faintly underneath (a quarter of its opacity).
    background : RGB tuple or None
        None leaves a transparent background.

    Returns
    -------
    Render

    Examples
    --------
    >>> from orbitalrender.lattice.cloud import draw_cloud
    >>> from orbitalrender.state.model import eigenstate
    >>> r = render_cloud(draw_cloud(eigenstate(2, 1, 1), 2000, seed=1), 64, 48)
    >>> r.rgba.shape, r.labels
    ((48, 64, 4), ('2,1,1',))
    """
    width_px, height_px = int(width_px), int(height_px)
    if not (16 <= width_px <= 8192 and 16 <= height_px <= 8192):
        raise ValueError(f"the image size must be 16 to 8192 px per side, got {width_px} x {height_px}")
    if phase_map not in PHASE_SCHEMES:
        raise ValueError(f"unknown phase map {phase_map!r}: use one of {', '.join(PHASE_SCHEMES)}")
    ss = _SUPERSAMPLE
    foot = _footprint()
    require_bytes(picture_bytes(cloud.count, width_px, height_px),
                  f"a {width_px} x {height_px} px picture of {cloud.count} points")
    camera = frame_camera([], camera, aspect=width_px / height_px,
                          extra_points_a0=_fit_points(cloud.points_a0))
    points, psi = cloud.points_a0, cloud.psi
    colours = srgb_to_linear(point_colours(psi, phase_map, cloud.state))
    if slab is not None:
        inside = slab.contains(points)
        points, colours = points[inside], colours[inside]
    w, h = width_px * ss, height_px * ss
    x, y, _, _ = pixel_projection(camera, w, h).project(points)
    counts = np.zeros(w * h)
    sums = np.zeros((3, w * h))
    for dy, dx in foot:
        col, row = np.floor(x).astype(np.int64) + dx, np.floor(y).astype(np.int64) + dy
        ok = (col >= 0) & (col < w) & (row >= 0) & (row < h)
        index = row[ok] * w + col[ok]
        counts += np.bincount(index, minlength=w * h)
        for c in range(3):
            sums[c] += np.bincount(index, weights=colours[ok, c], minlength=w * h)
    occupied = counts[counts > 0]
    busy = float(np.quantile(occupied, _BUSY_QUANTILE)) if len(occupied) else 1.0
    alpha = float(np.clip(1 - (1 - _BUSY_COVERAGE) ** (1 / busy), *_ALPHA_RANGE))
    coverage = 1.0 - (1.0 - alpha) ** counts
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(counts > 0, sums / np.maximum(counts, 1), 0.0)
    premult = (mean * coverage).reshape(3, h, w)
    cover = coverage.reshape(h, w)
    # box filter to output pixels (premultiplied, so colour and coverage average correctly)
    premult = premult.reshape(3, height_px, ss, width_px, ss).mean(axis=(2, 4))
    cover = cover.reshape(height_px, ss, width_px, ss).mean(axis=(1, 3))
    under_rgb, under_a = np.zeros((3, height_px, width_px)), np.zeros((height_px, width_px))
    if surface is not None:
        faint = render_surfaces(surface, width_px, height_px, camera=camera, phase_map=phase_map,
                                supersample=2, background=None)
        under_a = faint.rgba[..., 3].astype(float) * _SURFACE_OPACITY
        under_rgb = srgb_to_linear(faint.rgba[..., :3].astype(float)).transpose(2, 0, 1) * under_a
    out_rgb = premult + under_rgb * (1 - cover)
    out_a = cover + under_a * (1 - cover)
    if background is not None:
        bg = srgb_to_linear(np.asarray(background, dtype=float))[:, None, None]
        out_rgb, out_a = out_rgb + bg * (1 - out_a), np.ones_like(out_a)
    with np.errstate(invalid="ignore", divide="ignore"):
        straight = np.where(out_a > 0, out_rgb / np.maximum(out_a, 1e-12), 0.0)
    rgba = np.concatenate([linear_to_srgb(np.clip(straight, 0, 1)), out_a[None]]).transpose(1, 2, 0)
    px_per_a0 = 0.5 * min(width_px, height_px) * camera.zoom / camera.half_extent_a0
    return Render(rgba.astype(np.float32), px_per_a0, camera, phase_map, (cloud.state.label,))


def cloud_title(cloud: Cloud, slab: Slab | None = None) -> str:
    """Title text: the state, the number of points and the slab, if any.

    Examples
    --------
    >>> from orbitalrender.lattice.cloud import draw_cloud, Slab
    >>> from orbitalrender.state.notation import parse_state
    >>> cloud_title(draw_cloud(parse_state("2pz"), 5, seed=0), Slab("y", 0.0, 0.5))
    '2p$_{z}$, 5 points, |y| ≤ 0.5 a$_0$'
    """
    text = f"{pretty_label(cloud.state.label)}, {cloud.count} points"
    if slab is not None:
        offset = f" - {slab.centre_a0:g}" if slab.centre_a0 > 0 else (
            f" + {-slab.centre_a0:g}" if slab.centre_a0 < 0 else "")
        text += f", |{slab.axis}{offset}| ≤ {slab.half_thickness_a0:g} a$_0$"
    return text


def cloud_figure(cloud: Cloud, width_px: int = 900, height_px: int = 800, *, dpi: float = 100.0,
                 title: str | None = None, units: str = "a0", legend: bool = True,
                 scale_bar: bool = True, transparent: bool = False, **render_options):
    """A cloud render with its title, phase legend and scale bar, as a matplotlib Figure.

    Parameters
    ----------
    cloud : Cloud
    width_px, height_px : int
        Size of the whole figure.
    dpi, units, legend, scale_bar, transparent
        As for :func:`orbitalrender.picture.compose.figure_3d`.
    title : str, optional
        Default :func:`cloud_title`.
    **render_options
        Passed to :func:`render_cloud` (camera, phase_map, slab, surface).

    Returns
    -------
    (matplotlib.figure.Figure, Render)
    """
    if title is None:
        title = cloud_title(cloud, render_options.get("slab"))
    geometry = fit_geometry(width_px, height_px, titles=bool(title), legend=legend or scale_bar, dpi=dpi)
    render = render_cloud(cloud, *geometry.panel_px, background=None if transparent else (1, 1, 1),
                          **render_options)
    fig = compose_figure([render], geometry, titles=[title] if title else None, units=units,
                         legend=legend, scale_bar=scale_bar, transparent=transparent)
    return fig, render


def cloud_report(cloud: Cloud, fraction: float = 0.9, slab: Slab | None = None) -> Mapping:
    """What was drawn, and a check of it: the share of points inside the surface that
    encloses `fraction`, which should be F within its binomial standard error.

    Returns
    -------
    dict
        ``points``, ``seed``, ``proposals``, ``accepted_fraction``, ``fraction``,
        ``level_per_a0_3``, ``fraction_inside``, ``fraction_expected``, ``standard_error``
        = sqrt(F (1 - F) / N), ``deviation_in_standard_errors``, and with a slab
        ``slab`` and ``points_in_slab``.

    Examples
    --------
    >>> from orbitalrender.lattice.cloud import draw_cloud
    >>> from orbitalrender.state.notation import parse_state
    >>> rep = cloud_report(draw_cloud(parse_state("1s"), 10000, seed=2), 0.5)
    >>> z = rep["deviation_in_standard_errors"]
    >>> rep["fraction_expected"], round(rep["standard_error"], 4), abs(z) < 4
    (0.5, 0.005, True)
    """
    level = level_for_fraction(cloud.state, fraction)
    inside = float(np.mean(cloud.density >= level.level))
    se = math.sqrt(fraction * (1 - fraction) / cloud.count)
    report = {
        "points": cloud.count, "seed": cloud.seed, "proposals": cloud.proposals,
        "accepted_fraction": cloud.accepted_fraction, "sampler": "exact (inverse CDF and "
        "mixture rejection, lattice/cloud.py)", "fraction": fraction,
        "level_per_a0_3": level.level, "fraction_inside": inside,
        "fraction_expected": fraction, "standard_error": se,
        "deviation_in_standard_errors": (inside - fraction) / se,
    }
    if slab is not None:
        report["slab"] = {"axis": slab.axis, "centre_a0": slab.centre_a0,
                          "half_thickness_a0": slab.half_thickness_a0}
        report["points_in_slab"] = int(np.count_nonzero(slab.contains(cloud.points_a0)))
    return report

