"""Mesh step, GLB format: glTF 2.0 binary with vertex colours and custom phase/density attributes.

Each body is one node of the scene with one triangle primitive whose attributes
are ``POSITION``, ``NORMAL``, ``COLOR_0`` (RGBA, unsigned byte, normalised,
the sRGB colour of arg psi) and the application attributes ``_phase`` (float,
radians) and ``_density`` (float, |psi|^2 in a0^-3); glTF requires custom
attribute names to begin with an underscore.  glTF takes lengths in metres;
the numbers here are in the unit chosen at export, which is recorded in each
mesh's ``extras.units``, so a viewer shows the right shape at a scale that may
need adjusting.  Written by :func:`trimesh.exchange.gltf.export_glb`.
"""

from __future__ import annotations

from collections.abc import Sequence

from .arrays import MeshArrays, as_trimesh

__all__ = ["SUFFIX", "encode_glb"]

SUFFIX = ".glb"


def encode_glb(bodies: Sequence[MeshArrays], names: Sequence[str] | None = None,
               units: str = "") -> bytes:
    """The bytes of one GLB holding each body as a named node.

    Examples
    --------
    >>> import numpy as np
    >>> encode_glb([MeshArrays(np.eye(3), np.array([[0, 1, 2]]))])[:4]
    b'glTF'
    """
    import trimesh

    names = names or [f"body{i + 1}" for i in range(len(bodies))]
    scene = trimesh.Scene()
    for name, body in zip(names, bodies):
        mesh = as_trimesh(body)
        if units:
            mesh.units = units  # read by the writer into the mesh's extras
        scene.add_geometry(mesh, node_name=name, geom_name=name)
    return trimesh.exchange.gltf.export_glb(scene, include_normals=True)
