"""Mesh step, STL format: binary STL, geometry only, the usual input of printer slicers.

STL carries no colour, no unit and no per-vertex data: each triangle is three
float32 corners and a facet normal.  The unit of the numbers is the one chosen
at export (millimetres after ``--size-mm``, which is what slicers assume).
Several bodies go into one file as one triangle list; for two-material printing
write each body to its own file.  Written by :func:`trimesh.exchange.stl.export_stl`.
"""

from __future__ import annotations

from collections.abc import Sequence

import trimesh

__all__ = ["SUFFIX", "encode_stl"]

SUFFIX = ".stl"


def encode_stl(bodies: Sequence[trimesh.Trimesh], comment: str = "") -> bytes:
    """The bytes of one binary STL holding every body; `comment` goes in the 80-byte header.

    Examples
    --------
    >>> import trimesh
    >>> len(encode_stl([trimesh.creation.icosphere(0)]))  # 80 + 4 + 20 * 50
    1084
    """
    mesh = bodies[0] if len(bodies) == 1 else trimesh.util.concatenate(list(bodies))
    data = bytearray(trimesh.exchange.stl.export_stl(mesh))
    header = " ".join(f"orbitalrender {comment}".split()).encode("ascii", "replace")[:80]
    # the header must not start with "solid", which marks an ASCII STL to many readers
    data[:80] = header.ljust(80, b" ")
    return bytes(data)
