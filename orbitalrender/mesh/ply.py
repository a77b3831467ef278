"""Mesh step, PLY format: binary little-endian PLY with phase colours and per-vertex phase and density.

Layout (written and read here with numpy record arrays)::

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

from .arrays import MeshArrays

__all__ = ["SUFFIX", "encode_ply", "read_ply", "encode_ply_points"]

SUFFIX = ".ply"
#: numpy type -> PLY scalar type name (Turk 1994, the property types table).
_PLY_TYPES = {"<f4": "float", "u1": "uchar", "<i4": "int", "<u4": "uint", "<f8": "double",
              "i1": "char", "<i2": "short", "<u2": "ushort"}
_NUMPY_TYPES = {**{name: np.dtype(code) for code, name in _PLY_TYPES.items()},
                "float32": np.dtype("<f4"), "float64": np.dtype("<f8"), "uint8": np.dtype("u1"),
                "int32": np.dtype("<i4"), "uint32": np.dtype("<u4"), "int8": np.dtype("i1"),
                "int16": np.dtype("<i2"), "uint16": np.dtype("<u2")}
_COLOUR = ("red", "green", "blue", "alpha")


def _vertex_record(bodies: Sequence[MeshArrays]) -> np.ndarray:
    """One record per vertex of every body: position, colour, the attributes all bodies share
    (float32, or int32 for integers) and, for several bodies, the body index."""
    count = sum(len(b.vertices) for b in bodies)
    names = [k for k in bodies[0].attributes if all(k in b.attributes for b in bodies)]
    kinds = {k: "<i4" if np.asarray(bodies[0].attributes[k]).dtype.kind in "iu" else "<f4" for k in names}
    coloured = all(b.rgba is not None for b in bodies)
    fields = [(axis, "<f4") for axis in "xyz"] + ([(c, "u1") for c in _COLOUR] if coloured else [])
    fields += [(k, kinds[k]) for k in names] + ([("body", "<i4")] if len(bodies) > 1 else [])
    record = np.empty(count, dtype=fields)
    start = 0
    for i, body in enumerate(bodies):
        part = record[start:start + len(body.vertices)]
        for axis, name in enumerate("xyz"):
            part[name] = body.vertices[:, axis]
        if coloured:
            for channel, name in enumerate(_COLOUR):
                part[name] = body.rgba[:, channel]
        for k in names:
            part[k] = body.attributes[k]
        if len(bodies) > 1:
            part["body"] = i
        start += len(body.vertices)
    return record


def encode_ply(bodies: Sequence[MeshArrays], comment: str = "") -> bytes:
    """The bytes of one binary PLY holding every body (a ``body`` property tells them apart
    when there is more than one).

    Parameters
    ----------
    bodies : sequence of MeshArrays
        Each with vertex colours and ``attributes`` ``phase`` and ``density``.
    comment : str
        One line for the header (label, unit).

    Returns
    -------
    bytes

    Examples
    --------
    >>> v, f = np.eye(3), np.array([[0, 1, 2]])
    >>> data = encode_ply([MeshArrays(v, f)], "one triangle")
    >>> data[:30], len(data.split(b"end_header\\n")[1])  # 3 vertices x 12 bytes, 1 face x 13
    (b'ply\\nformat binary_little_endia', 49)
    """
    record = _vertex_record(bodies)
    offsets = np.cumsum([0] + [len(b.vertices) for b in bodies[:-1]])
    faces = np.empty(sum(len(b.faces) for b in bodies), dtype=[("count", "u1"), ("index", "<i4", (3,))])
    faces["count"] = 3
    faces["index"] = np.concatenate([np.asarray(b.faces, np.int64) + k for b, k in zip(bodies, offsets)])
    line = " ".join(f"orbitalrender {comment}".split())
    header = ["ply", "format binary_little_endian 1.0", f"comment {line}", f"element vertex {len(record)}"]
    header += [f"property {_PLY_TYPES[record.dtype[k].str.lstrip('|')]} {k}" for k in record.dtype.names]
    header += [f"element face {len(faces)}", "property list uchar int vertex_indices", "end_header"]
    return ("\n".join(header) + "\n").encode("ascii", "replace") + record.tobytes() + faces.tobytes()


def read_ply(data: bytes) -> MeshArrays:
    """A triangle mesh from the bytes of a binary little-endian PLY (the layout above, or any
    with scalar vertex properties and a face list of three indices each).

    Colours and further vertex properties come back in ``rgba`` and ``attributes``.

    Raises
    ------
    OSError
        If the bytes are not such a file.

    Examples
    --------
    >>> v, f = np.eye(3), np.array([[0, 1, 2]])
    >>> back = read_ply(encode_ply([MeshArrays(v, f)]))
    >>> back.vertices.tolist() == v.tolist(), back.faces.tolist()
    (True, [[0, 1, 2]])
    """
    head, sep, body = data.partition(b"end_header\n")
    lines = head.decode("ascii", "replace").splitlines()
    if not sep or lines[:2] != ["ply", "format binary_little_endian 1.0"]:
        raise OSError("not a binary little-endian PLY file")
    elements: list[list] = []  # [name, count, fields]
    try:
        for ln in lines[2:]:
            words = ln.split()
            if words[:1] == ["element"]:
                elements.append([words[1], int(words[2]), []])
            elif words[:1] == ["property"]:
                elements[-1][2].append(words[1:])
    except (IndexError, ValueError) as exc:
        raise OSError(f"unreadable PLY header line: {exc}") from None
    arrays, offset = {}, 0
    for name, count, props in elements:
        try:
            if name == "face":
                ((kind, count_type, index_type, _),) = props
                if kind != "list":
                    raise ValueError(kind)
                fields = [("count", _NUMPY_TYPES[count_type]), ("index", _NUMPY_TYPES[index_type], (3,))]
            else:
                fields = [(p[1], _NUMPY_TYPES[p[0]]) for p in props]
        except (KeyError, ValueError) as exc:
            raise OSError(f"PLY element {name!r} has properties this reader does not take: {exc}") from None
        try:
            record = np.frombuffer(body, dtype=fields, count=count, offset=offset)
        except ValueError:
            raise OSError(f"the PLY file ends before its {count} {name} records") from None
        offset += record.nbytes
        arrays[name] = record
    vertex, face = arrays.get("vertex"), arrays.get("face")
    if vertex is None or face is None or np.any(face["count"] != 3) or offset != len(body):
        raise OSError("the PLY file is not a triangle mesh of the size its header states")
    names = vertex.dtype.names
    rgba = np.stack([vertex[c] for c in _COLOUR], axis=1) if set(_COLOUR) <= set(names) else None
    rest = {k: np.asarray(vertex[k]) for k in names if k not in "xyz" and k not in _COLOUR}
    return MeshArrays(np.stack([vertex[a] for a in "xyz"], axis=1).astype(float),
                      np.asarray(face["index"], dtype=np.int64), rgba, None, rest)


_POINT_RECORD = np.dtype([("x", "<f4"), ("y", "<f4"), ("z", "<f4"), ("red", "u1"),
                          ("green", "u1"), ("blue", "u1"), ("phase", "<f4"), ("density", "<f4")])


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
