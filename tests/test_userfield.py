"""User fields: round trip through .npz, .npy with given spacing, and clear refusals."""

from __future__ import annotations

import re
import zipfile

import numpy as np
import pytest

from orbitalrender.lattice import memory
from orbitalrender.lattice.grid import Lattice
from orbitalrender.lattice.memory import MemoryLimitError
from orbitalrender.lattice.sampler import sample
from orbitalrender.lattice.userfield import load_field, save_field
from orbitalrender.state.model import eigenstate


def _field(shape=(6, 5, 4), dtype=np.complex128, seed=0):
    rng = np.random.default_rng(seed)
    return (rng.normal(size=shape) + 1j * rng.normal(size=shape)).astype(dtype)


def test_npz_round_trip_keeps_values_spacing_and_origin(tmp_path):
    lat = sample(eigenstate(3, 2, 1), 12)
    path = save_field(tmp_path / "f.npz", lat)
    back = load_field(path)
    assert back.state is None
    assert back.values.dtype == np.complex64
    assert np.array_equal(back.values, lat.values)
    assert back.spacing_a0 == lat.spacing_a0 and back.origin_a0 == lat.origin_a0


def test_save_replaces_an_existing_file_only_when_complete(tmp_path):
    target = tmp_path / "f.npz"
    target.write_bytes(b"old")
    lat = Lattice(_field(), (0.0, 0.0, 0.0), (1.0, 1.0, 1.0))
    save_field(target, lat)
    assert np.array_equal(load_field(target).values, lat.values)
    assert [p.name for p in tmp_path.iterdir()] == ["f.npz"]  # no temporary left behind
    with pytest.raises(ValueError, match="npz"):
        save_field(tmp_path / "f.npy", lat)


def test_npy_needs_a_spacing_and_is_centred_by_default(tmp_path):
    path = tmp_path / "f.npy"
    np.save(path, _field((3, 5, 7)))
    with pytest.raises(ValueError, match="spacing is not known"):
        load_field(path)
    lat = load_field(path, spacing_a0=(0.5, 1.0, 2.0))
    assert lat.origin_a0 == (-0.5, -2.0, -6.0)
    lat = load_field(path, spacing_a0=0.5, origin_a0=(1, 2, 3))
    assert lat.origin_a0 == (1.0, 2.0, 3.0) and lat.spacing_a0 == (0.5, 0.5, 0.5)


def test_npz_keys_psi_and_scalar_spacing(tmp_path):
    path = tmp_path / "f.npz"
    np.savez(path, psi=_field(), spacing_a0=0.25)
    lat = load_field(path)
    assert lat.spacing_a0 == (0.25, 0.25, 0.25)
    assert load_field(path, spacing_a0=0.25).spacing_a0 == (0.25,) * 3
    with pytest.raises(ValueError, match=r"the file gives spacing_a0 = \[0.25\] but \[0.5\]"):
        load_field(path, spacing_a0=0.5)


def test_real_floats_are_taken_as_real_psi(tmp_path):
    path = tmp_path / "real.npy"
    np.save(path, np.linspace(-1, 1, 27, dtype=np.float32).reshape(3, 3, 3))
    lat = load_field(path, spacing_a0=1.0)
    assert lat.values.dtype == np.complex64 and not np.any(lat.values.imag)


@pytest.mark.parametrize("array,words", [
    (np.ones((3, 3, 3), dtype=np.int32), "dtype int32"),
    (np.ones((3, 3, 3), dtype=bool), "dtype bool"),
    (np.full((3, 3, 3), "a"), "dtype <U1"),
    (np.ones((4, 4), dtype=complex), "3D array"),
    (np.ones((4, 1, 4), dtype=complex), "at least 2 points"),
    (np.zeros((3, 3, 3), dtype=complex), "zero everywhere"),
])
def test_unusable_arrays_are_refused_naming_the_file(tmp_path, array, words):
    path = tmp_path / "bad.npy"
    np.save(path, array)
    with pytest.raises(ValueError, match=re.escape(words)) as err:
        load_field(path, spacing_a0=1.0)
    assert str(path) in str(err.value)


def test_object_arrays_are_refused_without_unpickling(tmp_path):
    path = tmp_path / "obj.npy"
    np.save(path, np.array([[[None, 1], [2, 3]], [[4, 5], [6, 7]]], dtype=object), allow_pickle=True)
    with pytest.raises(ValueError, match="dtype object"):
        load_field(path, spacing_a0=1.0)


def test_nan_and_inf_are_located(tmp_path):
    v = _field((4, 4, 4))
    v[2, 1, 3] = np.nan
    v[3, 3, 3] = np.inf
    path = tmp_path / "nan.npz"
    np.savez(path, values=v, spacing_a0=1.0)
    with pytest.raises(ValueError, match=re.escape("NaN or infinite at index (2, 1, 3) (2 such values)")):
        load_field(path)


@pytest.mark.parametrize("content", [b"", b"not a numpy file at all", b"\x93NUMPY\x01\x00garbage"])
def test_corrupt_files_are_refused(tmp_path, content):
    for suffix in (".npy", ".npz"):
        path = tmp_path / f"broken{suffix}"
        path.write_bytes(content)
        with pytest.raises(ValueError, match=re.escape(str(path))):
            load_field(path, spacing_a0=1.0)


def test_truncated_npy_is_refused(tmp_path):
    path = tmp_path / "cut.npy"
    np.save(path, _field((8, 8, 8)))
    path.write_bytes(path.read_bytes()[:-100])
    with pytest.raises(ValueError, match="cannot read"):
        load_field(path, spacing_a0=1.0)


def test_npz_without_values_lists_what_it_holds(tmp_path):
    path = tmp_path / "other.npz"
    np.savez(path, density=_field().real, spacing_a0=1.0)
    with pytest.raises(ValueError, match="no array named values or psi .found density, spacing_a0"):
        load_field(path)
    with zipfile.ZipFile(path) as zf:  # the file is a valid archive: only the content was wrong
        assert zf.testzip() is None


def test_missing_file_and_unknown_suffix(tmp_path):
    with pytest.raises(FileNotFoundError):
        load_field(tmp_path / "nothing.npz")
    other = tmp_path / "f.txt"
    other.write_text("1 2 3")
    with pytest.raises(ValueError, match="an .npy or .npz file"):
        load_field(other)


def test_too_large_a_field_is_refused_before_reading(tmp_path, monkeypatch):
    path = tmp_path / "big.npy"
    np.save(path, _field((20, 20, 20)))
    monkeypatch.setattr(memory, "available_bytes", lambda: 1000)
    monkeypatch.setattr(np, "load", lambda *a, **k: pytest.fail("the data was read"))
    with pytest.raises(MemoryLimitError, match="20x20x20"):
        load_field(path, spacing_a0=1.0)


@pytest.mark.parametrize("spacing", [0.0, -1.0, np.nan, (1.0, 2.0)])
def test_bad_spacing_is_refused(tmp_path, spacing):
    path = tmp_path / "f.npy"
    np.save(path, _field())
    with pytest.raises(ValueError, match="spacing_a0"):
        load_field(path, spacing_a0=spacing)
