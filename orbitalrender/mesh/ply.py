"""Mesh step, PLY format: binary little-endian PLY with phase colours and per-vertex phase and density.

Layout (written by :func:`trimesh.exchange.ply.export_ply`, which supports
custom vertex properties)::

    ply
    format binary_little_endian 1.0
    comment orbitalrender <label>; units <unit>
    element vertex V
    property float x          \\
    property float y           } position in the stated unit
    property float z          /
    property uchar red        \\
    property uchar green       } sRGB colour of arg psi (0-255); alpha is 255
    property uchar blue        }
    property uchar alpha      /
    property float phase       arg psi in radians, (-pi, pi]; NaN on struts and base
    property float density     |psi|^2 in a0^-3 (whatever the length unit); NaN on struts and base
    [property int body]        0, 1, ... when the file holds several bodies
    element face F
    property list uchar int vertex_indices
    end_header
    <V vertex records, 28 (or 32) bytes each> <F face records, 13 bytes each>

Faces are counter-clockwise seen from outside.

A point cloud (:func:`encode_ply_points`) is the same file without faces: x, y, z in a0,
red, green, blue (sRGB of the phase colour), phase and density; 23 bytes per point.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import trimesh

from .bodies import concatenate

__all__ = ["SUFFIX", "encode_ply", "encode_ply_points"]

SUFFIX = ".ply"


def encode_ply(bodies: Sequence[trimesh.Trimesh], comment: str = "") -> bytes:
    """The bytes of one binary PLY holding every body (a ``body`` property tells them apart
    when there is more than one).

    Parameters
    ----------
    bodies : sequence of trimesh.Trimesh
        Each with vertex colours and ``vertex_attributes`` ``phase`` and ``density``.
    comment : str
        One line for the header (label, unit).

    Returns
    -------
    bytes

    Examples
    --------
    >>> import trimesh
    >>> m = trimesh.creation.icosphere(0)
    >>> encode_ply([m])[:30]
    b'ply\\nformat binary_little_endia'
    """
    mesh = _concatenate(bodies)
    data = trimesh.exchange.ply.export_ply(mesh, encoding="binary_little_endian",
                                          vertex_normal=False, include_attributes=True)
    head, sep, body = data.partition(b"end_header\n")
    # our own comment line in place of the writer's, after the format line as PLY requires
    lines = [ln for ln in head.split(b"\n") if ln and not ln.startswith(b"comment")]
    line = " ".join(f"orbitalrender {comment}".split()).encode("ascii", "replace")
    lines.insert(2, b"comment " + line)
    return b"\n".join(lines) + b"\n" + sep + body


_POINT_RECORD = np.dtype([("x", "<f4"), ("y", "<f4"), ("z", "<f4"), ("red", "u1"),
                          ("green", "u1"), ("blue", "u1"), ("phase", "<f4"), ("density", "<f4")])
_PLY_TYPES = {"<f4": "float", "u1": "uchar"}


def encode_ply_points(points_a0: np.ndarray, psi: np.ndarray, rgb: np.ndarray,
                      comment: str = "") -> bytes:
    """The bytes of a binary PLY point cloud with per-point colour, ``phase`` and ``density``.

    Parameters
    ----------
    points_a0 : ndarray, shape (N, 3)
        Positions in a0.
    psi : ndarray of complex, shape (N,)
        psi at each point: ``phase`` is arg psi in (-pi, pi], ``density`` |psi|^2 in a0^-3.
    rgb : ndarray, shape (N, 3)
        sRGB colour of each point in [0, 1].
    comment : str
        One line for the header.

    Examples
    --------
    >>> import numpy as np
    >>> data = encode_ply_points(np.zeros((2, 3)), np.array([1, -1j]), np.ones((2, 3)))
    >>> data.count(b"\\n", 0, data.index(b"end_header")), len(data.split(b"end_header\\n")[1])
    (12, 46)
    """
    record = np.empty(len(points_a0), dtype=_POINT_RECORD)
    for axis, name in enumerate("xyz"):
        record[name] = points_a0[:, axis]
    colour = np.clip(np.rint(np.asarray(rgb) * 255.0), 0, 255).astype(np.uint8)
    for channel, name in enumerate(("red", "green", "blue")):
        record[name] = colour[:, channel]
    record["phase"] = np.angle(psi)
    record["density"] = np.abs(psi) ** 2
    line = " ".join(f"orbitalrender {comment}; units a0".split())
    header = ["ply", "format binary_little_endian 1.0", f"comment {line}",
              f"element vertex {len(record)}"]
    header += [f"property {_PLY_TYPES[_POINT_RECORD[name].str.lstrip('|')]} {name}"
               for name in _POINT_RECORD.names]
    header.append("end_header")
    return ("\n".join(header) + "\n").encode("ascii", "replace") + record.tobytes()


def _concatenate(bodies: Sequence[trimesh.Trimesh]) -> trimesh.Trimesh:
    """One mesh from several with a ``body`` index per vertex; float attributes as float32."""
    if len(bodies) == 1:  # a light view of the body: its arrays shared, its attributes replaced below
        body = bodies[0]
        colours = body.visual.vertex_colors if body.visual.kind == "vertex" else None
        mesh = trimesh.Trimesh(body.vertices, body.faces, vertex_colors=colours, process=False,
                               validate=False)
        mesh.vertex_attributes.update(body.vertex_attributes)
    else:
        mesh = concatenate(bodies)
    if len(bodies) > 1:
        mesh.vertex_attributes["body"] = np.concatenate(
            [np.full(len(b.vertices), i, dtype=np.int32) for i, b in enumerate(bodies)])
    for key, value in list(mesh.vertex_attributes.items()):
        if np.asarray(value).dtype.kind == "f":
            mesh.vertex_attributes[key] = np.asarray(value, dtype=np.float32)
    return mesh
