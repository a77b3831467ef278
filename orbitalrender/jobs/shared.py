"""Jobs step, shared groups: the state and its physics, user fields, the lattice, pictures and files.

Each group is a frozen dataclass of :func:`~orbitalrender.jobs.option.option`
fields; an output kind's options dataclass inherits the groups it uses, so each
of these options is defined once for every kind.  The helpers turn a group's
values into library objects (states, boxes, dtypes).
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from ..colormap import PHASE_SCHEMES as PHASE_MAPS
from ..picture.output import DPI_RANGE, TEXT_SIZE_RANGE_PT
from ..state.limits import Z_RANGE
from ..state.units import LENGTH_UNITS, NUCLEUS_NAMES
from .option import Options, option

__all__ = ["StateOptions", "FieldOptions", "LatticeOptions", "PictureOptions", "FileOptions",
           "FRACTION", "FRACTION_HELP", "LENGTH_UNITS", "NUCLEUS_NAMES", "PRECISION_NAMES", "PHASE_MAPS",
           "DPI_RANGE", "lazy",
           "parse_states", "box_of", "dtype_of", "surface_of", "require_lattice_memory_of"]

#: The probability enclosed by surfaces, marked on radial plots and cut by sections when
#: no other is asked for (our choice: the common textbook picture shows 90 %).
FRACTION = 0.9
FRACTION_HELP = "probability enclosed by the surface, above 0 and at most 0.9999"
#: Names of the lattice precisions (``lattice.sampler.PRECISIONS`` holds their dtypes).
PRECISION_NAMES = ("single", "double")


def lazy(module: str, name: str) -> Callable[..., Any]:
    """A function that imports ``module.name`` on its first call, then calls it.

    Checks that need a heavy library use this, so defining options stays light.
    """
    def call(*args, **kwargs):
        return getattr(importlib.import_module(f"orbitalrender.{module}"), name)(*args, **kwargs)
    call.__name__ = name
    return call


def _nucleus(value: Any) -> None:
    from ..state.units import nucleus_reduced_mass_ratio

    nucleus_reduced_mass_ratio(value)


@dataclass(frozen=True)
class StateOptions(Options):
    """The state's physics: nuclear charge, reduced mass and the time of a superposition."""

    Z: float = option(1.0, "nuclear charge", lo=Z_RANGE[0], hi=Z_RANGE[1], flag="--Z")
    nucleus: Any = option(
        "infinite", f"{', '.join(NUCLEUS_NAMES)}, or a nucleus-to-electron mass ratio",
        type="value", check=_nucleus,
        expected=f"a nucleus preset ({', '.join(NUCLEUS_NAMES)}) or a nucleus-to-electron mass ratio")
    time: float = option(0.0, "time at which a superposition is drawn (unit: time unit)")
    time_unit: str = option("au", "unit of the time: atomic units (hbar/E_h) or femtoseconds",
                            type="text", choices=("au", "fs"))


@dataclass(frozen=True)
class FieldOptions(Options):
    """psi from a file instead of a STATE: the file and the grid of an ``.npy`` array."""

    field: str | None = option(None, "psi stored in an .npy/.npz file instead of a STATE", type="text",
                               metavar="FILE", expected="the name of an existing .npy or .npz file")
    field_spacing_a0: float | None = option(
        None, "grid step of an .npy field (an .npz file carries its own)", lo=0, lo_open=True,
        unit="a0", flag="--spacing-a0")
    field_origin_a0: tuple[float, float, float] | None = option(
        None, "coordinates of the first grid point of an .npy field (default: centred)",
        type="numbers", count=3, unit="a0", flag="--origin-a0", metavar=("X", "Y", "Z"))


@dataclass(frozen=True)
class LatticeOptions(Options):
    """The lattice psi is sampled on: points per axis, the cube and the precision."""

    resolution: int = option(128, "lattice points per axis (a lattice too big for the memory is "
                             "refused with the largest that fits)", type="integer", lo=8, hi=1024)
    box_a0: float | None = option(None, "half-width of the lattice cube (default: from the state)",
                                  lo=0, lo_open=True, unit="a0", flag="--box", metavar="HALF_WIDTH_A0")
    precision: str = option("single", "complex64 (single) or complex128 (double) lattice values",
                            type="text", choices=PRECISION_NAMES)


@dataclass(frozen=True)
class PictureOptions(Options):
    """A picture's look and size in print: length unit, title, dots per inch, background."""

    units: str = option("a0", "length unit of the axes and scale bar", type="text",
                        choices=LENGTH_UNITS)
    title: str | None = option(None, "title (default: from the state)", type="text")
    dpi: float = option(200.0, "dots per inch of the picture", lo=DPI_RANGE[0], hi=DPI_RANGE[1])
    transparent: bool = option(False, "transparent background", type="bool")
    text_size_pt: float | None = option(
        None, "size of the titles in points at the output size; the other text follows at fixed "
              "ratios (default: sized for the picture, readable on a projected slide)",
        lo=TEXT_SIZE_RANGE_PT[0], hi=TEXT_SIZE_RANGE_PT[1], unit="pt", flag="--text-size", metavar="PT")


@dataclass(frozen=True)
class FileOptions(Options):
    """Where the command line writes (a gallery names its files itself)."""

    out: str | None = option(None, "output file; its suffix sets the format (default: named after "
                             "the state, in the current folder)", type="text", metavar="FILE", key="")
    report: str | None = option(None, "also write the report as JSON", type="text",
                                metavar="FILE.json", key="")


def parse_states(texts, options: StateOptions, *, times_au=None, sets: bool = False) -> list:
    """The States that the STATE `texts` and the physics of `options` describe.

    With `times_au`, the one STATE at each of those times (a time strip).  With `sets`, a
    hybrid set label (``sp3``) gives the tuple of its members, drawn together in one panel;
    without, it is refused with a request for one member.
    """
    from ..state.notation import hybrid_set_size, parse_state
    from ..state.notation import parse_states as expand
    from ..state.units import femtoseconds_to_au, nucleus_reduced_mass_ratio

    mu = nucleus_reduced_mass_ratio(options.nucleus)
    t0 = options.time if options.time_unit == "au" else femtoseconds_to_au(options.time)
    if times_au is not None:
        return [parse_state(texts[0], Z=options.Z, reduced_mass_ratio=mu, time_au=t) for t in times_au]
    if sets:
        return [expand(t, Z=options.Z, reduced_mass_ratio=mu, time_au=t0) if hybrid_set_size(t)
                else parse_state(t, Z=options.Z, reduced_mass_ratio=mu, time_au=t0) for t in texts]
    return [parse_state(t, Z=options.Z, reduced_mass_ratio=mu, time_au=t0) for t in texts]


def box_of(options: LatticeOptions, state) -> Any:
    """The cube that `box_a0` asks for (its half-width about the middle of the state's centres),
    or None for the default box."""
    if options.box_a0 is None or state is None:
        return None
    from ..lattice.grid import Box
    from ..lattice.sampler import default_box

    return Box(default_box(state).centre_a0, options.box_a0)


def dtype_of(options: LatticeOptions) -> Any:
    """The numpy dtype that `precision` names."""
    from ..lattice.sampler import PRECISIONS

    return PRECISIONS[options.precision]


def require_lattice_memory_of(options: LatticeOptions, resolution: int | None = None) -> None:
    """Before any work: raise MemoryLimitError if the lattice of `options` (or of `resolution`
    points per axis, e.g. a draft cap) and the surface step on it would not fit in memory now.
    The one check of the commands and the gallery."""
    from ..lattice.memory import require_lattice_and_surface_memory

    require_lattice_and_surface_memory(options.resolution if resolution is None else resolution,
                                       dtype_of(options))


def surface_of(state, fraction: float, options: LatticeOptions) -> Any:
    """The surface enclosing `fraction` of `state` on the lattice that `options` describe."""
    from ..surface.extract import extract_surface

    return extract_surface(state, fraction, options.resolution, box_of(options, state), dtype_of(options))
