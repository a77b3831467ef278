"""Mesh step, OBJ format: Wavefront OBJ text with the phase colour carried as vertex colours.

Colour is written as three extra numbers on each vertex line,
``v x y z r g b`` with r, g, b in [0, 1] (sRGB), an extension of the plain
format that many mesh programs and slicers read and that the others ignore.
No material (.mtl) or texture file is written, so the .obj stands alone.
OBJ has no place for the per-vertex phase and density: use PLY or GLB for those.
Several bodies are written as named objects (``o positive``, ``o negative`` ...);
face indices count from 1 over the whole file, as the format prescribes.

Numbers are written in fixed-width columns (right-aligned, padded with spaces, which
OBJ allows between values): coordinates with 8 significant digits of the largest one
(finer than float32), colours with 4 decimals (enough to tell the 256 levels of a
channel apart).  Columns of equal width let the whole text be built as one numpy byte
array instead of number by number; at 163 000 vertices this took 0.15 s against
1.1 s for trimesh's OBJ writer (measured on the surface of benchmarks/bench_mesh.py).
:func:`read_obj` reads such files back (positions, colours, triangles) to check them.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from .arrays import MeshArrays

__all__ = ["SUFFIX", "encode_obj", "read_obj", "fixed_columns"]

SUFFIX = ".obj"
#: Significant digits of the largest coordinate (float32 holds about 7).
_DIGITS = 8
#: Decimals of a colour channel in [0, 1]: 1e-4 steps separate the 1/255 levels.
_COLOUR_DECIMALS = 4
_SPACE, _MINUS, _POINT, _ZERO = (ord(c) for c in " -.0")


def fixed_columns(values: np.ndarray, decimals: int) -> np.ndarray:
    """ASCII of `values` (N, K) with `decimals` decimals (0: integers, no point), as a uint8
    array (N, K, W): every number right-aligned in W characters that start with a space.

    Examples
    --------
    >>> cols = fixed_columns(np.array([[3.14159, -0.5], [12.0, 0.0]]), 2)
    >>> [bytes(row.ravel()).decode() for row in cols]
    ['   3.14  -0.50', '  12.00   0.00']
    >>> bytes(fixed_columns(np.array([[7, 1234]]), 0).ravel()).decode()
    '    7 1234'
    """
    values = np.asarray(values, dtype=float)
    scaled = np.rint(values * 10.0**decimals).astype(np.int64)
    negative = scaled < 0
    magnitude = np.abs(scaled)
    # digits needed: the fraction, and at least one before the point
    digits = np.maximum(decimals + 1, np.floor(np.log10(np.maximum(magnitude, 1))).astype(np.int64) + 1)
    point = 1 if decimals else 0
    width = int(digits.max()) + point + 1 + int(negative.any())  # leading space and a sign slot
    out = np.full(values.shape + (width,), _SPACE, dtype=np.uint8)
    rest = magnitude.copy()
    column = width - 1
    for place in range(int(digits.max())):
        if decimals and place == decimals:
            out[..., column] = _POINT
            column -= 1
        show = place < digits
        out[..., column] = np.where(show, _ZERO + rest % 10, _SPACE)
        rest //= 10
        column -= 1
    # the minus sign goes just before the first digit, which is at width - digits - point
    sign_at = width - 1 - digits - point
    rows, cols = np.nonzero(negative)
    out[rows, cols, sign_at[rows, cols]] = _MINUS
    return out


def _lines(prefix: bytes, columns: list[np.ndarray]) -> bytes:
    """One text line per row: `prefix`, the columns side by side, a newline."""
    count = columns[0].shape[0]
    parts = [np.frombuffer(prefix, np.uint8)[None].repeat(count, 0)]
    parts += [c.reshape(count, -1) for c in columns]
    parts.append(np.full((count, 1), ord("\n"), dtype=np.uint8))
    return np.concatenate(parts, axis=1).tobytes()


def encode_obj(bodies: Sequence[MeshArrays], comment: str = "",
               names: Sequence[str] | None = None) -> bytes:
    """The bytes of one OBJ file holding every body as a named object.

    Examples
    --------
    >>> text = encode_obj([MeshArrays(np.eye(3), np.array([[0, 2, 1]]))], "1s; units a0").decode()
    >>> text.splitlines()[0]
    '# orbitalrender 1s; units a0'
    >>> [ln.split() for ln in text.splitlines() if ln.startswith("f")][0]
    ['f', '1', '3', '2']
    """
    names = list(names) if names else [f"body{i + 1}" for i in range(len(bodies))]
    out = [("# " + " ".join(f"orbitalrender {comment}".split()) + "\n").encode("ascii", "replace")]
    largest = max((float(np.max(np.abs(b.vertices))) for b in bodies if len(b.vertices)), default=1.0)
    whole_digits = int(np.floor(np.log10(largest))) + 1 if largest >= 1 else 1
    decimals = min(max(_DIGITS - whole_digits, 1), 12)
    offset = 1
    for name, body in zip(names, bodies):
        if len(bodies) > 1:
            out.append(f"o {name}\n".encode("ascii", "replace"))
        columns = [fixed_columns(body.vertices, decimals)]
        if body.rgba is not None:
            rgb = np.asarray(body.rgba)[:, :3] / 255.0
            columns.append(fixed_columns(rgb, _COLOUR_DECIMALS))
        out.append(_lines(b"v", columns))
        out.append(_lines(b"f", [fixed_columns(np.asarray(body.faces, np.int64) + offset, 0)]))
        offset += len(body.vertices)
    return b"".join(out)


def _numbers(lines: list[bytes], dtype) -> np.ndarray:
    """The numbers after the keyword of each line, one row per line (all rows equally long)."""
    if not lines:
        return np.zeros((0, 3), dtype)
    flat = np.array(b" ".join(ln.split(None, 1)[1] for ln in lines).split(), dtype=dtype)
    if flat.size % len(lines):
        raise OSError("OBJ lines of one kind have different numbers of values")
    return flat.reshape(len(lines), -1)


def read_obj(data: bytes) -> MeshArrays:
    """Vertices (with ``v x y z [r g b]`` colours) and triangles of an OBJ text, all objects
    together; face indices may be negative (relative) as the format allows.

    Raises
    ------
    OSError
        For faces that are not triangles of plain vertex indices, or indices out of range.

    Examples
    --------
    >>> back = read_obj(b"v 0 0 0 1 0 0\\nv 1 0 0 0 1 0\\nv 0 1 0 0 0 1\\nf 1 2 -1\\n")
    >>> back.faces.tolist(), back.rgba[0].tolist()
    ([[0, 1, 2]], [255, 0, 0, 255])
    """
    lines = data.split(b"\n")
    try:
        vertex = _numbers([ln for ln in lines if ln.startswith(b"v ")], float)
        faces = _numbers([ln for ln in lines if ln.startswith(b"f ")], np.int64)
    except ValueError as exc:  # "1/2/3" indices or stray text
        raise OSError(f"unreadable OBJ numbers: {exc}") from None
    if vertex.shape[1] not in (3, 6) or faces.shape[1] != 3:
        raise OSError("the OBJ file is not a triangle mesh of x y z [r g b] vertices")
    faces = np.where(faces < 0, faces + len(vertex), faces - 1)
    if faces.size and (faces.min() < 0 or faces.max() >= len(vertex)):
        raise OSError("an OBJ face refers to a vertex that is not there")
    rgba = None
    if vertex.shape[1] == 6:
        rgba = np.full((len(vertex), 4), 255, dtype=np.uint8)
        rgba[:, :3] = np.clip(np.rint(vertex[:, 3:] * 255.0), 0, 255)
    return MeshArrays(vertex[:, :3], faces, rgba)
