"""Picture step, layouts: small multiples of several states and time strips, all at one scale.

Every panel of a layout is rendered with the same camera half-extent (and, for a
perspective camera, the same eye distance): the largest that any panel needs to
fit, so that equal lengths in a0 are equal lengths on the page and sizes compare
across panels.  One phase legend and one scale bar serve all panels.

Small multiples centre each panel on its own surfaces; a time strip keeps one
target for all frames, so that motion of the density shows as motion in the strip.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from ..lattice.grid import Box
from ..lattice.sampler import default_box
from ..state.model import State, eigenstate, real_orbital
from ..surface.model import Surface
from .axis import axis_segment, has_nodal_axis
from .camera import DEFAULT_CAMERA, Camera, as_surfaces, frame_camera
from .compose import compose_figure, fit_geometry, surface_title
from .scene import Render, render_surfaces

__all__ = ["shared_cameras", "small_multiples", "time_strip", "shell_states", "default_columns"]


def default_columns(count: int) -> int:
    """Columns of a near-square grid for `count` panels (one row up to 4).

    Examples
    --------
    >>> [default_columns(k) for k in (1, 3, 4, 5, 9, 16)]
    [1, 3, 4, 3, 3, 4]
    """
    if count <= 4:
        return max(count, 1)
    return math.ceil(math.sqrt(count))


def shared_cameras(groups: Sequence[Sequence[Surface]], camera: Camera = DEFAULT_CAMERA, *,
                   aspect: float = 1.0, shared_target: bool = False,
                   nodal_axis: bool | Sequence[bool] = False) -> list[Camera]:
    """One camera per panel, all with the same half-extent (and eye distance).

    Parameters
    ----------
    groups : sequence of sequences of Surface
        The surfaces of each panel.
    camera : Camera
        Angles, zoom and projection for all panels.
    aspect : float
        Panel width / height.
    shared_target : bool
        True: every panel looks at the centre of all surfaces together (time strips);
        False: each at its own.
    nodal_axis : bool or sequence of bool
        Leave room for the nodal axis line (in all panels, or per panel).

    Returns
    -------
    list of Camera
    """
    lists = [as_surfaces(g) for g in groups]
    axis = [nodal_axis] * len(lists) if isinstance(nodal_axis, bool) else list(nodal_axis)
    extra = [axis_segment(g) if a else None for g, a in zip(lists, axis)]
    if shared_target and camera.target_a0 is None:
        pts = np.concatenate([s.vertices_a0 for g in lists for s in g]
                             + [e for e in extra if e is not None])
        camera = replace(camera, target_a0=tuple(0.5 * (pts.min(axis=0) + pts.max(axis=0))))
    fitted = [frame_camera(g, camera, aspect=aspect, extra_points_a0=e)
              for g, e in zip(lists, extra)]
    half = max(c.half_extent_a0 for c in fitted)
    distance = max(c.distance_a0 for c in fitted) if camera.projection == "perspective" else None
    return [replace(c, half_extent_a0=half, distance_a0=distance) for c in fitted]


def small_multiples(panels: Sequence[Surface | Sequence[Surface]], titles: Sequence[str] | None = None, *,
                    ncols: int | None = None, width_px: int = 1200, height_px: int = 1000,
                    dpi: float = 100.0, units: str = "a0", legend: bool = True, scale_bar: bool = True,
                    transparent: bool = False, camera: Camera = DEFAULT_CAMERA, shared_target: bool = False,
                    **render_options):
    """A grid of renders at one scale, with titles and a shared legend.

    Parameters
    ----------
    panels : sequence of Surface (or of lists of Surfaces drawn together)
    titles : sequence of str, optional
        Default: each state's label and F.
    ncols : int, optional
        Default :func:`default_columns`.
    width_px, height_px : int
        Size of the whole figure at `dpi`.
    units, legend, scale_bar, transparent
        See :func:`orbitalrender.picture.compose.compose_figure`.
    camera : Camera
        Common angles, zoom and projection; the half-extent is shared (see
        :func:`shared_cameras`).
    shared_target : bool
        Look at one common centre in every panel.
    **render_options
        Passed to :func:`render_surfaces` (phase_map, cutaway, nodal_axis, ...).

    Returns
    -------
    (matplotlib.figure.Figure, list of Render)
    """
    groups = [as_surfaces(p) for p in panels]
    if not groups:
        raise ValueError("a layout needs at least one panel")
    if titles is None:
        titles = [surface_title(g[0]) for g in groups]
    if len(titles) != len(groups):
        raise ValueError(f"{len(titles)} titles for {len(groups)} panels")
    ncols = default_columns(len(groups)) if ncols is None else int(ncols)
    if ncols < 1:
        raise ValueError(f"a layout needs at least one column, got {ncols}")
    nrows = math.ceil(len(groups) / ncols)
    geometry = fit_geometry(width_px, height_px, ncols=ncols, nrows=nrows, legend=legend or scale_bar,
                            dpi=dpi)
    pw, ph = geometry.panel_px
    # the nodal axis is drawn in the panels whose state has one
    want_axis = bool(render_options.pop("nodal_axis", False))
    axis = [want_axis and has_nodal_axis(g[0]) for g in groups]
    cameras = shared_cameras(groups, camera, aspect=pw / ph, shared_target=shared_target, nodal_axis=axis)
    render_options.pop("background", None)
    background = None if transparent else (1.0, 1.0, 1.0)
    renders: list[Render] = [render_surfaces(g, pw, ph, camera=c, background=background, nodal_axis=a,
                                             **render_options)
                             for g, c, a in zip(groups, cameras, axis)]
    fig = compose_figure(renders, geometry, titles=titles, units=units, legend=legend, scale_bar=scale_bar,
                         transparent=transparent)
    return fig, renders


def time_strip(state: State, times_au: Sequence[float], *, fraction: float = 0.9, resolution: int = 96,
               box: Box | None = None, time_labels: Sequence[str] | None = None,
               width_px: int | None = None, height_px: int = 360, **options):
    """Frames of a superposition at chosen times, in one row, at one scale and one centre.

    Parameters
    ----------
    state : State
        Usually a superposition of different energies (a stationary state looks the
        same in every frame, apart from a global phase).
    times_au : sequence of float
        Times in atomic units (hbar / E_h).
    fraction : float
        Probability each frame's surface encloses.
    resolution : int
        Lattice points per axis for each frame.
    box : Box, optional
        One lattice box for all frames; default :func:`default_box` of `state`.
    time_labels : sequence of str, optional
        Panel titles; default ``t = ... au``.
    width_px, height_px : int
        Figure size; the default width gives square frames.
    **options
        Passed to :func:`small_multiples`.

    Returns
    -------
    (matplotlib.figure.Figure, list of Render)
    """
    from ..surface.extract import extract_surface

    times = [float(t) for t in times_au]
    if not times:
        raise ValueError("a time strip needs at least one time")
    if not all(math.isfinite(t) for t in times):
        raise ValueError(f"times must be finite, got {times}")
    box = box if box is not None else default_box(state)
    surfaces = [extract_surface(state.at_time(t), fraction, resolution, box) for t in times]
    if time_labels is None:
        time_labels = [f"t = {t:g} au" for t in times]
    if width_px is None:  # square frames
        probe = fit_geometry(10 * height_px, height_px, dpi=options.get("dpi", 100.0))
        width_px = len(times) * probe.panel_px[1] + probe.legend_px
    options.setdefault("shared_target", True)
    return small_multiples(surfaces, list(time_labels), ncols=len(times), width_px=width_px,
                           height_px=height_px, **options)


def shell_states(n: int, basis: str = "real", Z: float = 1.0, reduced_mass_ratio: float = 1.0) -> list[State]:
    """Every state of shell n, in order of l then m: real orbitals (labelled 3s, 3px, ...) or
    complex eigenstates |n l m>.

    Examples
    --------
    >>> [s.label for s in shell_states(2)]
    ['2s', '2px', '2py', '2pz']
    >>> [s.label for s in shell_states(2, "complex")]
    ['2,0,0', '2,1,-1', '2,1,0', '2,1,1']
    """
    from ..state.notation import REAL_LABELS

    if basis not in ("real", "complex"):
        raise ValueError(f"unknown basis {basis!r}: use real or complex")
    n = int(n)
    if not 1 <= n <= 7:
        raise ValueError(f"shell n must be 1 to 7, got {n}")
    out = []
    if basis == "complex":
        for l in range(n):
            out.extend(eigenstate(n, l, m, Z, reduced_mass_ratio) for m in range(-l, l + 1))
        return out
    for l in range(n):
        named = [(name, m) for name, (ll, m) in REAL_LABELS.items() if ll == l]
        if named:
            out.extend(real_orbital(n, l, m, Z, reduced_mass_ratio, label=f"{n}{name}") for name, m in named)
        else:  # l >= 4: no Cartesian labels, the default real(n,l,m)
            out.extend(real_orbital(n, l, m, Z, reduced_mass_ratio) for m in range(-l, l + 1))
    return out
