"""Picture step, 3D render: a shaded, phase-coloured image of one or more Surfaces.

The camera projects the mesh, :func:`orbitalrender.picture.raster.rasterize`
finds the nearest fragment of every (supersampled) pixel, and the shading is
done per pixel on those buffers:

* **Normals** are interpolated per pixel from the vertex normals (Phong
  interpolation) and lit with ambient + two diffuse lights + a modest
  Blinn-Phong highlight.  The lighting multiplies the colour in linear light, so
  it changes brightness, not hue.
* **Hue** is the phase of psi.  The unit phasors psi/|psi| of the three
  vertices are interpolated (never the angles, which would jump where the phase
  wraps from pi to -pi) and the angle of the result is looked up in
  :func:`orbitalrender.picture.colormap.phase_to_rgb`.
* **Antialiasing**: the image is rendered at `supersample` times the size and
  reduced with a box filter; the alpha channel is the covered fraction.
* **Cutaway**: fragments in the removed region (an intersection of half-spaces)
  are dropped.  Where the first fragment left is a back face, the ray has come
  out of the removed region inside the solid, so the cut plane is drawn there
  ("capped"), coloured with psi evaluated exactly at that 3D point: nested shells
  are seen in section.
* **Translucent outer shells**: components that lie wholly outside another
  component (farther from the centre than all of it) can be drawn with an
  opacity; each such component is its own layer (its nearest fragment) and the
  layers are composited by depth over the opaque ones.  A shell is shown by its
  outer wall; its inner (cavity) wall, with negative enclosed volume, is left out.
* **Nodal axis**: a dashed line along z through the centre, depth-tested
  against the surfaces (hidden where a lobe or ring passes in front of it).

Lighting directions are fixed in the camera frame (key light from the upper
left in front, a weak fill from the lower right), so every view is lit alike.
The specular term uses a viewer at infinity also for the perspective camera.

References
----------
.. [1] B. T. Phong, "Illumination for computer generated pictures",
       Commun. ACM 18, 311-317 (1975).
.. [2] J. F. Blinn, "Models of light reflection for computer synthesized
       pictures", SIGGRAPH '77, 192-198 (1977).
.. [3] IEC 61966-2-1:1999, the sRGB transfer function.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from functools import cache

import numba
import numpy as np

from ..lattice.memory import require_render_memory
from ..state.notation import pretty_label
from ..surface.model import Surface
from .colormap import PHASE_SCHEMES, linear_to_srgb, phase_to_rgb, real_rotation, srgb_to_linear
from .raster import Fragments, rasterize, scan_triangle

__all__ = [
    "PROJECTIONS",
    "Camera",
    "DEFAULT_CAMERA",
    "Lighting",
    "Cutaway",
    "Render",
    "parse_cutaway",
    "frame_camera",
    "render_surfaces",
    "nodal_axis_centre",
    "has_nodal_axis",
    "state_nodal_axis_centre",
    "FigureGeometry",
    "fit_geometry",
    "figure_fontsize",
    "compose_figure",
    "figure_3d",
    "surface_title",
]

PROJECTIONS = ("orthographic", "perspective")
#: zoom 1 leaves this much room around the surface: its extent times 1.12 fills the shorter side.
_FIT_MARGIN = 1.12
#: The nodal axis is drawn past each end of the surface by this fraction of its largest extent.
_AXIS_OVERHANG = 0.15
#: Shading works on this many pixels at a time, which bounds its temporaries (~0.3 GiB).
_CHUNK_PIXELS = 1 << 20
_ZOOM_RANGE = (0.05, 50.0)
_FOV_RANGE_DEG = (1.0, 120.0)


@dataclass(frozen=True)
class Camera:
    """Where the picture is seen from.

    Attributes
    ----------
    azimuth_deg : float
        Angle of the viewing direction about z, from +x toward +y.
    elevation_deg : float
        Angle above the xy plane, in [-90, 90]; 90 looks down the z axis.
    zoom : float
        1 fits the whole surface with a small margin; 2 shows it twice as large.
    projection : {"orthographic", "perspective"}
    target_a0 : tuple of float or None
        Point at the centre of the image; None: the centre of the surfaces' bounding box.
    half_extent_a0 : float or None
        Half of the shorter image side, in a0, at zoom 1 (at the target's depth for
        perspective); None: fitted to the surfaces.  Give the same value to several
        renders to draw them at one scale.
    distance_a0 : float or None
        Perspective only: distance of the eye from the target; None: the surfaces'
        bounding sphere just fills the field of view.
    field_of_view_deg : float
        Perspective only: the angle the bounding sphere subtends when fitted.
    """

    azimuth_deg: float = 35.0
    elevation_deg: float = 20.0
    zoom: float = 1.0
    projection: str = "orthographic"
    target_a0: tuple[float, float, float] | None = None
    half_extent_a0: float | None = None
    distance_a0: float | None = None
    field_of_view_deg: float = 30.0

    def __post_init__(self) -> None:
        if self.projection not in PROJECTIONS:
            raise ValueError(f"unknown projection {self.projection!r}: use orthographic or perspective")
        if not math.isfinite(self.azimuth_deg):
            raise ValueError(f"the azimuth must be a finite angle, got {self.azimuth_deg}")
        if not -90.0 <= self.elevation_deg <= 90.0:
            raise ValueError(f"the elevation must lie in [-90, 90] degrees, got {self.elevation_deg}")
        if not _ZOOM_RANGE[0] <= self.zoom <= _ZOOM_RANGE[1]:
            raise ValueError(f"the zoom must lie in [{_ZOOM_RANGE[0]}, {_ZOOM_RANGE[1]}], got {self.zoom}")
        if not _FOV_RANGE_DEG[0] <= self.field_of_view_deg <= _FOV_RANGE_DEG[1]:
            raise ValueError(f"the field of view must lie in [{_FOV_RANGE_DEG[0]}, {_FOV_RANGE_DEG[1]}] "
                             f"degrees, got {self.field_of_view_deg}")
        for name in ("half_extent_a0", "distance_a0"):
            v = getattr(self, name)
            if v is not None and not (v > 0 and math.isfinite(v)):
                raise ValueError(f"{name} must be positive, got {v}")
        if self.target_a0 is not None:
            object.__setattr__(self, "target_a0", tuple(float(c) for c in self.target_a0))

    def basis(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Unit vectors (right, up, toward the eye) of the image, in world coordinates.

        Examples
        --------
        >>> r, u, d = Camera(azimuth_deg=0, elevation_deg=0).basis()
        >>> (d.round(12) + 0.0).tolist(), (u.round(12) + 0.0).tolist()
        ([1.0, 0.0, 0.0], [0.0, 0.0, 1.0])
        """
        az, el = math.radians(self.azimuth_deg), math.radians(self.elevation_deg)
        toward = np.array([math.cos(el) * math.cos(az), math.cos(el) * math.sin(az), math.sin(el)])
        right = np.array([-math.sin(az), math.cos(az), 0.0])
        up = np.cross(toward, right)
        return right, up, toward


#: The default view: 35 degrees round from +x, 20 degrees up, orthographic, fitted.
DEFAULT_CAMERA = Camera()


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


@dataclass(frozen=True)
class Cutaway:
    """A region removed from the picture: the points p with n_k . p > offset_k for every k.

    With ``view_relative`` the normals are horizontal directions given relative to the
    camera azimuth (x toward the eye, y to the right in the xy plane, z up) and the
    offsets are measured from the image target; otherwise both are world coordinates, a0.
    """

    normals: tuple[tuple[float, float, float], ...]
    offsets_a0: tuple[float, ...]
    view_relative: bool = False

    def __post_init__(self) -> None:
        normals = np.asarray(self.normals, dtype=float).reshape(-1, 3)
        lengths = np.linalg.norm(normals, axis=1)
        if len(normals) == 0 or len(normals) != len(self.offsets_a0):
            raise ValueError("a cutaway needs one offset per plane normal, and at least one plane")
        if not np.all(lengths > 0) or not np.all(np.isfinite(normals)):
            raise ValueError("cutaway plane normals must be finite and non-zero")
        normals = normals / lengths[:, None]
        object.__setattr__(self, "normals", tuple(tuple(float(c) for c in n) for n in normals))
        object.__setattr__(self, "offsets_a0", tuple(float(o) for o in self.offsets_a0))

    def world_planes(self, camera: Camera, target_a0) -> tuple[np.ndarray, np.ndarray]:
        """Unit normals (K, 3) and offsets (K,) in world coordinates."""
        n = np.array(self.normals)
        o = np.array(self.offsets_a0)
        if not self.view_relative:
            return n, o
        az = math.radians(camera.azimuth_deg)
        toward = np.array([math.cos(az), math.sin(az), 0.0])
        side = np.array([-math.sin(az), math.cos(az), 0.0])
        world = n[:, :1] * toward + n[:, 1:2] * side + n[:, 2:3] * np.array([0.0, 0.0, 1.0])
        return world, o + world @ np.asarray(target_a0, dtype=float)


_AXES = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_CONDITION = re.compile(rf"^(?:(?P<axis>[xyz])|\((?P<vec>{_NUMBER},{_NUMBER},{_NUMBER})\))"
                        rf"(?P<op>[<>])(?P<value>{_NUMBER})$")
_HALF = math.sqrt(0.5)
#: Named cuts, relative to the view: the half facing the eye, cut by the vertical plane through
#: the target, and the quarter facing the eye, between two vertical planes at +-45 degrees.
CUTAWAY_KEYWORDS: dict[str, Cutaway] = {
    "front": Cutaway(((1.0, 0.0, 0.0),), (0.0,), view_relative=True),
    "quadrant": Cutaway(((_HALF, _HALF, 0.0), (_HALF, -_HALF, 0.0)), (0.0, 0.0), view_relative=True),
}


def parse_cutaway(text: str) -> Cutaway:
    """A cutaway from text: ``front``, ``quadrant``, or conditions joined by ``&``.

    A condition is ``x>0``, ``z<-1.5`` or ``(1,1,0)>0`` (a normal vector and an offset in
    a0, world coordinates); the region where all conditions hold is removed.

    Examples
    --------
    >>> parse_cutaway("x>0&y>0").normals
    ((1.0, 0.0, 0.0), (0.0, 1.0, 0.0))
    >>> parse_cutaway("z<-1").normals, parse_cutaway("z<-1").offsets_a0
    (((0.0, 0.0, -1.0),), (1.0,))
    """
    cleaned = re.sub(r"\s+", "", text).lower()
    if cleaned in CUTAWAY_KEYWORDS:
        return CUTAWAY_KEYWORDS[cleaned]
    normals, offsets = [], []
    for part in cleaned.split("&"):
        mt = _CONDITION.match(part)
        if mt is None:
            raise ValueError(f"cannot read the cutaway {text!r}: use front, quadrant, or conditions "
                             "such as x>0, z<-1.5, (1,1,0)>0 joined by &")
        vec = np.array(_AXES[mt["axis"]] if mt["axis"] else [float(v) for v in mt["vec"].split(",")])
        norm = float(np.linalg.norm(vec))
        if norm == 0:
            raise ValueError(f"the cutaway {text!r} has a zero normal vector")
        sign = 1.0 if mt["op"] == ">" else -1.0
        normals.append(tuple(float(c) + 0.0 for c in sign * vec / norm))  # + 0.0: no -0.0
        offsets.append(sign * float(mt["value"]) / norm)
    return Cutaway(tuple(normals), tuple(offsets))


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


def _as_list(surfaces: Surface | Sequence[Surface]) -> list[Surface]:
    out = [surfaces] if isinstance(surfaces, Surface) else list(surfaces)
    if not out or not all(isinstance(s, Surface) for s in out):
        raise ValueError("render_surfaces needs one Surface or a sequence of Surfaces")
    if not any(len(s.faces) for s in out):
        raise ValueError("there is nothing to draw: the surface has no triangles "
                         "(is the fraction too small for the lattice?)")
    return out


def nodal_axis_centre(surface: Surface) -> tuple[float, float, float]:
    """Centre of the nodal z axis of `surface`'s state: every term needs m != 0 and one centre.

    Raises
    ------
    ValueError
        If psi does not vanish all along a line parallel to z.

    Examples
    --------
    >>> import numpy as np
    >>> from orbitalrender.state.model import eigenstate
    >>> s = Surface(np.zeros((0, 3)), np.zeros((0, 3), int), np.zeros((0, 3)), np.zeros(0),
    ...             1.0, None, None, None, (2, 2, 2), (1.0, 1.0, 1.0), eigenstate(2, 1, 1))
    >>> nodal_axis_centre(s)
    (0.0, 0.0, 0.0)
    """
    if surface.state is None:
        raise ValueError("a nodal axis can only be drawn for an analytic state, not a user field")
    return state_nodal_axis_centre(surface.state)


def state_nodal_axis_centre(state) -> tuple[float, float, float]:
    """Centre of the line parallel to z on which psi of `state` vanishes (see
    :func:`nodal_axis_centre`); ValueError if there is none."""
    if not state.is_single_centre or any(t.m == 0 for t in state.terms):
        raise ValueError(f"state {state.label!r} has no nodal axis along z: that needs every term "
                         "to have m != 0 and one centre")
    return state.centres_a0[0]


def has_nodal_axis(surface: Surface) -> bool:
    """True when :func:`nodal_axis_centre` would find an axis."""
    try:
        nodal_axis_centre(surface)
    except ValueError:
        return False
    return True


def _sign_rotation(surfaces: list[Surface]) -> complex:
    """Global phase to remove before the sign map.

    psi that is already real (a real orbital) keeps its own sign convention (u = 1).
    Otherwise :func:`real_rotation` of psi on and inside the surfaces (between the
    vertices and the image centre), where |psi| differs from point to point: on the
    surface alone |psi| is the same everywhere and would not fix the sign.
    """
    psi = np.concatenate([s.psi for s in surfaces])
    state = surfaces[0].state
    if state is not None:
        verts = np.concatenate([s.vertices_a0 for s in surfaces])
        verts = verts[:: max(1, len(verts) // 2000)]
        centre = 0.5 * (verts.min(axis=0) + verts.max(axis=0))
        shrink = np.linspace(0.0, 1.0, 9)[:, None, None]
        points = (centre + shrink * (verts - centre)).reshape(-1, 3)
        psi = state.psi(*points.T)
    scale = float(np.max(np.abs(psi))) if len(psi) else 0.0
    if scale == 0 or np.max(np.abs(psi.imag)) <= 1e-9 * scale:
        return 1.0 + 0.0j
    return real_rotation(psi)


def _axis_segment(surfaces: list[Surface]) -> np.ndarray:
    """End points (2, 3) of the dashed nodal axis."""
    centre = np.array(nodal_axis_centre(surfaces[0]))
    if any(nodal_axis_centre(s) != tuple(centre) for s in surfaces[1:]):
        raise ValueError("the surfaces drawn together have nodal axes at different centres")
    pts = np.concatenate([s.vertices_a0 for s in surfaces])
    lo, hi = float(pts[:, 2].min()), float(pts[:, 2].max())
    pad = _AXIS_OVERHANG * float(np.max(pts.max(axis=0) - pts.min(axis=0)))
    return np.array([[centre[0], centre[1], lo - pad], [centre[0], centre[1], hi + pad]])


def frame_camera(surfaces: Surface | Sequence[Surface], camera: Camera = Camera(),
                 aspect: float = 1.0, extra_points_a0: np.ndarray | None = None) -> Camera:
    """`camera` with target, half-extent and (perspective) distance fitted to the surfaces.

    Parameters
    ----------
    surfaces : Surface or sequence of Surface
        May be empty when `extra_points_a0` is given (a point cloud).
    camera : Camera
        Values already set are kept.
    aspect : float
        Image width / height.
    extra_points_a0 : ndarray (P, 3), optional
        More points that must fit (e.g. the ends of a nodal axis).

    Returns
    -------
    Camera
    """
    parts = [s.vertices_a0 for s in ([surfaces] if isinstance(surfaces, Surface) else surfaces)]
    if extra_points_a0 is not None:
        parts.append(np.asarray(extra_points_a0, dtype=float).reshape(-1, 3))
    if not parts or not sum(len(p) for p in parts):
        raise ValueError("frame_camera needs surfaces or points to fit")
    pts = np.concatenate(parts)
    target = np.array(camera.target_a0) if camera.target_a0 is not None \
        else 0.5 * (pts.min(axis=0) + pts.max(axis=0))
    rel = pts - target
    right, up, toward = camera.basis()
    xc, yc, zc = rel @ right, rel @ up, rel @ toward
    distance = camera.distance_a0
    if camera.projection == "perspective":
        if distance is None:
            radius = float(np.sqrt(np.max(np.sum(rel * rel, axis=1))))
            distance = radius / math.sin(math.radians(0.5 * camera.field_of_view_deg))
        w = distance - zc
        if np.any(w <= 0):
            raise ValueError("the eye is inside the surface: increase the camera distance")
        xc, yc = xc * distance / w, yc * distance / w
    half = camera.half_extent_a0
    if half is None:
        shorter = min(aspect, 1.0)
        half = _FIT_MARGIN * max(float(np.max(np.abs(xc))) * shorter / aspect,
                                 float(np.max(np.abs(yc))) * shorter, 1e-12)
    return replace(camera, target_a0=tuple(float(t) for t in target), half_extent_a0=half,
                   distance_a0=distance)


@dataclass(frozen=True, eq=False)
class _Projection:
    """A resolved camera mapped to supersampled pixels."""

    camera: Camera
    width: int
    height: int
    px_per_a0: float  # supersampled pixels per a0 at the target depth
    target: np.ndarray
    right: np.ndarray
    up: np.ndarray
    toward: np.ndarray

    @property
    def perspective(self) -> bool:
        return self.camera.projection == "perspective"

    def project(self, points_a0: np.ndarray):
        """(x_px, y_px, depth, divisor or None) of world points (P, 3)."""
        rel = points_a0 - self.target
        xc, yc, zc = rel @ self.right, rel @ self.up, rel @ self.toward
        cx, cy, f = 0.5 * self.width, 0.5 * self.height, self.px_per_a0
        if not self.perspective:
            return cx + f * xc, cy - f * yc, -zc, None
        d = self.camera.distance_a0
        w = d - zc
        with np.errstate(divide="ignore", invalid="ignore"):
            return cx + f * d * xc / w, cy - f * d * yc / w, w, w

    def rays(self, rows: np.ndarray, cols: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Rays through pixel centres as p(t) = a + t b, t the depth of :meth:`project`."""
        cx, cy, f = 0.5 * self.width, 0.5 * self.height, self.px_per_a0
        u = ((cols + 0.5) - cx) / f
        v = (cy - (rows + 0.5)) / f
        if not self.perspective:
            a = self.target + u[:, None] * self.right + v[:, None] * self.up
            return a, np.broadcast_to(-self.toward, a.shape)
        d = self.camera.distance_a0
        a = np.broadcast_to(self.target + d * self.toward, (len(u), 3))
        b = (u / d)[:, None] * self.right + (v / d)[:, None] * self.up - self.toward
        return a, b


def _projection(camera: Camera, width: int, height: int) -> _Projection:
    right, up, toward = camera.basis()
    f = 0.5 * min(width, height) * camera.zoom / camera.half_extent_a0
    return _Projection(camera, width, height, f, np.array(camera.target_a0), right, up, toward)


def _unit(v) -> np.ndarray:
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


#: Entries of the linear-light phase table used per pixel (step 0.09 degree, far below a
#: visible difference); it is tabulated from :func:`phase_to_rgb`, not a map of its own.
_SHADE_LUT_SIZE = 4096


@cache
def _linear_lut(scheme: str) -> np.ndarray:
    phases = 2 * np.pi * np.arange(_SHADE_LUT_SIZE) / _SHADE_LUT_SIZE
    return np.ascontiguousarray(srgb_to_linear(phase_to_rgb(phases, scheme)))


def _light_params(lighting: Lighting, proj: _Projection) -> np.ndarray:
    """[key (3), fill (3), half vector (3), ambient, key, fill, specular, shininess] in world axes."""
    frame = np.stack([proj.right, proj.up, proj.toward])
    key = _unit(lighting.key_direction) @ frame
    fill = _unit(lighting.fill_direction) @ frame
    half = _unit(key + proj.toward)
    return np.concatenate([key, fill, half, [lighting.ambient, lighting.key, lighting.fill,
                                             lighting.specular, lighting.shininess]])


@numba.njit(cache=True, nogil=True)
def _light(nx, ny, nz, lp):  # pragma: no cover - compiled
    """(diffuse factor, specular term) for a unit normal; lp from _light_params."""
    dk = nx * lp[0] + ny * lp[1] + nz * lp[2]
    df = nx * lp[3] + ny * lp[4] + nz * lp[5]
    dh = nx * lp[6] + ny * lp[7] + nz * lp[8]
    diffuse = lp[9] + lp[10] * max(dk, 0.0) + lp[11] * max(df, 0.0)
    spec = lp[12] * max(dh, 0.0) ** lp[13] if dh > 0.0 else 0.0
    return diffuse, spec


@numba.njit(cache=True, nogil=True)
def _lut_index(re, im, size):  # pragma: no cover - compiled
    k = int(np.rint(np.arctan2(im, re) * (size / (2.0 * np.pi))))
    return k % size


@numba.njit(cache=True, nogil=True)
def _shade_sample(t, b0, b1, b2, faces, normals, phasors, front, lut, lp,
                  back_gain):  # pragma: no cover - compiled
    """Linear-light (r, g, b) of triangle t at barycentric weights (b0, b1, b2): Phong-interpolated
    normal, hue from the interpolated unit phasor; back faces lit from inside and dimmed."""
    v0 = faces[t, 0]
    v1 = faces[t, 1]
    v2 = faces[t, 2]
    nx = b0 * normals[v0, 0] + b1 * normals[v1, 0] + b2 * normals[v2, 0]
    ny = b0 * normals[v0, 1] + b1 * normals[v1, 1] + b2 * normals[v2, 1]
    nz = b0 * normals[v0, 2] + b1 * normals[v1, 2] + b2 * normals[v2, 2]
    pr = b0 * phasors[v0].real + b1 * phasors[v1].real + b2 * phasors[v2].real
    pi = b0 * phasors[v0].imag + b1 * phasors[v1].imag + b2 * phasors[v2].imag
    norm = np.sqrt(nx * nx + ny * ny + nz * nz)
    if norm > 0.0:
        nx /= norm
        ny /= norm
        nz /= norm
    gain = 1.0
    if not front[t]:
        nx, ny, nz = -nx, -ny, -nz
        gain = back_gain
    diffuse, spec = _light(nx, ny, nz, lp)
    c = _lut_index(pr, pi, lut.shape[0])
    return (gain * (lut[c, 0] * diffuse + spec), gain * (lut[c, 1] * diffuse + spec),
            gain * (lut[c, 2] * diffuse + spec))


@numba.njit(cache=True, nogil=True)
def _shade_pixels(tri, wts, faces, normals, phasors, front, lut, lp, back_gain,
                  out, back):  # pragma: no cover - compiled
    """Linear-light colour of every covered sample; marks back-facing samples in `back`."""
    h, w = tri.shape
    for j in range(h):
        for i in range(w):
            t = tri[j, i]
            if t < 0:
                continue
            back[j, i] = not front[t]
            r, g, b = _shade_sample(t, wts[j, i, 0], wts[j, i, 1], wts[j, i, 2], faces, normals,
                                    phasors, front, lut, lp, back_gain)
            out[j, i, 0] = r
            out[j, i, 1] = g
            out[j, i, 2] = b


#: Triangle index that marks a sample of the nodal axis line in the fused shading pass.
_LINE_SAMPLE = -2


@numba.njit(cache=True, nogil=True)
def _shade_resolve(tri, wts, faces, normals, phasors, front, lut, lp, back_gain, ss, line_rgb,
                   out, alpha, out_row0=0):  # pragma: no cover - compiled
    """Shade and box-filter in one pass (opaque scenes without a cut): in each output pixel the
    samples of one triangle are shaded once, at their mean weights (the attributes are linear
    on a triangle: centroid sampling, as in multisample antialiasing), and weighted by their
    count.  Premultiplied linear colour and coverage, for the samples in `tri` (whole image, or
    a band whose first output row is `out_row0`)."""
    h = tri.shape[0] // ss
    w = out.shape[1]
    n_max = ss * ss
    ids = np.empty(n_max, dtype=np.int64)
    sums = np.empty((n_max, 3))
    counts = np.empty(n_max)
    scale = 1.0 / n_max
    for j in range(h):
        for i in range(w):
            n = 0
            covered = 0
            line = 0
            for dj in range(ss):
                for di in range(ss):
                    y = j * ss + dj
                    x = i * ss + di
                    t = tri[y, x]
                    if t == -1:
                        continue
                    covered += 1
                    if t == _LINE_SAMPLE:
                        line += 1
                        continue
                    k = 0
                    while k < n and ids[k] != t:
                        k += 1
                    if k == n:
                        ids[k] = t
                        sums[k, 0] = 0.0
                        sums[k, 1] = 0.0
                        sums[k, 2] = 0.0
                        counts[k] = 0.0
                        n += 1
                    sums[k, 0] += wts[y, x, 0]
                    sums[k, 1] += wts[y, x, 1]
                    sums[k, 2] += wts[y, x, 2]
                    counts[k] += 1.0
            r = line * line_rgb[0]
            g = line * line_rgb[1]
            b = line * line_rgb[2]
            for k in range(n):
                c = counts[k]
                sr, sg, sb = _shade_sample(ids[k], sums[k, 0] / c, sums[k, 1] / c, sums[k, 2] / c,
                                           faces, normals, phasors, front, lut, lp, back_gain)
                r += c * sr
                g += c * sg
                b += c * sb
            out[out_row0 + j, i, 0] = r * scale
            out[out_row0 + j, i, 1] = g * scale
            out[out_row0 + j, i, 2] = b * scale
            alpha[out_row0 + j, i] = covered * scale


#: Output rows per band of the banded pass: small enough that a band's sample buffers stay in
#: the processor cache (16 rows x 3 x 4800 samples x 20 bytes is about 4.6 MB at 1600 px).
_BAND_ROWS = 16


@numba.njit(cache=True, nogil=True, parallel=True)
def _render_banded(px, py, zv, w, faces, band_start, band_faces, perspective, ss, normals, phasors,
                   front, lut, lp, back_gain, line_rgb, out, alpha):  # pragma: no cover - compiled
    """Rasterize, shade and filter band by band (in parallel, each band with its own small
    buffers): the same result as rasterizing the whole supersampled image and then resolving
    it, without its memory.  band_faces[band_start[b]:band_start[b + 1]] are the triangles that
    reach band b, in index order (so ties in depth go the same way whatever the threads)."""
    width = out.shape[1] * ss
    height = out.shape[0] * ss
    band = _BAND_ROWS * ss
    n_bands = band_start.shape[0] - 1
    clip = np.zeros((px.shape[0], 0))
    for b in numba.prange(n_bands):
        y0 = b * band
        y1 = min(y0 + band, height)
        depth = np.full((y1 - y0, width), np.inf, dtype=np.float32)
        tri = np.full((y1 - y0, width), -1, dtype=np.int32)
        wts = np.empty((y1 - y0, width, 3), dtype=np.float32)
        for a in range(band_start[b], band_start[b + 1]):
            scan_triangle(band_faces[a], px, py, zv, w, faces, clip, perspective, width, y0, y1,
                          depth, tri, wts)
        _shade_resolve(tri, wts, faces, normals, phasors, front, lut, lp, back_gain, ss, line_rgb,
                       out, alpha, y0 // ss)


def _bands(rows_px: np.ndarray, keep: np.ndarray, height: int, band: int) -> tuple[np.ndarray, np.ndarray]:
    """CSR lists of the kept triangles reaching each band of `band` sample rows: (start, faces).

    rows_px : (F, 3) vertex rows of each triangle.
    """
    lo = np.clip(np.floor(rows_px.min(axis=1) - 0.5), 0, height - 1).astype(np.int64) // band
    hi = np.clip(np.ceil(rows_px.max(axis=1) - 0.5), 0, height - 1).astype(np.int64) // band
    ok = keep & (rows_px.max(axis=1) >= -1) & (rows_px.min(axis=1) <= height + 1)
    ids = np.flatnonzero(ok)
    lo, hi = lo[ok], hi[ok]
    count = hi - lo + 1
    tri = np.repeat(ids, count)
    first = np.repeat(np.cumsum(count) - count, count)
    which = np.repeat(lo, count) + (np.arange(len(tri)) - first)
    order = np.argsort(which, kind="stable")  # by band, index order within a band
    n_bands = -(-height // band)
    start = np.zeros(n_bands + 1, dtype=np.int64)
    np.cumsum(np.bincount(which, minlength=n_bands), out=start[1:])
    return start, tri[order]


@numba.njit(cache=True, nogil=True)
def _shade_points(normals, psi, lut, lp):  # pragma: no cover - compiled
    """Linear-light colour (P, 3) of flat points (cut caps) with their normals and psi."""
    out = np.empty((normals.shape[0], 3), dtype=np.float32)
    size = lut.shape[0]
    for p in range(normals.shape[0]):
        diffuse, spec = _light(normals[p, 0], normals[p, 1], normals[p, 2], lp)
        c = _lut_index(psi[p].real, psi[p].imag, size)
        for ch in range(3):
            out[p, ch] = lut[c, ch] * diffuse + spec
    return out


@numba.njit(cache=True, nogil=True)
def _downsample(img, alpha, ss):  # pragma: no cover - compiled
    """Box filter: mean of ss x ss blocks of premultiplied colour (H, W, 3) and alpha."""
    h = img.shape[0] // ss
    w = img.shape[1] // ss
    out = np.zeros((h, w, 3), dtype=np.float32)
    a_out = np.zeros((h, w), dtype=np.float32)
    scale = 1.0 / (ss * ss)
    for j in range(h):
        for i in range(w):
            r = 0.0
            g = 0.0
            b = 0.0
            a = 0.0
            for dj in range(ss):
                for di in range(ss):
                    y = j * ss + dj
                    x = i * ss + di
                    r += img[y, x, 0]
                    g += img[y, x, 1]
                    b += img[y, x, 2]
                    a += alpha[y, x]
            out[j, i, 0] = r * scale
            out[j, i, 1] = g * scale
            out[j, i, 2] = b * scale
            a_out[j, i] = a * scale
    return out, a_out


#: One-entry table for caps of a user field, whose psi is not known off the mesh: mid grey.
_GREY_LUT = srgb_to_linear(np.full((1, 3), 0.6))


@dataclass(frozen=True, eq=False)
class _Mesh:
    """One layer's mesh with what shading needs per vertex and per triangle."""

    vertices: np.ndarray
    faces: np.ndarray
    normals: np.ndarray
    phasors: np.ndarray  # unit psi/|psi|, already rotated for the sign map
    front: np.ndarray    # per triangle: True when it faces the eye


def _mesh(surfaces: list[Surface], rotation: complex, proj: _Projection) -> _Mesh:
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
    return _Mesh(v, f, n, phasors, front)


def _clip_values(vertices: np.ndarray, planes) -> np.ndarray | None:
    if planes is None:
        return None
    normals, offsets = planes
    return vertices @ normals.T - offsets


def _cap_exit(a: np.ndarray, b: np.ndarray, planes) -> tuple[np.ndarray, np.ndarray]:
    """Depth t at which each ray p = a + t b leaves the removed region (inf: it never was in
    it), and the index of the plane it leaves through."""
    normals, offsets = planes
    s0 = a @ normals.T - offsets        # plane value at t = 0
    ds = b @ normals.T                  # its rate of change along the ray
    with np.errstate(divide="ignore", invalid="ignore"):
        cross = -s0 / ds
    # plane k holds (s > 0) for t > cross if ds > 0, for t < cross if ds < 0, always or never if 0
    parallel_in = np.where(s0 > 0, -np.inf, np.inf)
    lower = np.where(ds > 0, cross, np.where(ds < 0, -np.inf, parallel_in))
    upper = np.where(ds < 0, cross, np.where(ds > 0, np.inf, -parallel_in))
    t_in = lower.max(axis=1)
    t_out = upper.min(axis=1)
    which = upper.argmin(axis=1)
    t_out = np.where(t_in < t_out, t_out, np.inf)
    return t_out, which


def _shade(frags: Fragments, mesh: _Mesh, proj: _Projection, scheme: str, lighting: Lighting,
           rotation: complex, planes, cap_psi: Callable | None) -> tuple[np.ndarray, np.ndarray]:
    """Linear-light colour (H, W, 3) float32 and depth (H, W) of a layer (inf where empty)."""
    h, w = frags.triangle.shape
    lin = np.zeros((h, w, 3), dtype=np.float32)
    back = np.zeros((h, w), dtype=np.bool_)
    lut = _linear_lut(scheme)
    lp = _light_params(lighting, proj)
    _shade_pixels(frags.triangle, frags.weights, mesh.faces, mesh.normals, mesh.phasors,
                  mesh.front, lut, lp, float(lighting.back_face), lin, back)
    depth = frags.depth
    if planes is None or not back.any():
        return lin, depth
    depth = depth.copy()
    flat = np.flatnonzero(back.ravel())
    for start in range(0, len(flat), _CHUNK_PIXELS):
        idx = flat[start:start + _CHUNK_PIXELS]
        rows, cols = np.divmod(idx, w)
        a, b = proj.rays(rows, cols)
        t_out, which = _cap_exit(a, b, planes)
        capped = np.isfinite(t_out) & (t_out <= depth[rows, cols])
        if not np.any(capped):
            continue
        t = t_out[capped]
        points = a[capped] + t[:, None] * b[capped]
        cap_normal = np.ascontiguousarray(planes[0][which[capped]])
        if cap_psi is None:  # no analytic psi: a neutral grey cap
            colour = _shade_points(cap_normal, np.ones(len(t), dtype=complex), _GREY_LUT, lp)
        else:
            psi = np.asarray(cap_psi(*points.T), dtype=complex) * np.conj(rotation)
            colour = _shade_points(cap_normal, np.ascontiguousarray(psi), lut, lp)
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


def _axis_layer(segment: np.ndarray, proj: _Projection, ss: int, width_px: float = 1.6,
                dash_px: float = 7.0, gap_px: float = 5.0) -> np.ndarray:
    """Depth (H, W) of a dashed line (inf off the line); sizes in output pixels."""
    h, w = proj.height, proj.width
    x, y, depth, _ = proj.project(segment)
    length = float(np.hypot(x[1] - x[0], y[1] - y[0]))
    count = max(2, int(math.ceil(length / 0.5)) + 1)
    s = np.linspace(0.0, 1.0, count)
    arc = s * length / ss
    on = np.mod(arc, dash_px + gap_px) < dash_px
    s = s[on]
    points = segment[0] + s[:, None] * (segment[1] - segment[0])
    px, py, pd, _ = proj.project(points)
    radius = 0.5 * width_px * ss
    r = int(math.ceil(radius))
    oy, ox = np.mgrid[-r:r + 1, -r:r + 1]
    disc = (ox**2 + oy**2) <= radius**2
    ox, oy = ox[disc], oy[disc]
    cols = (np.floor(px)[:, None] + ox[None]).astype(np.int64).ravel()
    rows = (np.floor(py)[:, None] + oy[None]).astype(np.int64).ravel()
    dep = np.repeat(pd, len(ox))
    keep = (cols >= 0) & (cols < w) & (rows >= 0) & (rows < h)
    out = np.full(h * w, np.inf)
    np.minimum.at(out, rows[keep] * w + cols[keep], dep[keep])
    return out.reshape(h, w)


#: Colour of the nodal axis line (sRGB): a dark grey that reads on every hue of the maps.
_AXIS_RGB = (0.12, 0.12, 0.12)


def render_surfaces(surfaces: Surface | Sequence[Surface], width_px: int = 800, height_px: int = 800,
                    camera: Camera = Camera(), phase_map: str = "uniform",
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
    surfaces = _as_list(surfaces)
    width_px, height_px, ss = int(width_px), int(height_px), int(supersample)
    if not (16 <= width_px <= 8192 and 16 <= height_px <= 8192):
        raise ValueError(f"the image size must be 16 to 8192 px per side, got {width_px} x {height_px}")
    if not 1 <= ss <= 4:
        raise ValueError(f"supersample must be 1 to 4, got {supersample}")
    if phase_map not in PHASE_SCHEMES:
        raise ValueError(f"unknown phase map {phase_map!r}: use one of {', '.join(PHASE_SCHEMES)}")
    if translucent_outer is not None and not 0.0 < translucent_outer <= 1.0:
        raise ValueError(f"the opacity of outer shells must lie in (0, 1], got {translucent_outer}")
    banded = cutaway is None and not nodal_axis and translucent_outer in (None, 1.0)
    require_render_memory(width_px, height_px, ss, cutaway is not None, banded)  # before any buffer
    segment = _axis_segment(surfaces) if nodal_axis else None
    camera = frame_camera(surfaces, camera, width_px / height_px, segment)
    proj = _projection(camera, width_px * ss, height_px * ss)
    rotation = _sign_rotation(surfaces) if phase_map == "sign" else 1.0 + 0.0j
    planes = cutaway.world_planes(camera, camera.target_a0) if cutaway is not None else None
    if cap_psi is None and surfaces[0].state is not None:
        cap_psi = surfaces[0].state.psi

    opaque, translucent = surfaces, []
    if translucent_outer is not None and translucent_outer < 1.0:
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

    def raster(group: list[Surface]) -> tuple[_Mesh, Fragments]:
        mesh = _mesh(group, rotation, proj)
        x, y, depth, divisor = proj.project(mesh.vertices)
        # without a cut only faces toward the eye can be nearest on a closed surface: cull the rest
        return mesh, rasterize(x, y, depth, mesh.faces, proj.width, proj.height,
                               _clip_values(mesh.vertices, planes), divisor,
                               skip=None if planes is not None else ~mesh.front)

    def layer(group: list[Surface]) -> tuple[np.ndarray, np.ndarray]:
        mesh, frags = raster(group)
        return _shade(frags, mesh, proj, phase_map, lighting, rotation, planes, cap_psi)

    line_lin = srgb_to_linear(np.asarray(_AXIS_RGB, dtype=float))
    if planes is None and not translucent:
        # the common case: shade once per triangle and output pixel, filtering as we go
        mesh = _mesh(opaque, rotation, proj)
        x, y, depth, divisor = proj.project(mesh.vertices)
        premult = np.empty((height_px, width_px, 3), dtype=np.float32)
        alpha = np.empty((height_px, width_px), dtype=np.float32)
        shading = (mesh.faces, mesh.normals, mesh.phasors, mesh.front, _linear_lut(phase_map),
                   _light_params(lighting, proj), float(lighting.back_face), ss, line_lin)
        if segment is None:  # band by band (fast, little memory)
            with np.errstate(invalid="ignore"):
                start, band_faces = _bands(y[mesh.faces], mesh.front, proj.height, _BAND_ROWS * ss)
            w = np.ones(len(x)) if divisor is None else divisor
            _render_banded(x, y, depth.astype(np.float64), w, mesh.faces, start, band_faces,
                           divisor is not None, ss, *shading[1:-2], line_lin, premult, alpha)
        else:  # the whole image at once, so the line can be depth-tested against it
            frags = rasterize(x, y, depth, mesh.faces, proj.width, proj.height, None, divisor,
                              skip=~mesh.front)
            tri = frags.triangle
            tri[_axis_layer(segment, proj, ss) < frags.depth] = _LINE_SAMPLE
            _shade_resolve(tri, frags.weights, *shading, premult, alpha)
        return _finish(premult, alpha, background, surfaces, proj.px_per_a0 / ss, camera, phase_map)
    if opaque:
        lin, depth = layer(opaque)
    else:
        lin = np.zeros((proj.height, proj.width, 3), dtype=np.float32)
        depth = np.full((proj.height, proj.width), np.inf)
    if segment is not None:
        line = _axis_layer(segment, proj, ss)
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
    premult, alpha = _downsample(premult, alpha, ss)
    return _finish(premult, alpha, background, surfaces, proj.px_per_a0 / ss, camera, phase_map)


#: Entries of the linear -> sRGB table used for the final image (tabulated from
#: colormap.linear_to_srgb and interpolated linearly: error below 1e-4, far under one 8-bit step).
_SRGB_LUT_SIZE = 8192


@cache
def _srgb_lut() -> np.ndarray:
    return linear_to_srgb(np.linspace(0.0, 1.0, _SRGB_LUT_SIZE)).astype(np.float32)


@numba.njit(cache=True, nogil=True)
def _encode(premult, alpha, bg, opaque, lut, out):  # pragma: no cover - compiled
    """Premultiplied linear colour -> straight-alpha sRGB RGBA, over `bg` when `opaque`."""
    top = lut.shape[0] - 1
    for j in range(premult.shape[0]):
        for i in range(premult.shape[1]):
            a = alpha[j, i]
            for ch in range(3):
                if opaque:
                    v = premult[j, i, ch] + (1.0 - a) * bg[ch]
                else:
                    v = premult[j, i, ch] / a if a > 0.0 else 0.0
                v = min(max(v, 0.0), 1.0) * top
                k = min(int(v), top - 1)
                f = v - k
                out[j, i, ch] = (1.0 - f) * lut[k] + f * lut[k + 1]
            out[j, i, 3] = 1.0 if opaque else a


def _finish(premult: np.ndarray, alpha: np.ndarray, background, surfaces: list[Surface],
            px_per_a0: float, camera: Camera, phase_map: str) -> Render:
    """Premultiplied linear colour and coverage -> the sRGB Render (over `background`, if any)."""
    bg = np.zeros(3) if background is None else srgb_to_linear(np.asarray(background, dtype=float))
    rgba = np.empty(premult.shape[:2] + (4,), dtype=np.float32)
    _encode(premult, alpha, bg, background is not None, _srgb_lut(), rgba)
    labels = tuple(dict.fromkeys(s.state.label for s in surfaces if s.state is not None))
    return Render(rgba, px_per_a0, camera, phase_map, labels)


# -- composing figures -------------------------------------------------------------------------

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


def fit_geometry(width_px: int, height_px: int, ncols: int = 1, nrows: int = 1, titles: bool = True,
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


def compose_figure(renders: Sequence[Render], geometry: FigureGeometry,
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


def figure_3d(surfaces: Surface | Sequence[Surface], width_px: int = 900, height_px: int = 800,
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
    surfaces = _as_list(surfaces)
    if title is None:
        title = surface_title(surfaces[0])
    geometry = fit_geometry(width_px, height_px, 1, 1, bool(title), legend or scale_bar, dpi)
    background = None if transparent else render_options.pop("background", (1.0, 1.0, 1.0))
    render_options.pop("background", None)
    render = render_surfaces(surfaces, *geometry.panel_px, background=background, **render_options)
    fig = compose_figure([render], geometry, [title] if title else None, units, legend, scale_bar,
                         transparent)
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
