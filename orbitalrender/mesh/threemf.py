"""Mesh step, 3MF format: the 3D Manufacturing Format package, one named object per body, in millimetres.

A 3MF file is a ZIP package (Open Packaging Conventions) holding three parts::

    [Content_Types].xml     the media types of the parts
    _rels/.rels             points to the model part
    3D/3dmodel.model        <model unit="millimeter"> with <resources> and <build>

Each body is one ``<object type="model">`` with its ``name`` (``psi>0``, ``psi<0``,
a phase band, or the model's label) and a ``<mesh>`` of ``<vertex x y z>`` and
``<triangle v1 v2 v3>`` (counter-clockwise seen from outside, as the core
specification requires of a closed object); the ``<build>`` places every object
once, without a transform.  With more than one body the file also holds one
``<basematerials>`` group with a ``<base>`` entry per body (its name and display
colour, the body's phase colour), and each object refers to its own entry, so a
multi-material slicer lists the bodies apart and a material can be given to each.
Lengths are millimetres, the only unit this tool writes to 3MF: the core
specification allows micron to metre and nothing at the atomic scale.

Written here with the standard library (zipfile, xml.sax.saxutils); read back by
trimesh, whose 3MF reader needs lxml and networkx.

References
----------
.. [1] 3MF Consortium, "3MF Core Specification", version 1.3.0 (2022): model, object,
       mesh, build and basematerials elements; the package layout of chapter 2.
"""

from __future__ import annotations

import io
import zipfile
from collections.abc import Sequence
from xml.sax.saxutils import quoteattr

import numpy as np

from .arrays import SUPPORT_RGBA, MeshArrays

__all__ = ["SUFFIX", "UNITS", "encode_3mf"]

SUFFIX = ".3mf"
#: Our length unit -> the 3MF unit name (core specification, attribute ``unit`` of ``<model>``).
UNITS = {"mm": "millimeter"}

_CORE = "http://schemas.microsoft.com/3dmanufacturing/core/2015/02"
_MODEL_RELATION = "http://schemas.microsoft.com/3dmanufacturing/2013/01/3dmodel"
_CONTENT_TYPES = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
    '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
    '<Default Extension="model" ContentType="application/vnd.ms-package.3dmanufacturing-3dmodel+xml"/>'
    '</Types>\n')
_RELATIONSHIPS = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
    f'<Relationship Target="/3D/3dmodel.model" Id="rel0" Type="{_MODEL_RELATION}"/>'
    '</Relationships>\n')
#: Digits of each coordinate: 9 significant digits round-trip a float32 exactly (IEEE 754).
_DIGITS = 9


def encode_3mf(bodies: Sequence[MeshArrays], names: Sequence[str] | None = None,
               units: str = "mm", title: str = "") -> bytes:
    """The bytes of one 3MF package holding each body as a named object.

    Parameters
    ----------
    bodies : sequence of MeshArrays
        Closed bodies, coordinates in `units`; vertex colours give each body's display colour.
    names : sequence of str, optional
        One per body (default ``body1``, ``body2``, ...).
    units : str
        ``"mm"``; other units have no 3MF name and raise ValueError.
    title : str
        The model's ``Title`` metadata.

    Examples
    --------
    >>> import io, zipfile
    >>> data = encode_3mf([MeshArrays(np.eye(3), np.array([[0, 1, 2]]))], names=["triangle"])
    >>> sorted(zipfile.ZipFile(io.BytesIO(data)).namelist())
    ['3D/3dmodel.model', '[Content_Types].xml', '_rels/.rels']
    """
    if units not in UNITS:
        raise ValueError(f"a 3MF file holds lengths in millimetres, not {units!r}")
    names = list(names) if names is not None else [f"body{i + 1}" for i in range(len(bodies))]
    if len(names) != len(bodies):
        raise ValueError(f"{len(names)} names for {len(bodies)} bodies")
    out = io.StringIO()
    out.write(f'<?xml version="1.0" encoding="UTF-8"?>\n<model unit="{UNITS[units]}" xml:lang="en-US" '
              f'xmlns="{_CORE}">\n')
    if title:
        out.write(f'<metadata name="Title">{_text(title)}</metadata>\n')
    out.write('<metadata name="Application">orbitalrender</metadata>\n<resources>\n')
    several = len(bodies) > 1
    if several:  # resource id 1: one material per body, for a multi-material slicer
        out.write('<basematerials id="1">\n')
        for name, body in zip(names, bodies):
            out.write(f'<base name={quoteattr(name)} displaycolor="{_display_colour(body)}"/>\n')
        out.write('</basematerials>\n')
    first_id = 2 if several else 1
    for k, (name, body) in enumerate(zip(names, bodies)):
        material = f' pid="1" pindex="{k}"' if several else ""
        out.write(f'<object id="{first_id + k}" type="model" name={quoteattr(name)}{material}>\n<mesh>\n')
        _write_mesh(out, body)
        out.write('</mesh>\n</object>\n')
    out.write('</resources>\n<build>\n')
    out.write("".join(f'<item objectid="{first_id + k}"/>\n' for k in range(len(bodies))))
    out.write('</build>\n</model>\n')
    package = io.BytesIO()
    with zipfile.ZipFile(package, "w", compression=zipfile.ZIP_DEFLATED) as z:
        for part, text in (("[Content_Types].xml", _CONTENT_TYPES), ("_rels/.rels", _RELATIONSHIPS),
                           ("3D/3dmodel.model", out.getvalue())):
            # a fixed date keeps the same model byte-for-byte the same from run to run
            z.writestr(zipfile.ZipInfo(part, date_time=(1980, 1, 1, 0, 0, 0)), text,
                       compress_type=zipfile.ZIP_DEFLATED)
    return package.getvalue()


def _text(value: str) -> str:
    return quoteattr(value)[1:-1]


def _write_mesh(out: io.StringIO, body: MeshArrays) -> None:
    vertices = np.asarray(body.vertices, dtype=float)
    faces = np.asarray(body.faces, dtype=np.int64)
    number = f"%.{_DIGITS}g"
    out.write("<vertices>\n")
    out.write(f'<vertex x="{number}" y="{number}" z="{number}"/>\n' * len(vertices) % tuple(vertices.ravel()))
    out.write("</vertices>\n<triangles>\n")
    out.write('<triangle v1="%d" v2="%d" v3="%d"/>\n' * len(faces) % tuple(faces.ravel().tolist()))
    out.write("</triangles>\n")


def _display_colour(body: MeshArrays) -> str:
    """``#RRGGBB``: the colour of the body's vertex whose phase is nearest the body's circular
    mean phase (its most typical colour), or the mean colour when it has no phase."""
    if body.rgba is None:
        return "#" + "".join(f"{c:02X}" for c in SUPPORT_RGBA[:3])
    rgb = np.asarray(body.rgba)[:, :3]
    phase = body.attributes.get("phase")
    finite = np.isfinite(phase) if phase is not None else np.zeros(len(rgb), bool)
    if finite.any():
        unit = np.exp(1j * np.asarray(phase, float)[finite])
        typical = np.flatnonzero(finite)[np.argmax((unit * np.conj(np.mean(unit))).real)]
        colour = rgb[typical]
    else:
        colour = np.round(rgb.mean(axis=0)).astype(int)
    return "#" + "".join(f"{int(c):02X}" for c in colour)
