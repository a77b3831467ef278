"""Gallery step, the cache folder: whose files it holds, who uses it, its temporaries and its size bound.

A cache folder is recognised by its marker file (:data:`MARKER`) and by the names
of what the cache writes in it: entries ``KIND/<sha256>.npz`` or ``.json`` (KIND
one of :data:`CACHE_KINDS`) and, while one is being written, its temporary
``KIND/.<sha256>.<suffix>.<random>.part.<suffix>`` (the names
:func:`orbitalrender.atomic.atomic_path` gives).  A folder that holds anything else
is refused before any work (:class:`ForeignCacheError`): the cache never deletes a
file it did not write.

The marker file is also a lock.  Every run holds a shared ``flock`` on it for its
whole length; a run that can take the lock exclusively is the only user, and only
then are temporaries left by a killed run removed (a live run's temporaries are
never touched).  The same holds for an output folder (:func:`output_folder`),
whose lock file sits in its ``.index`` folder, and for the scratch folders of
runs without a cache (:func:`scratch_folder`).

:func:`evict` removes least recently used entries, and nothing else, until the
entries and the temporaries together are within the bound.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import tempfile
from collections.abc import Iterable, Iterator
from pathlib import Path

try:  # POSIX; elsewhere runs are not told apart and temporaries are kept
    import fcntl
except ImportError:  # pragma: no cover - not on Linux
    fcntl = None

from ..errors import UserInputError

__all__ = ["CACHE_KINDS", "MARKER", "ForeignCacheError", "CacheFolder", "open_folder", "evict",
           "output_folder", "scratch_folder", "is_entry_name", "is_temporary_name"]

CACHE_KINDS = ("lattice", "level", "surface")
#: Marker and lock file of a cache folder.
MARKER = "orbitalrender-cache"
_MARKER_TEXT = ("This folder is a cache of orbitalrender gallery runs. The gallery deletes the "
                "entries in it when the folder outgrows its size bound; keep no other files here.\n")
_ENTRY = re.compile(r"[0-9a-f]{64}\.(?:npz|json)")
# atomic_path's temporary: "." + target name + "." + mkstemp's random part + ".part" + suffix
_TEMPORARY = r"\.{name}\.[A-Za-z0-9_]+\.part{suffix}"
_ENTRY_TEMPORARY = re.compile(_TEMPORARY.format(name=r"[0-9a-f]{64}\.(?:npz|json)",
                                                suffix=r"\.(?:npz|json)"))
#: Lock file of an output folder, inside its thumbnail folder.
_OUTPUT_LOCK = ".lock"
_SCRATCH_PREFIX = "orbitalrender-scratch-"
_SCRATCH_LOCK = ".lock"


class ForeignCacheError(UserInputError):
    """A cache folder that holds files the cache did not write."""


def is_entry_name(name: str) -> bool:
    """True for the name of a cache entry: a sha256 in hex and ``.npz`` or ``.json``.

    Examples
    --------
    >>> is_entry_name("a" * 64 + ".npz"), is_entry_name("notes.txt")
    (True, False)
    """
    return _ENTRY.fullmatch(name) is not None


def is_temporary_name(name: str) -> bool:
    """True for the temporary name of a cache entry being written.

    Examples
    --------
    >>> is_temporary_name("." + "a" * 64 + ".npz.x1_z9k2q.part.npz"), is_temporary_name(".notes.part")
    (True, False)
    """
    return _ENTRY_TEMPORARY.fullmatch(name) is not None


def _foreign(folder: Path) -> str | None:
    """The first file or folder in `folder` that the cache did not write, relative to it, or None."""
    for item in sorted(folder.iterdir()):
        if item.name == MARKER and item.is_file() and not item.is_symlink():
            continue
        if item.name in CACHE_KINDS and item.is_dir() and not item.is_symlink():
            for sub in sorted(item.iterdir()):
                if not (sub.is_file() and not sub.is_symlink()
                        and (is_entry_name(sub.name) or is_temporary_name(sub.name))):
                    return f"{item.name}/{sub.name}"
            continue
        return item.name
    return None


def _lock(path: Path):
    """Open `path` (created if missing) and hold a shared lock on it; returns (file, exclusive):
    `exclusive` is True if no other process held it, so this run may clean up."""
    fh = open(path, "a+b")  # noqa: SIM115 - held for the run, closed by the caller
    if fcntl is None:  # pragma: no cover - not on POSIX
        return fh, False
    try:
        fcntl.flock(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
        return fh, True
    except BlockingIOError:
        fcntl.flock(fh, fcntl.LOCK_SH)
        return fh, False


def _share(fh) -> None:
    if fcntl is not None:
        fcntl.flock(fh, fcntl.LOCK_SH)


def _alone(fh) -> bool:
    """Try to hold `fh`'s lock exclusively (then keep it so until it is shared again)."""
    if fcntl is None:  # pragma: no cover - not on POSIX
        return False
    try:
        fcntl.flock(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        # Linux drops the shared lock before it tries the exclusive one: take it again
        _share(fh)
        return False
    return True


def _probe(fh) -> bool:
    """True if `fh` could be locked exclusively (no live run holds it); the lock is kept."""
    try:
        fcntl.flock(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        return False
    return True


def _remove_all(paths: Iterable[Path]) -> int:
    removed = 0
    for p in paths:
        with contextlib.suppress(FileNotFoundError):
            p.unlink()
            removed += 1
    return removed


class CacheFolder:
    """A cache folder in use by this run: its path, its lock, and the clean-up of temporaries.

    Made by :func:`open_folder`; `close` releases the lock.
    """

    def __init__(self, folder: Path, lock, exclusive: bool):
        self.folder = folder
        self._lock = lock
        self.cleaned = self.clean_temporaries() if exclusive else 0
        _share(lock)

    def temporaries(self) -> list[Path]:
        return [p for kind in CACHE_KINDS if (self.folder / kind).is_dir()
                for p in (self.folder / kind).iterdir() if is_temporary_name(p.name)]

    def clean_temporaries(self) -> int:
        """Remove temporaries of entries; call only while no other run uses the folder."""
        return _remove_all(self.temporaries())

    def clean_if_alone(self) -> int:
        """Remove temporaries if no other run holds the folder now (after workers were stopped)."""
        if not _alone(self._lock):
            return 0
        try:
            return self.clean_temporaries()
        finally:
            _share(self._lock)

    def close(self) -> None:
        self._lock.close()


def open_folder(folder: str | os.PathLike) -> CacheFolder:
    """Create or check a cache folder and hold its lock; temporaries of killed runs are removed.

    Raises
    ------
    ForeignCacheError
        If the folder holds a file or folder that the cache did not write.
    """
    path = Path(folder)
    if path.exists() and not path.is_dir():
        raise ForeignCacheError(f"cache folder {path} is a file, not a folder")
    path.mkdir(parents=True, exist_ok=True)
    stranger = _foreign(path)
    if stranger is not None:
        raise ForeignCacheError(
            f"cache folder {path} holds {stranger}, which the cache did not write; give an empty "
            "folder or one the gallery made as its cache")
    marker = path / MARKER
    if not marker.exists() or marker.stat().st_size == 0:
        marker.write_text(_MARKER_TEXT, encoding="utf-8")
    fh, exclusive = _lock(marker)
    return CacheFolder(path, fh, exclusive)


def _entries(folder: Path) -> list[tuple[int, int, Path]]:
    found = []
    for kind in CACHE_KINDS:
        sub = folder / kind
        if sub.is_dir():
            for p in sub.iterdir():
                if is_entry_name(p.name) or is_temporary_name(p.name):
                    with contextlib.suppress(FileNotFoundError):
                        st = p.stat()
                        found.append((st.st_mtime_ns, st.st_size, p))
    return found


def evict(folder: Path | None, limit_bytes: int) -> int:
    """Remove least recently used entries until entries and temporaries hold at most `limit_bytes`.

    Only entries are removed (temporaries belong to a writer and count against the
    bound); files with other names are never touched.  Returns the number removed.
    """
    if folder is None or not folder.is_dir():
        return 0
    found = _entries(folder)
    total = sum(size for _, size, _ in found)
    removed = 0
    for _, size, p in sorted(found, key=lambda e: (e[0], e[2].name)):
        if total <= limit_bytes:
            break
        if is_entry_name(p.name):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()
                removed += 1
            total -= size
    return removed


def _output_temporaries(out_dir: Path, files: Iterable[str]) -> list[Path]:
    """Temporaries that atomic_path may have left for the given files of an output folder."""
    found = []
    for rel in files:
        target = out_dir / rel
        if target.parent.is_dir():
            pattern = re.compile(_TEMPORARY.format(name=re.escape(target.name),
                                                   suffix=re.escape(target.suffix)))
            found += [p for p in target.parent.iterdir() if pattern.fullmatch(p.name)]
    return found


@contextlib.contextmanager
def output_folder(out_dir: Path, index_folder: str, files: Iterable[str]) -> Iterator[callable]:
    """Hold the lock of an output folder for a run; yields a function that removes the
    temporaries of `files` (paths relative to it) if no other run uses the folder.

    The temporaries of a run that was killed are removed on entry, when this run is alone.
    """
    files = list(files)
    lock_dir = out_dir / index_folder
    lock_dir.mkdir(parents=True, exist_ok=True)
    fh, exclusive = _lock(lock_dir / _OUTPUT_LOCK)

    def clean() -> int:
        if not _alone(fh):
            return 0
        try:
            return _remove_all(_output_temporaries(out_dir, files))
        finally:
            _share(fh)

    try:
        if exclusive:
            _remove_all(_output_temporaries(out_dir, files))
        _share(fh)
        yield clean
    finally:
        fh.close()


@contextlib.contextmanager
def scratch_folder() -> Iterator[Path]:
    """A temporary cache folder for one run, removed afterwards; scratch folders of runs
    that were killed (their lock is free) are removed first."""
    root = Path(tempfile.gettempdir())
    for old in root.glob(_SCRATCH_PREFIX + "*"):
        lock = old / _SCRATCH_LOCK
        if old.is_dir() and not old.is_symlink() and lock.is_file() and old.stat().st_uid == os.getuid():
            with open(lock, "rb") as fh:
                if fcntl is not None and _probe(fh):
                    shutil.rmtree(old, ignore_errors=True)
    path = Path(tempfile.mkdtemp(prefix=_SCRATCH_PREFIX))
    fh, _ = _lock(path / _SCRATCH_LOCK)
    try:
        yield path
    finally:
        shutil.rmtree(path, ignore_errors=True)
        fh.close()
