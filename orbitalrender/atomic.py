"""Safe file output: write to a temporary name beside the target, rename when complete."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

__all__ = ["atomic_path", "check_writable"]


def check_writable(path: str | os.PathLike) -> Path:
    """Return `path` as a Path, or raise PermissionError/FileNotFoundError naming it, before any
    work is done: its folder must exist and be writable, and the path must not be a folder."""
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    if p.is_dir():
        raise IsADirectoryError(f"{p} is a folder, not a file name")
    if not folder.is_dir():
        raise FileNotFoundError(f"cannot write {p}: folder {folder} does not exist")
    if not os.access(folder, os.W_OK):
        raise PermissionError(f"cannot write {p}: folder {folder} is not writable")
    return p


def _umask() -> int:
    """The process's file-creation mask (reading it means setting it; it is set back at once)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path in the target's folder; on success rename it onto `path`.

    If the block raises, the temporary file is removed and an existing file at `path`
    is left as it was.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_path(d / "a.txt") as tmp:
    ...     _ = tmp.write_text("done")
    >>> (d / "a.txt").read_text()
    'done'
    """
    target = check_writable(path)
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part" + target.suffix,
                                    dir=target.parent if str(target.parent) else ".")
    os.close(fd)
    tmp = Path(tmp_name)
    os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; give the file the usual permissions
    try:
        yield tmp
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()
