"""Jobs step for sections: the options of a cross-section and the job that draws it.

The plane is a coordinate plane (``plane``) or any plane given by its normal
(``normal``), at ``offset_a0`` from the origin.  psi is evaluated exactly on the
pixels for a STATE and interpolated for a user field.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any, ClassVar

from ..picture.density import DENSITY_SCALES
from ..picture.plane import MAX_PIXELS, MIN_PIXELS, PLANE_NAMES
from ..state.limits import FRACTION_MAX
from .option import option
from .shared import FRACTION, PHASE_MAPS, FieldOptions, FileOptions, PictureOptions, StateOptions, lazy

__all__ = ["SectionOptions", "DENSITY_SCALES", "MAX_DECADES",
           "parse_vector", "plane_of", "section_job"]

#: Largest logarithmic range offered: float64 densities span far more, but beyond 12
#: decades the picture shows round-off of the tails rather than the state.
MAX_DECADES = 12.0


def parse_vector(text: str) -> tuple[float, float, float]:
    """``"nx,ny,nz"`` -> three floats (ValueError otherwise).

    Examples
    --------
    >>> parse_vector("1, 1,0")
    (1.0, 1.0, 0.0)
    """
    parts = [p.strip() for p in text.strip().strip("()").split(",")]
    values = tuple(float(p) for p in parts)
    if len(values) != 3:
        raise ValueError(f"cannot read {text!r}: give three numbers separated by commas, e.g. 1,1,0")
    return values


@dataclass(frozen=True)
class SectionOptions(FileOptions, PictureOptions, FieldOptions, StateOptions):
    """Options of a cross-section (gallery kind ``section``; the section command)."""

    STATE_NARGS: ClassVar[str] = "?"
    #: Groups of options of which at most one may be given.
    EXCLUSIVE: ClassVar[tuple[tuple[str, ...], ...]] = (("plane", "normal"),)
    states: tuple[str, ...] = ()
    plane: str | None = option(None, "a coordinate plane (default xz)", type="text", choices=PLANE_NAMES)
    normal: tuple[float, float, float] | None = option(
        None, "the plane's normal vector instead of a coordinate plane", type="numbers", count=3,
        metavar="NX,NY,NZ", parse=parse_vector, check=lazy("picture.plane", "plane"),
        expected="three numbers, not all zero")
    offset_a0: float = option(0.0, "distance of the plane from the origin along its normal (for a "
                              "coordinate plane: the coordinate not in it)", unit="a0", flag="--offset",
                              metavar="D")
    fraction: float = option(FRACTION, "draw the cut through the surface enclosing this probability, "
                             "above 0 and at most 0.9999", lo=0, hi=FRACTION_MAX, lo_open=True, metavar="F")
    contour: bool = option(True, "leave out that contour", type="bool")
    nodes: bool = option(True, "leave out the nodal lines", type="bool")
    extent_a0: float | None = option(None, "half the side of the square shown (default: from the state)",
                                     lo=0, lo_open=True, unit="a0", flag="--extent",
                                     metavar="HALF_WIDTH_A0")
    pixels: int = option(400, "pixels per side at which psi is evaluated", type="integer",
                         lo=MIN_PIXELS, hi=MAX_PIXELS, metavar="N")
    scale: str = option("linear", "lightness from |psi|^2 / max, linear or logarithmic", type="text",
                        choices=DENSITY_SCALES)
    decades: float = option(3.0, "range of the logarithmic scale in powers of ten", lo=0, hi=MAX_DECADES,
                            lo_open=True)
    phase_map: str = option("uniform", "uniform (constant lightness), cvd (red-green safe) or sign "
                            "(real psi)", type="text", choices=PHASE_MAPS)
    title: str | None = option(None, "title (default: state and plane)", type="text")


def plane_of(options: SectionOptions):
    """The :class:`~orbitalrender.picture.plane.Plane` that `options` describe."""
    from ..picture.plane import plane

    return plane(options.normal or options.plane or "xz", options.offset_a0)


def section_job(source: Any, options: SectionOptions, *, label: str,
                level_for: Callable[[], Any] | None = None) -> tuple[Any, dict[str, Any]]:
    """Draw psi of `source` (a State or a user field's Lattice) on the plane of `options`.

    Parameters
    ----------
    source : State or Lattice
    options : SectionOptions
    label : str
        Name of the source in the title.
    level_for : callable, optional
        ``level_for() -> LevelResult`` of the contour (a cache may provide it); default:
        computed for `source`.

    Returns
    -------
    (matplotlib.figure.Figure, dict)
        The figure and its metadata.
    """
    from ..picture.nodal import section_lines
    from ..picture.section import cross_section
    from ..picture.section_figure import section_figure, section_metadata

    if options.phase_map == "sign":  # refuse a complex state before its section is evaluated
        from ..state.model import State
        from ..state.phase import sign_rotation

        state = source if isinstance(source, State) else source.state
        if state is not None:
            sign_rotation(state)
    fraction = options.fraction if options.contour and level_for is None else None
    section = cross_section(source, plane_of(options), half_width_a0=options.extent_a0,
                            pixels=options.pixels, fraction=fraction)
    if options.contour and level_for is not None:
        level = level_for()
        section = replace(section, level=level.level, fraction_requested=level.fraction_requested,
                          fraction_enclosed=level.fraction_enclosed,
                          fraction_error=level.fraction_error, level_method=level.method)
    lines = section_lines(section, nodes=options.nodes)
    style = dict(scheme=options.phase_map, scale=options.scale, decades=options.decades,
                 units=options.units)
    fig = section_figure(section, lines, **style, title=options.title, label=label,
                         text_size_pt=options.text_size_pt)
    md = section_metadata(section, lines, **style, source=options.field, dpi=options.dpi)
    return fig, md
