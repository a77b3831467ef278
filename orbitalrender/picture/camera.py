"""Picture step, view: the camera, its fit to the surfaces, and the projection to pixels.

A :class:`Camera` says where the picture is seen from (azimuth and elevation of
the viewing direction, zoom, orthographic or perspective projection);
:func:`frame_camera` fills in what was left open (target, half-extent, eye
distance) from the surfaces, and :func:`pixel_projection` maps a resolved camera
to (supersampled) pixels.  Only the standard library and numpy are loaded here,
so option definitions can read :data:`PROJECTIONS` cheaply.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from ..surface.model import Surface

__all__ = ["PROJECTIONS", "Camera", "DEFAULT_CAMERA", "Projection", "as_surfaces", "frame_camera",
           "pixel_projection"]

PROJECTIONS = ("orthographic", "perspective")
#: zoom 1 leaves this much room around the surface: its extent times 1.12 fills the shorter side.
_FIT_MARGIN = 1.12
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


def as_surfaces(surfaces: Surface | Sequence[Surface]) -> list[Surface]:
    """`surfaces` as a list, refused (ValueError) when it is empty, holds something else than
    Surfaces, or has no triangle at all."""
    out = [surfaces] if isinstance(surfaces, Surface) else list(surfaces)
    if not out or not all(isinstance(s, Surface) for s in out):
        raise ValueError("render_surfaces needs one Surface or a sequence of Surfaces")
    if not any(len(s.faces) for s in out):
        raise ValueError("there is nothing to draw: the surface has no triangles "
                         "(is the fraction too small for the lattice?)")
    return out


def frame_camera(surfaces: Surface | Sequence[Surface], camera: Camera = DEFAULT_CAMERA, *,
                 aspect: float = 1.0, extra_points_a0: np.ndarray | None = None) -> Camera:
    """`camera` with target, half-extent and (perspective) distance fitted to the surfaces.

    Parameters
    ----------
    surfaces : Surface or sequence of Surface
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
    surfaces = as_surfaces(surfaces)
    pts = np.concatenate([s.vertices_a0 for s in surfaces])
    if extra_points_a0 is not None:
        pts = np.concatenate([pts, np.asarray(extra_points_a0, dtype=float).reshape(-1, 3)])
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
class Projection:
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


def pixel_projection(camera: Camera, width: int, height: int) -> Projection:
    """The projection of a resolved camera (:func:`frame_camera`) onto `width` x `height` pixels."""
    right, up, toward = camera.basis()
    f = 0.5 * min(width, height) * camera.zoom / camera.half_extent_a0
    return Projection(camera, width, height, f, np.array(camera.target_a0), right, up, toward)


