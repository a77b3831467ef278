"""Mesh step, STL format: binary STL, geometry only, the usual input of printer slicers.

STL carries no colour, no unit and no per-vertex data: each triangle is three
float32 corners and a facet normal.  The unit of the numbers is the one chosen
at export (millimetres after ``--size-mm``, which is what slicers assume).
Several bodies go into one file as one triangle list; for two-material printing
write each body to its own file.

Layout (little-endian): an 80-byte header (never starting with ``solid``, which marks
an ASCII STL to many readers), a uint32 triangle count, then 50 bytes per triangle:
the unit facet normal and the three corners counter-clockwise seen from outside
(twelve float32) and a uint16 attribute count of 0.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from .arrays import MeshArrays

__all__ = ["SUFFIX", "encode_stl", "read_stl"]

SUFFIX = ".stl"
_HEADER_BYTES = 80
_RECORD = np.dtype([("normal", "<f4", (3,)), ("corners", "<f4", (3, 3)), ("attribute", "<u2")])


def _facet_normals(corners: np.ndarray) -> np.ndarray:
    """Unit normals (right-hand rule over the corner order) of triangles (F, 3, 3); zero for
    a triangle without area."""
    normal = np.cross(corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0])
    length = np.sqrt(np.einsum("ij,ij->i", normal, normal))
    return np.divide(normal, length[:, None], out=np.zeros_like(normal), where=length[:, None] > 0)


def encode_stl(bodies: Sequence[MeshArrays], comment: str = "") -> bytes:
    """The bytes of one binary STL holding every body; `comment` goes in the 80-byte header.

    Examples
    --------
    >>> tri = MeshArrays(np.eye(3), np.array([[0, 1, 2]]))
    >>> data = encode_stl([tri], "one triangle")
    >>> len(data), data[:13]  # 80 + 4 + 1 x 50
    (134, b'orbitalrender')
    """
    corners = np.concatenate([np.asarray(b.vertices, float)[np.asarray(b.faces, np.int64)] for b in bodies])
    record = np.zeros(len(corners), dtype=_RECORD)
    record["corners"] = corners
    record["normal"] = _facet_normals(corners)
    header = " ".join(f"orbitalrender {comment}".split()).encode("ascii", "replace")[:_HEADER_BYTES]
    return header.ljust(_HEADER_BYTES, b" ") + np.uint32(len(record)).tobytes() + record.tobytes()


def read_stl(data: bytes) -> MeshArrays:
    """The triangles of a binary STL, three corners each (vertices are not merged).

    Raises
    ------
    OSError
        If the size does not match the triangle count of the header.

    Examples
    --------
    >>> tri = MeshArrays(np.eye(3), np.array([[0, 1, 2]]))
    >>> read_stl(encode_stl([tri])).faces.tolist()
    [[0, 1, 2]]
    """
    if len(data) < _HEADER_BYTES + 4:
        raise OSError("too short for a binary STL file")
    count = int(np.frombuffer(data, "<u4", 1, _HEADER_BYTES)[0])
    if len(data) != _HEADER_BYTES + 4 + count * _RECORD.itemsize:
        raise OSError(f"a binary STL of {count} triangles cannot have {len(data)} bytes")
    record = np.frombuffer(data, _RECORD, count, _HEADER_BYTES + 4)
    return MeshArrays(record["corners"].reshape(-1, 3).astype(float), np.arange(3 * count).reshape(-1, 3))
