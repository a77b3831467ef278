"""Picture step, cutaway: the region removed from a render, its text form, and the clip-plane geometry.

A :class:`Cutaway` is an intersection of half-spaces ``n_k . p > offset_k``;
:func:`parse_cutaway` reads it from text (``front``, ``quadrant`` or conditions
such as ``x>0&y>0``).  :func:`clip_values` gives the plane values at mesh vertices
(the rasterizer drops fragments where all are positive) and :func:`cap_exit` the
depth at which a ray leaves the removed region, where the cut is capped.  Only the
standard library and numpy are loaded here.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from .camera import Camera

__all__ = ["Cutaway", "CUTAWAY_KEYWORDS", "parse_cutaway", "clip_values", "cap_exit"]


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


def clip_values(vertices: np.ndarray, planes) -> np.ndarray | None:
    if planes is None:
        return None
    normals, offsets = planes
    return vertices @ normals.T - offsets


def cap_exit(a: np.ndarray, b: np.ndarray, planes) -> tuple[np.ndarray, np.ndarray]:
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


