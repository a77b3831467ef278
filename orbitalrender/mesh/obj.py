"""Mesh step, OBJ format: Wavefront OBJ text with the phase colour carried as vertex colours.

Colour is written as three extra numbers on each vertex line,
``v x y z r g b`` with r, g, b in [0, 1] (sRGB), an extension of the plain
format that many mesh programs and slicers read and that the others ignore.
No material (.mtl) or texture file is written, so the .obj stands alone.
OBJ has no place for the per-vertex phase and density: use PLY or GLB for those.
Several bodies are written as named objects (``o positive``, ``o negative`` ...);
face indices count from 1 over the whole file, as the format prescribes.

The text is formatted here in one pass rather than by trimesh's OBJ writer, which
took 3.5 times as long on a 92 000-face surface (benchmarks/bench_mesh.py); files
are still read back with trimesh to check them.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import trimesh

__all__ = ["SUFFIX", "encode_obj"]

SUFFIX = ".obj"
#: Significant digits of coordinates: float64 surfaces rounded as finely as float32 holds them.
_DIGITS = 8


def encode_obj(bodies: Sequence[trimesh.Trimesh], comment: str = "",
               names: Sequence[str] | None = None) -> bytes:
    """The bytes of one OBJ file holding every body as a named object.

    Examples
    --------
    >>> import trimesh
    >>> text = encode_obj([trimesh.creation.icosphere(0)], "1s; units a0").decode()
    >>> text.splitlines()[0]
    '# orbitalrender 1s; units a0'
    >>> [ln for ln in text.splitlines() if ln.startswith("f")][0]
    'f 1 12 6'
    """
    names = list(names) if names else [f"body{i + 1}" for i in range(len(bodies))]
    out = ["# " + " ".join(f"orbitalrender {comment}".split()) + "\n"]
    offset = 1
    vertex_line = f"v %.{_DIGITS}g %.{_DIGITS}g %.{_DIGITS}g %.4f %.4f %.4f\n"
    for name, body in zip(names, bodies):
        if len(bodies) > 1:
            out.append(f"o {name}\n")
        if body.visual.kind == "vertex":
            rgb = np.asarray(body.visual.vertex_colors)[:, :3] / 255.0
            rows = np.column_stack([body.vertices, rgb])
            out.append((vertex_line * len(rows)) % tuple(rows.ravel().tolist()))
        else:
            line = f"v %.{_DIGITS}g %.{_DIGITS}g %.{_DIGITS}g\n"
            out.append((line * len(body.vertices)) % tuple(np.ravel(body.vertices).tolist()))
        faces = np.asarray(body.faces, dtype=np.int64) + offset
        out.append(("f %d %d %d\n" * len(faces)) % tuple(faces.ravel().tolist()))
        offset += len(body.vertices)
    return "".join(out).encode("ascii")
