"""Picture output: figures saved as PNG, SVG or PDF with embedded metadata, and JSON reports.

Every file is written through :func:`orbitalrender.atomic.atomic_path`, so a
failure part-way leaves an earlier file of the same name as it was.  The
metadata that describes a figure (state, enclosed fraction F, density level,
lattice resolution, tool version, ...) is built once by :func:`figure_metadata`
and then embedded in the picture in the way each format allows:

=======  ==================================================================
PNG      tEXt chunks: ``Title``, ``Software``, ``Description`` (short summary)
         and ``orbitalrender`` (the full metadata as JSON)
SVG      Dublin Core fields in ``<metadata>``: ``Title``, ``Creator``,
         ``Keywords`` (short summary) and ``Description`` (the JSON)
PDF      document information: ``Title``, ``Creator``, ``Keywords`` (short
         summary) and ``Subject`` (the JSON)
=======  ==================================================================

Output is deterministic: the same figure and metadata give the same bytes.  No
creation date is written (PDF ``CreationDate`` and SVG ``Date`` are removed),
the SVG id salt is fixed, and matplotlib's PNG writer stores no time stamp.

matplotlib is loaded only when a figure is saved, so the checks of output paths and
:data:`DPI_RANGE` cost no heavy import.
"""

from __future__ import annotations

import json
import math
import os
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from ..atomic import atomic_path, check_writable
from ..state.model import State

__all__ = [
    "FIGURE_SUFFIXES",
    "METADATA_KEY",
    "figure_metadata",
    "metadata_json",
    "save_figure",
    "write_report",
    "default_output_path",
    "figure_format",
    "state_metadata",
    "DPI_RANGE",
    "check_dpi",
    "check_output_paths",
]

#: Suffix -> matplotlib format name of the picture files we write.
FIGURE_SUFFIXES: dict[str, str] = {".png": "png", ".svg": "svg", ".pdf": "pdf"}
#: Name of the PNG text chunk that holds the full metadata as JSON.
METADATA_KEY = "orbitalrender"
#: Dots per inch accepted for raster output: below 10 nothing is legible, above 2400 a
#: 6.4 in figure is over 15000 px wide.
DPI_RANGE = (10.0, 2400.0)
#: Fixed salt for the ids matplotlib writes into SVG files (any constant string works).
_SVG_HASH_SALT = "orbitalrender"


def figure_format(path: str | os.PathLike) -> str:
    """The matplotlib format name for `path` from its suffix (case-insensitive).

    Raises
    ------
    ValueError
        For a suffix other than .png, .svg or .pdf; the message names the allowed ones.

    Examples
    --------
    >>> figure_format("a/b/2pz.SVG")
    'svg'
    """
    suffix = Path(path).suffix.lower()
    try:
        return FIGURE_SUFFIXES[suffix]
    except KeyError:
        shown = suffix or "no suffix"
        raise ValueError(f"cannot write {os.fspath(path)!r}: unknown picture format ({shown}); "
                         f"use one of {', '.join(FIGURE_SUFFIXES)}") from None


def _jsonable(value: Any) -> Any:
    """`value` with numpy scalars/arrays, tuples and complex numbers turned into JSON types.

    Complex numbers become ``[re, im]``; non-finite floats become None (JSON has no NaN).
    """
    if isinstance(value, Mapping):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return [_jsonable(v) for v in value.tolist()]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, complex):
        return [_jsonable(value.real), _jsonable(value.imag)]
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, os.PathLike):
        return os.fspath(value)
    raise TypeError(f"cannot store {type(value).__name__} in figure metadata")


def state_metadata(state: State) -> dict[str, Any]:
    """The state's label, terms (n, l, m, coefficient as [re, im], centre), Z, mu/m_e and time."""
    return {
        "state": state.label,
        "terms": [{"n": t.n, "l": t.l, "m": t.m, "coefficient": [t.coefficient.real, t.coefficient.imag],
                   "centre_a0": list(t.centre_a0)} for t in state.terms],
        "Z": state.Z,
        "reduced_mass_ratio": state.reduced_mass_ratio,
        "time_au": state.time_au,
    }


def figure_metadata(state: State | None, fraction: float | None = None, level: float | None = None,
                    resolution: int | None = None, **extra: Any) -> dict[str, Any]:
    """The metadata dict every command embeds in its figures and writes to its reports.

    Parameters
    ----------
    state : State or None
        The analytic state drawn, or None for a user field (then pass ``source=...`` in `extra`).
    fraction : float, optional
        Probability F the drawn surface or contour encloses (requested).
    level : float, optional
        The density level |psi|^2 of that surface or contour, a0^-3.
    resolution : int, optional
        Lattice points per axis, or pixels per side for a section.
    **extra
        Anything else worth recording (command, plane, units, fraction_enclosed, ...);
        values must be JSON-like (numbers, strings, lists, dicts, numpy values).

    Returns
    -------
    dict
        Keys ``tool``, ``version``, ``state``, ``terms``, ``Z``, ``reduced_mass_ratio``,
        ``time_au``, ``fraction``, ``level_a0^-3``, ``resolution``, then `extra`; only
        JSON types inside.

    Examples
    --------
    >>> from orbitalrender.state.model import eigenstate
    >>> md = figure_metadata(eigenstate(2, 1, 0, label="2pz"), 0.9, 1.2e-3, 64, command="section")
    >>> md["state"], md["fraction"], md["resolution"], md["command"]
    ('2pz', 0.9, 64, 'section')
    """
    from .. import __version__

    md: dict[str, Any] = {"tool": "orbitalrender", "version": __version__}
    if state is not None:
        md.update(state_metadata(state))
    else:
        md["state"] = None
    md["fraction"] = fraction
    md["level_a0^-3"] = level
    md["resolution"] = resolution
    md.update(extra)
    return _jsonable(md)


def check_dpi(dpi: float) -> float:
    """`dpi` as float, or ValueError unless it lies in ``DPI_RANGE``."""
    lo, hi = DPI_RANGE
    if not lo <= dpi <= hi:
        raise ValueError(f"dots per inch must be {lo:g} to {hi:g}, got {dpi:g}")
    return float(dpi)


def check_output_paths(out: str | os.PathLike | None, report: str | os.PathLike | None = None) -> Path | None:
    """Before any work: the picture path has a known suffix and a writable folder, and so has the
    report's; returns `out` as a Path (None stays None)."""
    if report is not None:
        check_writable(report)
    if out is None:
        return None
    figure_format(out)
    return check_writable(out)


def metadata_json(metadata: Mapping[str, Any]) -> str:
    """The metadata as compact, key-sorted JSON (the text embedded in pictures)."""
    return json.dumps(_jsonable(metadata), sort_keys=True, separators=(",", ":"))


def _summary(metadata: Mapping[str, Any]) -> str:
    """One line: state, F, level and resolution, as far as they are known."""
    parts = []
    for key, name in (("state", "state"), ("fraction", "F"), ("level_a0^-3", "level_a0^-3"),
                      ("resolution", "resolution")):
        value = metadata.get(key)
        if value is not None:
            parts.append(f"{name}={value:.6g}" if isinstance(value, float) else f"{name}={value}")
    return "; ".join(parts)


def _format_metadata(fmt: str, metadata: Mapping[str, Any]) -> dict[str, Any]:
    """The metadata dict in the shape matplotlib's writer for `fmt` accepts."""
    from .. import __version__

    title = str(metadata.get("state") or metadata.get("title") or "orbitalrender figure")
    creator = f"orbitalrender {__version__}"
    summary = _summary(metadata)
    text = metadata_json(metadata)
    if fmt == "png":
        return {"Title": title, "Software": creator, "Description": summary, METADATA_KEY: text}
    if fmt == "svg":
        return {"Title": title, "Creator": creator, "Keywords": summary, "Description": text,
                "Date": None}
    return {"Title": title, "Creator": creator, "Producer": creator, "Keywords": summary,
            "Subject": text, "CreationDate": None, "ModDate": None}


def save_figure(fig, path: str | os.PathLike, metadata: Mapping[str, Any],
                dpi: float | None = None, **savefig_kwargs: Any) -> Path:
    """Write `fig` to `path` (PNG, SVG or PDF from the suffix) with `metadata` embedded.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    path : str or path-like
        Target file; its folder must exist.  Written atomically: on any failure an
        earlier file at `path` is left untouched and no partial file remains.
    metadata : mapping
        Usually from :func:`figure_metadata`.
    dpi : float, optional
        Raster resolution (dots per inch); default the figure's own.
    **savefig_kwargs
        Passed on to ``fig.savefig`` (e.g. ``transparent=True``, ``bbox_inches="tight"``).

    Returns
    -------
    Path
        The path written.

    Raises
    ------
    ValueError
        For a suffix other than .png, .svg, .pdf.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> import matplotlib.figure
    >>> fig = matplotlib.figure.Figure(figsize=(1, 1))
    >>> out = save_figure(fig, pathlib.Path(tempfile.mkdtemp()) / "blank.png", {"state": "1s"})
    >>> out.stat().st_size > 0
    True
    """
    fmt = figure_format(path)
    info = _format_metadata(fmt, metadata)
    import matplotlib as mpl

    with mpl.rc_context({"svg.hashsalt": _SVG_HASH_SALT}), atomic_path(path) as tmp:
        fig.savefig(tmp, format=fmt, dpi=dpi if dpi is not None else "figure", metadata=info,
                    **savefig_kwargs)
    return Path(path)


def write_report(path: str | os.PathLike, metadata: Mapping[str, Any]) -> Path:
    """Write `metadata` as one JSON object (indented, keys sorted) to `path`, atomically.

    Examples
    --------
    >>> import json, tempfile, pathlib
    >>> p = write_report(pathlib.Path(tempfile.mkdtemp()) / "r.json", {"state": "1s", "fraction": 0.9})
    >>> json.loads(p.read_text())["fraction"]
    0.9
    """
    text = json.dumps(_jsonable(metadata), sort_keys=True, indent=2) + "\n"
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(path)


_UNSAFE = re.compile(r"[^A-Za-z0-9._+-]+")
#: Longest file-name stem derived from a label (well within the 255-byte limit of common file systems).
_MAX_STEM = 80


def default_output_path(label: str, kind: str, suffix: str = ".png") -> Path:
    """A file name in the current folder derived from a state label, e.g. ``2pz-section.png``.

    Runs of characters other than letters, digits, ``. _ + -`` become one ``_``; an
    empty label becomes ``state``; the stem is cut to 80 characters.

    Examples
    --------
    >>> default_output_path("1s@(0,0,-0.7) - 1s@(0,0,0.7)", "section").name
    '1s_0_0_-0.7_-_1s_0_0_0.7-section.png'
    >>> default_output_path("3,2,-1", "radial", ".svg").name
    '3_2_-1-radial.svg'
    """
    stem = _UNSAFE.sub("_", label).strip("_.") or "state"
    stem = re.sub(r"_+", "_", stem)[:_MAX_STEM].rstrip("_.")
    return Path(f"{stem}-{kind}{suffix}")
