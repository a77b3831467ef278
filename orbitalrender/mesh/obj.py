"""Mesh step, OBJ format: Wavefront OBJ text with the phase colour carried as vertex colours.

Colour is written as three extra numbers on each vertex line,
``v x y z r g b`` with r, g, b in [0, 1] (sRGB), an extension of the plain
format that many mesh programs and slicers read and that the others ignore.
No material (.mtl) or texture file is written, so the .obj stands alone.
OBJ has no place for the per-vertex phase and density: use PLY or GLB for those.
Several bodies are written as named objects (``o positive``, ``o negative`` ...).
Written by :func:`trimesh.exchange.obj.export_obj`.
"""

from __future__ import annotations

from collections.abc import Sequence

import trimesh

__all__ = ["SUFFIX", "encode_obj"]

SUFFIX = ".obj"


def encode_obj(bodies: Sequence[trimesh.Trimesh], comment: str = "",
               names: Sequence[str] | None = None) -> bytes:
    """The bytes of one OBJ file holding every body as a named object.

    Examples
    --------
    >>> import trimesh
    >>> text = encode_obj([trimesh.creation.icosphere(0)], "1s; units a0").decode()
    >>> text.splitlines()[0]
    '# orbitalrender 1s; units a0'
    """
    header = " ".join(f"orbitalrender {comment}".split())
    if len(bodies) == 1:
        item = bodies[0]
    else:
        names = names or [f"body{i + 1}" for i in range(len(bodies))]
        item = trimesh.Scene()
        for name, body in zip(names, bodies):
            item.add_geometry(body, node_name=name, geom_name=name)
    text = trimesh.exchange.obj.export_obj(item, include_normals=False, include_color=True,
                                           include_texture=False, header=header)
    return text.encode("utf-8")
