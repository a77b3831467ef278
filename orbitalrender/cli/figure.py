"""``orbitalrender figure``: shaded, phase-coloured 3D pictures of probability surfaces (picture step).

One STATE gives one render with its title, phase legend and scale bar; several
STATEs (or ``--shell N``) give a grid of panels at one shared scale; ``--times``
gives a time strip of one superposition.  The options are those of
:class:`orbitalrender.jobs.LayoutOptions`; the work is :func:`orbitalrender.jobs.figure_job`.
Every option is checked before any work is done, and the file is written
atomically, so a failure leaves no partial file.
"""

from __future__ import annotations

import argparse

from ..errors import UserInputError
from ..jobs.figure import LayoutOptions, figure_job, picture_size
from ..jobs.shared import dtype_of, parse_states
from ..jobs.write import write_picture
from .common import add_command, field_source

__all__ = ["register", "run"]


def register(subparsers) -> None:
    add_command(
        subparsers, "figure", LayoutOptions, run,
        help="draw the probability surface shaded and coloured by the phase of psi",
        description="Draw the surface enclosing a probability FRACTION of each STATE as a shaded 3D "
                    "picture, hue = phase of psi, with a phase legend and a scale bar.  Several "
                    "STATEs (or --shell) make a grid at one scale; --times makes a time strip.",
        preload=("orbitalrender.picture.compose", "orbitalrender.picture.layout",
                 "orbitalrender.picture.scene", "orbitalrender.surface.extract"))


def _check(options: LayoutOptions) -> None:
    """Options that only go with (or without) others."""
    given = sum(bool(x) for x in (options.states, options.shell is not None, options.field))
    if given > 1:
        raise UserInputError("give either STATE ..., --shell N or --field FILE, not more than one")
    if given == 0:
        raise UserInputError("give a STATE (e.g. 3dz2 or 2,1,1), --shell N or --field FILE")
    if options.times is not None:
        if len(options.states) != 1:
            raise UserInputError("--times draws one STATE at several times: give exactly one STATE")
        if options.time != 0.0:
            raise UserInputError("--times gives the times itself; leave out --time")


def run(options: LayoutOptions, args: argparse.Namespace) -> int:
    from ..atomic import check_writable
    from ..lattice.memory import require_lattice_memory, surface_bytes_per_point
    from ..picture.axis import state_nodal_axis_centre
    from ..picture.layout import default_columns, shell_states
    from ..picture.output import default_output_path, figure_format
    from ..picture.scene import render_path, require_render_memory
    from ..state.units import femtoseconds_to_au, nucleus_reduced_mass_ratio

    _check(options)
    if options.out is not None:
        figure_format(options.out)
        check_writable(options.out)
    if options.report:
        check_writable(options.report)
    dtype = dtype_of(options)
    require_lattice_memory(options.resolution, dtype, extra_bytes_per_point=surface_bytes_per_point(dtype),
                           what="lattice with its surface")
    times = None
    if options.times is not None:
        times = [femtoseconds_to_au(t) if options.time_unit == "fs" else t for t in options.times]
    surface_for = None
    if options.shell is not None:
        states = shell_states(options.shell, options.basis, options.Z,
                              nucleus_reduced_mass_ratio(options.nucleus))
    elif options.field is not None:
        lattice, label = field_source(options)
        states = [None]
        surface_for = _field_surface(lattice, options.fraction)
    else:
        states = parse_states(options.states, options, times_au=times)
    if times is not None:
        surface_for = _strip_surface(states[0], options)
    count = len(states)
    ncols = count if times is not None else (options.columns or default_columns(count))
    width, height = picture_size(options, count, ncols, times is not None)
    path = render_path(cutaway=options.cutaway is not None, nodal_axis=options.nodal_axis,
                       translucent_outer=options.translucent_outer)
    require_render_memory(width, height, options.supersample, path)  # before any work
    if options.nodal_axis and count == 1 and states[0] is not None:
        state_nodal_axis_centre(states[0])  # refuse before any work
    out = options.out
    if out is None:
        name = (label if options.field is not None else states[0].label if count == 1 else
                f"shell{options.shell}" if options.shell else "states")
        out = default_output_path(name, "figure")
        check_writable(out)
    fig, metadata = figure_job(states, options, surface_for=surface_for, times_au=times)
    write_picture(fig, out, metadata, dpi=options.dpi, transparent=options.transparent,
                  report=options.report, text_labels=True)
    print(f"wrote {out}")
    return 0


def _field_surface(lattice, fraction: float):
    def surface(_state):
        from ..surface.extract import surface_at_level
        from ..surface.level import level_for_fraction

        return surface_at_level(lattice, level_for_fraction(lattice, fraction))
    return surface


def _strip_surface(state, options: LayoutOptions):
    """Every frame of a time strip on one lattice cube (the default box of the state unless
    ``--box`` is given), so the frames are drawn about one centre."""
    from ..jobs.shared import box_of
    from ..lattice.sampler import default_box

    box = box_of(options, state) or default_box(state)

    def surface(frame):
        from ..surface.extract import extract_surface

        return extract_surface(frame, options.fraction, options.resolution, box, dtype_of(options))
    return surface
