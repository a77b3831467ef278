"""Picture step, scene: a shaded, phase-coloured image of one or more Surfaces.

The camera (:mod:`orbitalrender.picture.camera`) projects the mesh,
:func:`orbitalrender.picture.raster.rasterize` finds the nearest fragment of every
(supersampled) pixel, and the kernels of :mod:`orbitalrender.picture.shading`
light and colour it.  The scene is drawn by one of the paths that
:func:`render_path` chooses, with its memory estimate (:func:`render_bytes`)
beside it:

* **banded**: an opaque scene without cut or axis line is rasterized, shaded and
  filtered band by band, with buffers of a few rows only;
* **whole**: with the dashed nodal axis, the whole supersampled image is
  rasterized at once so the line can be depth-tested against the surfaces;
* **layered**: translucent outer shells -- components that lie wholly outside
  another component (farther from the centre than all of it) -- are each their
  own layer (their nearest fragment), composited by depth over the opaque ones.
  A shell is shown by its outer wall; its inner (cavity) wall, with negative
  enclosed volume, is left out;
* **capped**: a cutaway drops the fragments in the removed region (an
  intersection of half-spaces, :mod:`orbitalrender.picture.cutaway`).  Where the
  first fragment left is a back face, the ray has come out of the removed region
  inside the solid, so the cut plane is drawn there, coloured with psi evaluated
  exactly at that 3D point: nested shells are seen in section.

Lighting directions are fixed in the camera frame (key light from the upper
left in front, a weak fill from the lower right), so every view is lit alike.
The specular term uses a viewer at infinity also for the perspective camera.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from ..colormap import PHASE_SCHEMES, srgb_to_linear
from ..lattice.memory import MemoryLimitError, amount, usable_bytes
from ..state.phase import sign_rotation
from ..surface.model import Surface
from .axis import AXIS_RGB, axis_layer, axis_segment
from .camera import DEFAULT_CAMERA, Camera, Projection, as_surfaces, frame_camera, pixel_projection
from .cutaway import Cutaway, cap_exit, clip_values
from .raster import Fragments, Screen, rasterize
from .shadetable import SHADE_LEVELS, shade_colours, shade_table
from .shading import (
    BAND_ROWS,
    LINE_SAMPLE,
    Bands,
    Light,
    ShadedMesh,
    band_lists,
    downsample,
    encode_srgb,
    render_banded,
    shade_pixels,
    shade_points,
    shade_resolve,
    srgb_lut,
)

__all__ = ["Lighting", "Render", "RENDER_PATHS", "render_path", "render_bytes",
           "require_render_memory", "render_surfaces"]

#: Shading works on this many pixels at a time, which bounds its temporaries (~0.3 GiB).
_CHUNK_PIXELS = 1 << 20


@dataclass(frozen=True)
class Lighting:
    """Ambient + diffuse key and fill lights + Blinn-Phong highlight (directions in the camera
    frame: x right, y up, z toward the eye).  The weights are our own choice, judged by eye:
    bright enough that the darkest lit side keeps its hue, a highlight small enough not to
    read as a colour of its own."""

    ambient: float = 0.24
    key: float = 0.66
    fill: float = 0.16
    specular: float = 0.18
    shininess: float = 40.0
    key_direction: tuple[float, float, float] = (-0.45, 0.55, 0.70)
    fill_direction: tuple[float, float, float] = (0.60, -0.30, 0.74)
    #: brightness of a back face seen through an open edge, relative to a front face
    back_face: float = 0.55


@dataclass(frozen=True, eq=False)
class Render:
    """A finished 3D render.

    Attributes
    ----------
    rgba : ndarray, float32, (H, W, 4)
        sRGB colour in [0, 1] with straight (not premultiplied) alpha; alpha is 1
        everywhere when a background colour was given.
    px_per_a0 : float
        Image pixels per a0: everywhere for an orthographic camera, at the target's
        depth for a perspective one.
    camera : Camera
        The camera with target, half-extent (and distance) filled in.
    phase_map : str
    labels : tuple of str
        Labels of the states drawn.
    """

    rgba: np.ndarray
    px_per_a0: float
    camera: Camera
    phase_map: str
    labels: tuple[str, ...]


#: The ways :func:`render_surfaces` draws a scene (see the module notes), as chosen by
#: :func:`render_path`.
RENDER_PATHS = ("banded", "whole", "layered", "capped")
# Renderer buffers per supersampled pixel: z-buffer (float64), triangle index (int32),
# barycentric weights (3 float32), linear colour (3 float32), depth, alpha and masks.
# Measured with tracemalloc at 800 x 600 px: 37 B without a cutaway, 87 B with one (the
# cap rays and a copy of the depth); rounded up to leave room for a second layer.  The
# banded path keeps buffers of a few rows only: 46-68 B per output pixel measured at
# 800 x 600 px for supersampling 2 to 4, so only the per-pixel term applies to it.
_BYTES_PER_SAMPLE = {"banded": 0, "whole": 48, "layered": 48, "capped": 96}
# ... and per output pixel: the downsampled colour, sRGB conversion, RGBA image and the
# matplotlib canvas of the composed figure (measured about 110 B at 400 x 300 px, ss = 1).
_BYTES_PER_PIXEL = 160


def _see_through(translucent_outer: float | None) -> bool:
    return translucent_outer is not None and translucent_outer < 1.0


def render_path(*, cutaway: bool, nodal_axis: bool, translucent_outer: float | None) -> str:
    """The path (one of :data:`RENDER_PATHS`) that draws a scene with these options.

    `translucent_outer` is the opacity of outer shells (None or 1: opaque).  Before the
    surfaces are split into components it is not known whether any shell lies outside
    another; the path chosen from the option alone then needs at least the memory of the
    one finally taken, so it serves for the estimate made before any work.

    Examples
    --------
    >>> render_path(cutaway=False, nodal_axis=False, translucent_outer=None)
    'banded'
    >>> render_path(cutaway=False, nodal_axis=True, translucent_outer=1.0)
    'whole'
    """
    if cutaway:
        return "capped"
    if _see_through(translucent_outer):
        return "layered"
    return "whole" if nodal_axis else "banded"


def render_bytes(width_px: int, height_px: int, supersample: int = 3, path: str = "whole") -> int:
    """Peak bytes of one shaded render of `width_px` x `height_px` at `supersample`^2 samples
    per pixel along `path` (:func:`render_path`), composed into a figure (the surface mesh
    itself excluded).

    Examples
    --------
    >>> round(render_bytes(900, 800, 3) / 2**20), round(render_bytes(900, 800, 3, "banded") / 2**20)
    (406, 110)
    """
    pixels = float(width_px) * float(height_px)
    return int(pixels * (supersample**2 * _BYTES_PER_SAMPLE[path] + _BYTES_PER_PIXEL))


def require_render_memory(width_px: int, height_px: int, supersample: int = 3,
                          path: str = "whole") -> None:
    """Raise MemoryLimitError, naming the estimate and what would fit, if a render of this
    size along `path` would not fit in the memory free now."""
    budget = usable_bytes()
    needed = render_bytes(width_px, height_px, supersample, path)
    if needed <= budget:
        return
    fits = [k for k in range(supersample - 1, 0, -1)
            if render_bytes(width_px, height_px, k, path) <= budget]
    scale = (budget / needed) ** 0.5
    hint = (f"supersampling {fits[0]} fits" if fits else
            f"about {int(width_px * scale)} x {int(height_px * scale)} px fits")
    raise MemoryLimitError(
        f"a {width_px} x {height_px} px render at supersampling {supersample} needs about "
        f"{amount(needed)} but only {amount(budget)} can be used; {hint}")


def _unit(v) -> np.ndarray:
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def _shade_max(lighting: Lighting) -> float:
    """Largest shade factor the lighting gives: ambient and both lights full on."""
    return float(lighting.ambient + lighting.key + lighting.fill)


def _shade_table(scheme: str, lighting: Lighting) -> np.ndarray:
    """The phase colours at every shade the lighting can give (:mod:`.shadetable`)."""
    return shade_table(scheme, _shade_max(lighting))


def _kernel_light(lighting: Lighting, proj: Projection) -> Light:
    """`lighting`, fixed in the camera frame, turned into world axes for the kernels."""
    frame = np.stack([proj.right, proj.up, proj.toward])
    key = _unit(lighting.key_direction) @ frame
    fill = _unit(lighting.fill_direction) @ frame
    half = _unit(key + proj.toward)
    return Light(*(float(c) for c in (*key, *fill, *half)), ambient=float(lighting.ambient),
                 key_weight=float(lighting.key), fill_weight=float(lighting.fill),
                 specular=float(lighting.specular), shininess=float(lighting.shininess),
                 back_gain=float(lighting.back_face),
                 levels_per_shade=(SHADE_LEVELS - 1) / _shade_max(lighting))


#: Colour of the caps of a user field, whose psi is not known off the mesh: mid grey (sRGB).
_CAP_GREY = 0.6


def _mesh(surfaces: list[Surface], rotation: complex, proj: Projection,
          lut: np.ndarray) -> tuple[np.ndarray, ShadedMesh]:
    """One layer's vertices (V, 3) and what shading needs of it, with psi rotated by `rotation`."""
    verts, faces, normals, psi = [], [], [], []
    base = 0
    for s in surfaces:
        verts.append(s.vertices_a0)
        faces.append(np.asarray(s.faces, dtype=np.int64) + base)
        normals.append(s.normals)
        psi.append(s.psi)
        base += len(s.vertices_a0)
    v = np.ascontiguousarray(np.concatenate(verts), dtype=np.float64)
    f = np.ascontiguousarray(np.concatenate(faces))
    n = np.ascontiguousarray(np.concatenate(normals), dtype=np.float64)
    p = np.concatenate(psi).astype(complex) * np.conj(rotation)
    mag = np.abs(p)
    phasors = np.where(mag > 0, p / np.where(mag > 0, mag, 1.0), 1.0)
    # facing from the geometric normal, oriented by the outward vertex normals (robust to winding)
    a, b, c = v[f[:, 0]], v[f[:, 1]], v[f[:, 2]]
    geo = np.cross(b - a, c - a)
    geo *= np.sign(np.sum(geo * (n[f[:, 0]] + n[f[:, 1]] + n[f[:, 2]]), axis=1))[:, None]
    if proj.perspective:
        eye = proj.target + proj.camera.distance_a0 * proj.toward
        view = eye - (a + b + c) / 3.0
    else:
        view = proj.toward
    front = np.sum(geo * view, axis=1) >= 0
    return v, ShadedMesh(f, n, phasors, front, lut)


def _shade(frags: Fragments, mesh: ShadedMesh, proj: Projection, light: Light, rotation: complex,
           planes, cap_psi: Callable | None) -> tuple[np.ndarray, np.ndarray]:
    """Linear-light colour (H, W, 3) float32 and depth (H, W) of a layer (inf where empty)."""
    h, w = frags.triangle.shape
    lin = np.zeros((h, w, 3), dtype=np.float32)
    back = np.zeros((h, w), dtype=np.bool_)
    shade_pixels(frags.triangle, frags.weights, mesh, light, lin, back)
    depth = frags.depth
    if planes is None or not back.any():
        return lin, depth
    depth = depth.copy()
    flat = np.flatnonzero(back.ravel())
    for start in range(0, len(flat), _CHUNK_PIXELS):
        idx = flat[start:start + _CHUNK_PIXELS]
        rows, cols = np.divmod(idx, w)
        a, b = proj.rays(rows, cols)
        t_out, which = cap_exit(a, b, planes)
        capped = np.isfinite(t_out) & (t_out <= depth[rows, cols])
        if not np.any(capped):
            continue
        t = t_out[capped]
        points = a[capped] + t[:, None] * b[capped]
        cap_normal = np.ascontiguousarray(planes[0][which[capped]])
        if cap_psi is None:  # no analytic psi: a neutral grey cap
            grey = shade_colours(np.full((1, 3), _CAP_GREY), (SHADE_LEVELS - 1) / light.levels_per_shade)
            colour = shade_points(cap_normal, np.ones(len(t), dtype=complex), grey, light)
        else:
            psi = np.asarray(cap_psi(*points.T), dtype=complex) * np.conj(rotation)
            colour = shade_points(cap_normal, np.ascontiguousarray(psi), mesh.lut, light)
        rr, cc = rows[capped], cols[capped]
        lin[rr, cc] = colour
        depth[rr, cc] = t
    return lin, depth


def _outer_components(components: list[Surface], centre: np.ndarray) -> list[bool]:
    """True for a component lying wholly farther from `centre` than all of another component."""
    radii = [np.linalg.norm(c.vertices_a0 - centre, axis=1) for c in components]
    lows = [float(r.min()) for r in radii]
    highs = [float(r.max()) for r in radii]
    return [any(lows[i] >= highs[j] for j in range(len(components)) if j != i)
            for i in range(len(components))]


def render_surfaces(surfaces: Surface | Sequence[Surface], width_px: int = 800, height_px: int = 800, *,
                    camera: Camera = DEFAULT_CAMERA, phase_map: str = "uniform",
                    lighting: Lighting = Lighting(), cutaway: Cutaway | None = None,
                    translucent_outer: float | None = None, nodal_axis: bool = False,
                    supersample: int = 3, background: tuple[float, float, float] | None = (1.0, 1.0, 1.0),
                    cap_psi: Callable | None = None) -> Render:
    """Render surfaces shaded and coloured by the phase of psi.

    Parameters
    ----------
    surfaces : Surface or sequence of Surface
        Drawn together in one scene (they occlude each other).
    width_px, height_px : int
        Image size, 16 to 8192 px.
    camera : Camera
        Unset target/half-extent are fitted to the surfaces (:func:`frame_camera`).
    phase_map : {"uniform", "cvd", "sign"}
        ``"sign"`` removes the global phase of the (first) surface's state by the rule of
        :func:`orbitalrender.state.phase.sign_rotation`; a complex state is refused.
    lighting : Lighting
    cutaway : Cutaway, optional
        Region removed; the cut is capped with psi evaluated at the cap.
    translucent_outer : float, optional
        Opacity in (0, 1] for outer components (those wholly outside another one).
    nodal_axis : bool
        Draw the dashed nodal z axis (needs m != 0 in every term).
    supersample : int
        Samples per pixel side, 1 to 4 (3 gives 9 samples per pixel).
    background : RGB tuple or None
        None leaves a transparent background.
    cap_psi : callable (x, y, z) -> psi, optional
        Evaluates psi on the cut; default ``surface.state.psi`` (a grey cap for a user field).

    Returns
    -------
    Render

    Raises
    ------
    MemoryLimitError
        If the image buffers would not fit in the memory free now (checked before any
        is allocated).

    Examples
    --------
    >>> import numpy as np
    >>> from skimage.measure import marching_cubes
    >>> from orbitalrender.state.model import eigenstate
    >>> g = np.linspace(-3, 3, 24)
    >>> v, f, n, _ = marching_cubes(np.add.outer(np.add.outer(g**2, g**2), g**2), 4.0,
    ...                             spacing=(g[1] - g[0],) * 3, gradient_direction="ascent")
    >>> s = eigenstate(1, 0, 0)
    >>> v = v - 3.0
    >>> surf = Surface(v, f, n, s.psi(*v.T), 1.0, None, None, None, (24,) * 3, (0.26,) * 3, s)
    >>> r = render_surfaces(surf, 64, 48, supersample=2)
    >>> r.rgba.shape
    (48, 64, 4)
    """
    surfaces = as_surfaces(surfaces)
    width_px, height_px, ss = int(width_px), int(height_px), int(supersample)
    if not (16 <= width_px <= 8192 and 16 <= height_px <= 8192):
        raise ValueError(f"the image size must be 16 to 8192 px per side, got {width_px} x {height_px}")
    if not 1 <= ss <= 4:
        raise ValueError(f"supersample must be 1 to 4, got {supersample}")
    if phase_map not in PHASE_SCHEMES:
        raise ValueError(f"unknown phase map {phase_map!r}: use one of {', '.join(PHASE_SCHEMES)}")
    if translucent_outer is not None and not 0.0 < translucent_outer <= 1.0:
        raise ValueError(f"the opacity of outer shells must lie in (0, 1], got {translucent_outer}")
    path = render_path(cutaway=cutaway is not None, nodal_axis=nodal_axis,
                       translucent_outer=translucent_outer)
    require_render_memory(width_px, height_px, ss, path)  # before any buffer
    segment = axis_segment(surfaces) if nodal_axis else None
    camera = frame_camera(surfaces, camera, aspect=width_px / height_px, extra_points_a0=segment)
    proj = pixel_projection(camera, width_px * ss, height_px * ss)
    rotation = (sign_rotation(surfaces[0].state, np.concatenate([s.psi for s in surfaces]))
                if phase_map == "sign" else 1.0 + 0.0j)
    planes = cutaway.world_planes(camera, camera.target_a0) if cutaway is not None else None
    if cap_psi is None and surfaces[0].state is not None:
        cap_psi = surfaces[0].state.psi

    opaque, translucent = surfaces, []
    if _see_through(translucent_outer):
        from ..surface.topology import split_components, topology

        components, cavity = [], []
        for s in surfaces:
            components.extend(split_components(s))
            cavity.extend(v < 0 for v in topology(s).volumes_a0_3)  # inner wall of a shell
        outer = _outer_components(components, np.array(camera.target_a0))
        opaque = [c for c, o in zip(components, outer) if not o]
        # a see-through shell is drawn by its outer wall; its inner wall, behind that wall,
        # would only double the shell's opacity and mix its colour with what lies inside
        translucent = [c for c, o, v in zip(components, outer, cavity) if o and not v]
        if not translucent:  # no shell lies outside another: the scene is opaque after all
            path = render_path(cutaway=cutaway is not None, nodal_axis=nodal_axis,
                               translucent_outer=None)

    lut = _shade_table(phase_map, lighting)
    light = _kernel_light(lighting, proj)

    def layer(group: list[Surface]) -> tuple[np.ndarray, np.ndarray]:
        vertices, mesh = _mesh(group, rotation, proj, lut)
        x, y, depth, divisor = proj.project(vertices)
        # without a cut only faces toward the eye can be nearest on a closed surface: cull the rest
        frags = rasterize(x, y, depth, mesh.faces, proj.width, proj.height,
                          clip_values=clip_values(vertices, planes), divisor=divisor,
                          skip=None if planes is not None else ~mesh.front)
        return _shade(frags, mesh, proj, light, rotation, planes, cap_psi)

    line_lin = srgb_to_linear(np.asarray(AXIS_RGB, dtype=float))
    if path in ("banded", "whole"):
        # the common case: shade once per triangle and output pixel, filtering as we go
        vertices, mesh = _mesh(opaque, rotation, proj, lut)
        x, y, depth, divisor = proj.project(vertices)
        premult = np.empty((height_px, width_px, 3), dtype=np.float32)
        alpha = np.empty((height_px, width_px), dtype=np.float32)
        if path == "banded":  # band by band (fast, little memory)
            with np.errstate(invalid="ignore"):
                bands = Bands(*band_lists(y[mesh.faces], mesh.front, proj.height, BAND_ROWS * ss))
            w = np.ones(len(x)) if divisor is None else divisor
            screen = Screen(x, y, depth.astype(np.float64), w, divisor is not None)
            render_banded(screen, bands, mesh, light, ss, line_lin, premult, alpha)
        else:  # the whole image at once, so the line can be depth-tested against it
            frags = rasterize(x, y, depth, mesh.faces, proj.width, proj.height, divisor=divisor,
                              skip=~mesh.front)
            tri = frags.triangle
            tri[axis_layer(segment, proj, ss) < frags.depth] = LINE_SAMPLE
            shade_resolve(tri, frags.weights, mesh, light, ss, line_lin, premult, alpha)
        return _finish(premult, alpha, background, surfaces, proj.px_per_a0 / ss, camera, phase_map)
    if opaque:
        lin, depth = layer(opaque)
    else:
        lin = np.zeros((proj.height, proj.width, 3), dtype=np.float32)
        depth = np.full((proj.height, proj.width), np.inf)
    if segment is not None:
        line = axis_layer(segment, proj, ss)
        on_top = line < depth
        lin[on_top] = line_lin
        depth = np.where(on_top, line, depth)
    alpha = np.isfinite(depth).astype(np.float32)
    premult = lin  # opaque: alpha is 0 or 1 and the empty pixels are black already
    if translucent:
        layers = [layer([c]) for c in translucent]
        stacked_depth = np.stack([d for _, d in layers])
        order = np.argsort(-stacked_depth, axis=0)  # far to near, per pixel
        stacked_lin = np.stack([c for c, _ in layers])
        a = np.float32(translucent_outer)
        for k in range(len(layers)):
            pick = order[k][None]
            d = np.take_along_axis(stacked_depth, pick, 0)[0]
            c = np.take_along_axis(stacked_lin, pick[..., None], 0)[0]
            over = d < depth
            premult[over] = a * c[over] + (1 - a) * premult[over]
            alpha[over] = a + (1 - a) * alpha[over]
    # antialiasing: box filter over the samples, in linear light
    premult, alpha = downsample(premult, alpha, ss)
    return _finish(premult, alpha, background, surfaces, proj.px_per_a0 / ss, camera, phase_map)


def _finish(premult: np.ndarray, alpha: np.ndarray, background, surfaces: list[Surface],
            px_per_a0: float, camera: Camera, phase_map: str) -> Render:
    """Premultiplied linear colour and coverage -> the sRGB Render (over `background`, if any)."""
    bg = np.zeros(3) if background is None else srgb_to_linear(np.asarray(background, dtype=float))
    rgba = np.empty(premult.shape[:2] + (4,), dtype=np.float32)
    encode_srgb(premult, alpha, bg, background is not None, srgb_lut(), rgba)
    labels = tuple(dict.fromkeys(s.state.label for s in surfaces if s.state is not None))
    return Render(rgba, px_per_a0, camera, phase_map, labels)


