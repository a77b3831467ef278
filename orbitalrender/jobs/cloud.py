"""Jobs step for point clouds: the options of a cloud and the job that draws or encodes it.

A cloud is N points drawn exactly from |psi|^2 (:mod:`orbitalrender.lattice.cloud`).
Its output is a picture (.png, .svg, .pdf) of phase-coloured dots seen with the
figure camera, or a PLY point cloud (.ply) with per-point phase and density.  Its
report says what was drawn and checks it: the share of the points inside the surface
that encloses F, beside F and its binomial standard error.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any, ClassVar

from ..errors import UserInputError
from ..lattice.cloud import MAX_POINTS
from ..state.limits import FRACTION_MAX
from .figure import FIGURE_SIZE_PX, ViewOptions
from .option import option
from .shared import FRACTION, FileOptions, LatticeOptions, PictureOptions, StateOptions, box_of, lazy

__all__ = ["CloudOptions", "CLOUD_SUFFIXES", "DEFAULT_POINTS", "check_cloud", "cloud_job"]

#: Suffixes of a cloud's file: pictures, then the PLY point cloud.
CLOUD_SUFFIXES = (".png", ".svg", ".pdf", ".ply")
#: Points drawn when no number is given (our choice: a dense picture drawn in about a second).
DEFAULT_POINTS = 200_000
#: Viewing direction along each slab axis (azimuth, elevation in degrees): the section is
#: seen face on, with z up where the axis allows it.
_FACE_ON = {"x": (0.0, 0.0), "y": (-90.0, 0.0), "z": (-90.0, 90.0)}


@dataclass(frozen=True)
class CloudOptions(ViewOptions, FileOptions, PictureOptions, LatticeOptions, StateOptions):
    """Options of a point cloud (gallery kind ``cloud``; the cloud command)."""

    STATE_NARGS: ClassVar[str] = "?"
    states: tuple[str, ...] = ()
    points: int = option(DEFAULT_POINTS, "number of points drawn exactly from |psi|^2", type="integer",
                         lo=1, hi=MAX_POINTS, metavar="N")
    seed: int | None = option(None, "seed of the random generator (numpy PCG64); the same seed gives "
                              "the same file (default: a fresh seed, recorded in the report)",
                              type="integer", lo=0, metavar="S")
    fraction: float = option(FRACTION, "F of the surface that the report counts the points inside of "
                             "(and that --surface draws)", lo=0, hi=FRACTION_MAX, lo_open=True,
                             metavar="F")
    slab: str | None = option(None, "draw only the points with |AXIS - C| <= H, C and H in a0: a thin "
                              "section, seen face on unless --azimuth or --elevation is given",
                              type="text", metavar="AXIS=C,H", check=lazy("lattice.cloud", "parse_slab"),
                              expected="AXIS=CENTRE,HALF_THICKNESS in a0, e.g. z=0,0.5")
    surface: bool = option(False, "draw the surface enclosing F faintly under the points", type="bool")
    title: str | None = option(None, "title (default: state, number of points and slab)", type="text")


def check_cloud(options: CloudOptions, file: str | Path, state=None) -> None:
    """Refuse what does not go together: the file's suffix, a PLY with picture-only options,
    and (with `state`) a slab outside the box and a memory estimate that does not fit."""
    suffix = Path(file).suffix.lower()
    if suffix not in CLOUD_SUFFIXES:
        raise UserInputError(f"cannot tell the format of {str(file)!r}: a cloud is written as "
                             + ", ".join(CLOUD_SUFFIXES))
    if suffix == ".ply" and (options.slab or options.surface):
        raise UserInputError("a PLY point cloud holds every point: a slab and the faint surface are for "
                             "pictures (.png, .svg, .pdf)")
    if state is None:
        return
    from ..lattice.cloud import cloud_bytes, parse_slab
    from ..lattice.memory import require_bytes
    from ..lattice.sampler import default_box

    need = cloud_bytes(state, options.points)
    if suffix != ".ply":
        from ..picture.cloud import picture_bytes

        need += picture_bytes(options.points, *(options.width_px or FIGURE_SIZE_PX[0],
                                                options.height_px or FIGURE_SIZE_PX[1]))
    require_bytes(need, f"a cloud of {options.points} points with its {suffix[1:].upper()} file")
    if options.slab:
        box = box_of(options, state) or default_box(state)
        parse_slab(options.slab).check_within(box)


def _camera(options: CloudOptions, slab):
    from ..picture.camera import Camera

    azimuth, elevation = options.azimuth_deg, options.elevation_deg
    defaults = CloudOptions()
    if slab is not None and (azimuth, elevation) == (defaults.azimuth_deg, defaults.elevation_deg):
        azimuth, elevation = _FACE_ON[slab.axis]
    return Camera(azimuth, elevation, options.zoom, options.projection)


def cloud_job(state, options: CloudOptions, *, suffix: str = ".png",
              surface_for: Callable[[Any], Any] | None = None,
              fit_size: Callable[[int, int], tuple[int, int]] | None = None) -> tuple[Any, dict[str, Any]]:
    """Draw `options.points` points of `state` as a picture, or encode them as a PLY.

    Parameters
    ----------
    state : State
        One state (a hybrid member, not a whole set).
    options : CloudOptions
    suffix : str
        ``.png``, ``.svg`` or ``.pdf`` for a picture; ``.ply`` for the point cloud.
    surface_for : callable, optional
        ``surface_for(state) -> Surface`` for ``surface``; default: extracted on the
        lattice of `options` (a cache may provide it instead).
    fit_size : callable, optional
        ``fit_size(width_px, height_px) -> (width_px, height_px)`` (a gallery's draft cap).

    Returns
    -------
    (matplotlib.figure.Figure or bytes, dict)
        The figure (or the PLY bytes) and its metadata, whose ``cloud`` entry is the report
        of :func:`orbitalrender.picture.cloud.cloud_report`.
    """
    from ..lattice.cloud import draw_cloud, parse_slab
    from ..picture.cloud import cloud_figure, cloud_report, point_colours
    from ..picture.output import figure_metadata
    from .shared import surface_of

    slab = parse_slab(options.slab) if options.slab else None
    cloud = draw_cloud(state, options.points, seed=options.seed)
    report = cloud_report(cloud, options.fraction, slab)
    if suffix.lower() == ".ply":
        from ..mesh.ply import encode_ply_points

        md = figure_metadata(state, options.fraction, report["level_per_a0_3"], None, command="cloud",
                             cloud=report)
        colours = point_colours(cloud.psi, options.phase_map, state)
        return encode_ply_points(cloud.points_a0, cloud.psi, colours, f"{state.label}; {cloud.count} "
                                 f"points, seed {cloud.seed}"), md
    size = (options.width_px or FIGURE_SIZE_PX[0], options.height_px or FIGURE_SIZE_PX[1])
    if fit_size is not None:
        size = fit_size(*size)
    surface = None
    if options.surface:
        surface = (surface_for(state) if surface_for is not None
                   else surface_of(state, options.fraction, options))
    fig, render = cloud_figure(cloud, *size, dpi=options.dpi, title=options.title, units=options.units,
                               legend=options.legend, scale_bar=options.legend,
                               transparent=options.transparent, camera=_camera(options, slab),
                               phase_map=options.phase_map, slab=slab, surface=surface)
    view = {"azimuth_deg": render.camera.azimuth_deg, "elevation_deg": render.camera.elevation_deg,
            "zoom": options.zoom, "projection": options.projection, "phase_map": options.phase_map,
            "slab": options.slab, "surface": options.surface, "size_px": list(size), "dpi": options.dpi}
    md = figure_metadata(state, options.fraction, report["level_per_a0_3"],
                         surface.lattice_shape[0] if surface is not None else None, command="cloud",
                         cloud=report, view=view, px_per_a0=render.px_per_a0)
    return fig, md
