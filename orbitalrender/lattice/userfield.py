"""User fields for the lattice step: load psi on a regular grid from .npy/.npz, and save it back.

File layouts
------------
``.npy``
    One 3D array, index order (x, y, z).  The spacing (a0) must be given by the
    caller; the origin (a0, coordinates of ``values[0, 0, 0]``) may be, and by
    default the grid is centred on (0, 0, 0).
``.npz``
    ``values`` (or ``psi``): the 3D array; ``spacing_a0``: a scalar or three
    numbers; ``origin_a0`` (optional): three numbers.  :func:`save_field` writes
    this layout.

Accepted values: complex arrays (complex64 stays complex64, wider types become
complex128) and real floating-point arrays, which are taken as a real psi whose
phase is 0 or pi (float32 and narrower become complex64, wider become complex128).
Integer, boolean, object and string arrays are refused, as are NaN or infinite
values and an all-zero field.  Files are read with ``allow_pickle=False``, so
loading never runs code from the file.
"""

from __future__ import annotations

import math
import os
import zipfile
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from ..atomic import atomic_path
from .grid import Lattice
from .memory import require_bytes

__all__ = ["load_field", "save_field", "check_field_values", "VALUE_KEYS"]

#: Names under which an .npz file may hold the array, in order of preference.
VALUE_KEYS = ("values", "psi")
_READ_ERRORS = (ValueError, OSError, EOFError, zipfile.BadZipFile, KeyError)


def _complex_dtype(dtype: np.dtype, where: str) -> np.dtype:
    """The complex dtype a field of `dtype` is held in, or ValueError."""
    if dtype.kind == "c":
        return np.dtype(np.complex64 if dtype.itemsize <= 8 else np.complex128)
    if dtype.kind == "f":
        return np.dtype(np.complex64 if dtype.itemsize <= 4 else np.complex128)
    raise ValueError(f"{where}: psi must be a complex (or real floating-point) array, got dtype {dtype}")


def _check_header(shape: tuple[int, ...], dtype: np.dtype, where: str) -> np.dtype:
    """Check shape and dtype before reading the data; require the memory; return the target dtype."""
    if len(shape) != 3:
        raise ValueError(f"{where}: psi must be a 3D array (x, y, z), got shape {shape}")
    if min(shape) < 2:
        raise ValueError(f"{where}: psi needs at least 2 points per axis, got shape {shape}")
    target = _complex_dtype(dtype, where)
    copies = target.itemsize + (dtype.itemsize if dtype != target else 0)
    require_bytes(math.prod(shape) * copies, f"loading {where} ({'x'.join(map(str, shape))})")
    return target


def _npy_header(handle) -> tuple[tuple[int, ...], np.dtype]:
    """Shape and dtype from the header of an .npy stream, without reading the data."""
    version = np.lib.format.read_magic(handle)
    read = {(1, 0): np.lib.format.read_array_header_1_0,
            (2, 0): np.lib.format.read_array_header_2_0}.get(version)
    if read is None:
        raise ValueError(f"unsupported .npy format version {version}")
    shape, _, dtype = read(handle)
    return tuple(shape), np.dtype(dtype)


def _vector3(value, name: str, where: str) -> tuple[float, float, float]:
    try:
        v = np.broadcast_to(np.asarray(value, dtype=float), (3,))
    except (ValueError, TypeError):
        raise ValueError(f"{where}: {name} must be one number or three, got {value!r}") from None
    if not np.all(np.isfinite(v)):
        raise ValueError(f"{where}: {name} must be finite, got {v.tolist()}")
    return tuple(float(c) for c in v)


def _merge(from_file, from_caller, name: str, where: str):
    """The file's value, or the caller's; refuse two different ones."""
    if from_file is None:
        return from_caller
    if from_caller is not None and not np.allclose(_vector3(from_file, name, where),
                                                   _vector3(from_caller, name, where)):
        raise ValueError(f"{where}: the file gives {name} = {np.ravel(from_file).tolist()} "
                         f"but {np.ravel(from_caller).tolist()} was asked for")
    return from_file


def _read_npy(path: Path, where: str):
    with open(path, "rb") as fh:
        shape, dtype = _npy_header(fh)
    target = _check_header(shape, dtype, where)
    return np.load(path, allow_pickle=False), target, None, None


def _read_npz(path: Path, where: str):
    with zipfile.ZipFile(path) as zf:
        names = {Path(n).stem: n for n in zf.namelist()}
        key = next((k for k in VALUE_KEYS if k in names), None)
        if key is None:
            raise ValueError(f"{where}: no array named {' or '.join(VALUE_KEYS)} "
                             f"(found {', '.join(sorted(names)) or 'nothing'})")
        with zf.open(names[key]) as fh:
            shape, dtype = _npy_header(fh)
    target = _check_header(shape, dtype, where)
    with np.load(path, allow_pickle=False) as data:
        values = data[key]
        spacing = data["spacing_a0"] if "spacing_a0" in data.files else None
        origin = data["origin_a0"] if "origin_a0" in data.files else None
    return values, target, spacing, origin


def load_field(path: str | os.PathLike, spacing_a0: float | Sequence[float] | None = None,
               origin_a0: Sequence[float] | None = None) -> Lattice:
    """Read a user's psi on a regular grid into a :class:`Lattice` (``state=None``).

    Parameters
    ----------
    path : path-like
        An ``.npy`` or ``.npz`` file (see the module docstring for the layout).
    spacing_a0 : float or 3 floats, optional
        Grid steps (a0); required for ``.npy``, and for ``.npz`` files without
        ``spacing_a0``.  If both the file and the caller give one they must agree.
    origin_a0 : 3 floats, optional
        Coordinates (a0) of ``values[0, 0, 0]``; by default from the file, else
        the grid is centred on the origin.

    Returns
    -------
    Lattice

    Raises
    ------
    ValueError
        Naming the file and what is wrong: unreadable or corrupt, not 3D, not
        complex or real floating point, NaN/inf (with the index of the first), all zero.
    MemoryLimitError
        If the field would not fit in memory (checked from the header, before reading).
    FileNotFoundError
        If there is no such file.

    Examples
    --------
    >>> import numpy as np, tempfile, pathlib
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "blob.npy"
    >>> np.save(f, np.ones((4, 4, 4), dtype=np.complex64))
    >>> lat = load_field(f, spacing_a0=0.5)
    >>> lat.shape, lat.origin_a0
    ((4, 4, 4), (-0.75, -0.75, -0.75))
    """
    p = Path(path)
    where = str(p)
    if not p.exists():
        raise FileNotFoundError(f"{where}: no such file")
    if not p.is_file():
        raise ValueError(f"{where}: not a regular file (a field must be an .npy or .npz file)")
    suffix = p.suffix.lower()
    readers = {".npy": _read_npy, ".npz": _read_npz}
    if suffix not in readers:
        raise ValueError(f"{where}: a field must be an .npy or .npz file")
    try:
        values, target, file_spacing, file_origin = readers[suffix](p, where)
    except _READ_ERRORS as exc:
        if str(exc).startswith(where):
            raise
        raise ValueError(f"{where}: cannot read the file as {suffix} ({type(exc).__name__}: {exc})") from None
    spacing = _merge(file_spacing, spacing_a0, "spacing_a0", where)
    if spacing is None:
        raise ValueError(f"{where}: the grid spacing is not known; give spacing_a0")
    spacing = _vector3(spacing, "spacing_a0", where)
    if min(spacing) <= 0:
        raise ValueError(f"{where}: spacing_a0 must be positive, got {list(spacing)}")
    origin = _merge(file_origin, origin_a0, "origin_a0", where)
    if origin is None:
        origin = tuple(-0.5 * h * (n - 1) for h, n in zip(spacing, values.shape))
    origin = _vector3(origin, "origin_a0", where)
    values = np.asarray(values, dtype=target)
    check_field_values(values, where)
    return Lattice(values, origin, spacing, None)


def check_field_values(values: np.ndarray, where: str) -> None:
    """Raise ValueError if `values` has a NaN or infinity (naming the index of the first)
    or is zero everywhere; `where` starts the message.

    Examples
    --------
    >>> check_field_values(np.array([[[1.0, np.nan]]]), "f.npy")
    Traceback (most recent call last):
    ...
    ValueError: f.npy: psi is NaN or infinite at index (0, 0, 1) (1 such values)
    """
    finite = np.isfinite(values)
    if not finite.all():
        first = tuple(int(i) for i in np.unravel_index(int(np.argmin(finite)), values.shape))
        raise ValueError(f"{where}: psi is NaN or infinite at index {first} "
                         f"({int(finite.size - np.count_nonzero(finite))} such values)")
    del finite
    if not np.any(values):
        raise ValueError(f"{where}: psi is zero everywhere")


def save_field(path: str | os.PathLike, lattice: Lattice) -> Path:
    """Write a lattice as an ``.npz`` field (``values``, ``spacing_a0``, ``origin_a0``).

    The file is written through :func:`orbitalrender.atomic.atomic_path`, so an
    existing file is replaced only once the new one is complete.

    Returns
    -------
    Path
        The path written.

    Examples
    --------
    >>> import numpy as np, tempfile, pathlib
    >>> from orbitalrender.lattice.grid import Lattice
    >>> lat = Lattice(np.ones((3, 3, 3), complex), (0.0, 0.0, 0.0), (0.2, 0.2, 0.2))
    >>> f = save_field(pathlib.Path(tempfile.mkdtemp()) / "copy.npz", lat)
    >>> load_field(f).spacing_a0
    (0.2, 0.2, 0.2)
    """
    target = Path(path)
    if target.suffix.lower() != ".npz":
        raise ValueError(f"{target}: a saved field is an .npz file")
    with atomic_path(target) as tmp:
        with open(tmp, "wb") as fh:
            np.savez(fh, values=lattice.values, spacing_a0=np.asarray(lattice.spacing_a0),
                     origin_a0=np.asarray(lattice.origin_a0))
    return target
