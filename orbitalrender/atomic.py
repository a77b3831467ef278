"""Safe file output: every output of one run is written under a temporary name and renamed with the rest.

One mechanism serves every command and the gallery:

- :func:`atomic_path` yields a temporary name beside a target.  Outside an output
  set the temporary replaces the target as soon as the block completes.
- :func:`output_set` groups the writes of one run: each :func:`atomic_path` inside it
  writes its temporary, and only when the whole set is complete are all of them
  renamed onto their targets; if anything fails, every temporary is removed and the
  earlier files are left as they were.  Files of an earlier run of the same set that
  this run no longer writes (``FILE_part3.stl`` when there are now two parts) are
  removed after the renames (:func:`retire_siblings`).
- Before any work, :func:`check_writable` and :func:`check_distinct_outputs` refuse a
  target whose folder is missing or read-only, a target that is a symbolic link
  (orbitalrender does not replace a link the user made with a regular file), a target
  that leaves the output folder through a link (``root``), and two outputs of one run
  that are the same file.

Temporary names are ``.NAME.XXXXXXXX.partSUFFIX`` with NAME shortened so that the
whole name fits the file system's limit on name length (``os.pathconf`` PC_NAME_MAX).
"""

from __future__ import annotations

import contextlib
import contextvars
import os
import re
import tempfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

from .errors import UserInputError

__all__ = ["atomic_path", "check_writable", "check_distinct_outputs", "check_outputs_inside",
           "output_set", "pending_path", "retire_siblings", "resolve_inside"]

#: Name-length limit when the file system does not say (the common limit of ext4, XFS, APFS, NTFS).
_DEFAULT_NAME_MAX = 255
#: Characters that tempfile.mkstemp adds between the prefix and the suffix.
_RANDOM_CHARS = 8
_PART = ".part"


@dataclass
class _Set:
    """The writes of one output set: target -> temporary, and sibling families to tidy."""

    pending: dict[Path, Path] = field(default_factory=dict)
    families: list[tuple[Path, re.Pattern]] = field(default_factory=list)


_ACTIVE: contextvars.ContextVar[_Set | None] = contextvars.ContextVar("orbitalrender_output_set",
                                                                      default=None)


def _identity(path: str | os.PathLike) -> Path:
    """The file that `path` names, with symbolic links, ``./`` and ``..`` of its folders resolved."""
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    return Path(os.path.realpath(folder)) / p.name


def resolve_inside(root: str | os.PathLike, relative: str | os.PathLike) -> Path:
    """``root / relative`` with links resolved, or UserInputError if it lies outside `root`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> resolve_inside(d, "a/b.png") == pathlib.Path(d.resolve(), "a", "b.png")
    True
    """
    base = Path(os.path.realpath(root))
    target = Path(os.path.realpath(Path(root) / relative))
    if target != base and base not in target.parents:
        raise UserInputError(f"{Path(root) / relative} leads outside the output folder {root} "
                             f"(to {target}, through a symbolic link); remove the link or choose "
                             "another name")
    return target


def check_writable(path: str | os.PathLike, *, root: str | os.PathLike | None = None) -> Path:
    """Return `path` as a Path, or raise before any work is done if it cannot be written.

    The folder must exist, be a folder and be writable; `path` must not be a folder or a
    symbolic link, and its name must fit the file system's limit; with `root`, the file
    (links resolved) must lie inside `root`.

    Raises
    ------
    FileNotFoundError, NotADirectoryError, IsADirectoryError, PermissionError
        Naming the path and what is wrong with it.
    UserInputError
        For a symbolic link at `path`, or a path that leaves `root`.
    """
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    limit = _name_max(folder) if folder.is_dir() else _DEFAULT_NAME_MAX
    if len(p.name.encode()) > limit:
        raise UserInputError(f"cannot write {p}: the file name is {len(p.name.encode())} bytes long and "
                             f"this file system allows at most {limit}")
    if p.is_symlink():
        raise UserInputError(f"{p} is a symbolic link (to {os.readlink(p)}); orbitalrender does not "
                             "replace a link with a file: write to the link's target by its own name, "
                             "or remove the link")
    if p.is_dir():
        raise IsADirectoryError(f"{p} is a folder, not a file name")
    if folder.exists() and not folder.is_dir():
        raise NotADirectoryError(f"cannot write {p}: {folder} is a file, not a folder")
    if not folder.is_dir():
        raise FileNotFoundError(f"cannot write {p}: folder {folder} does not exist")
    if not os.access(folder, os.W_OK):
        raise PermissionError(f"cannot write {p}: folder {folder} is not writable")
    if root is not None:
        resolve_inside(root, os.path.relpath(_identity(p), os.path.realpath(root)))
    return p


def check_distinct_outputs(paths: Iterable[str | os.PathLike | None]) -> None:
    """UserInputError if two of `paths` (None entries are skipped) are the same file.

    Paths are compared after resolving symbolic links of their folders, ``./`` and ``..``,
    so ``same.png`` and ``./x/../same.png`` are one file.

    Examples
    --------
    >>> check_distinct_outputs(["a.png", "a.png.json", None])
    >>> try:
    ...     check_distinct_outputs(["a.png", "./a.png"])
    ... except ValueError as exc:
    ...     print(str(exc)[:45])
    two outputs of this run are the same file: 'a
    """
    seen: dict[Path, str] = {}
    for path in paths:
        if path is None:
            continue
        key = _identity(path)
        if key in seen:
            raise UserInputError(f"two outputs of this run are the same file: {seen[key]!r} and "
                                 f"{os.fspath(path)!r}; give each output its own name")
        seen[key] = os.fspath(path)


def check_outputs_inside(root: str | os.PathLike, relatives: Iterable[str]) -> None:
    """Before any work: every ``root / relative`` stays inside `root` once links are resolved,
    is not itself a symbolic link, and no two of them are the same file (UserInputError).

    Folders that do not exist yet are fine (they are made inside `root`).
    """
    names = list(relatives)
    for rel in names:
        resolve_inside(root, rel)
        p = Path(root) / rel
        if p.is_symlink():
            check_writable(p)  # says what the link is and why it is not replaced
    check_distinct_outputs(Path(os.path.realpath(Path(root) / rel)) for rel in names)


def _name_max(folder: Path) -> int:
    try:
        return int(os.pathconf(folder, "PC_NAME_MAX"))
    except (OSError, ValueError, AttributeError):  # no such query on this system
        return _DEFAULT_NAME_MAX


def _temporary(target: Path) -> Path:
    """A new empty file beside `target` whose name fits the folder's name-length limit."""
    folder = target.parent if str(target.parent) else Path(".")
    suffix = _PART + target.suffix
    room = _name_max(folder) - len(f"..{suffix}".encode()) - _RANDOM_CHARS
    stem = target.name.encode()[:max(room, 0)].decode(errors="ignore")
    fd, name = tempfile.mkstemp(prefix=f".{stem}.", suffix=suffix, dir=folder)
    os.close(fd)
    tmp = Path(name)
    os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; give the file the usual permissions
    return tmp


def _umask() -> int:
    """The process's file-creation mask (reading it means setting it; it is set back at once)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike, *, join_set: bool = True) -> Iterator[Path]:
    """Yield a temporary path in the target's folder; on success it replaces `path`.

    If the block raises, the temporary file is removed and an existing file at `path`
    is left as it was.  Inside an :func:`output_set` (and with `join_set`) the rename
    waits until the whole set is complete; ``join_set=False`` is for files that must be
    readable at once, such as cache entries.

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
    batch = _ACTIVE.get() if join_set else None
    key = _identity(target)
    if batch is not None and key in batch.pending:
        raise UserInputError(f"two outputs of this run are the same file: {target}; give each output "
                             "its own name")
    tmp = _temporary(target)
    try:
        yield tmp
        if batch is None:
            os.replace(tmp, target)
        else:
            batch.pending[key] = tmp
    finally:
        if (batch is None or batch.pending.get(key) != tmp) and tmp.exists():
            tmp.unlink()


def pending_path(path: str | os.PathLike) -> Path:
    """Where the newest content of `path` is: the temporary of a write of the active output
    set that is waiting to be renamed onto `path`, else `path` itself."""
    batch = _ACTIVE.get()
    pending = batch.pending.get(_identity(path)) if batch is not None else None
    return pending if pending is not None else Path(path)


def retire_siblings(main: str | os.PathLike, pattern: str) -> None:
    """In the active output set, remove at commit the files beside `main` whose names match
    `pattern` (a regular expression over the whole name) and that the set did not write.

    Outside an output set this does nothing: there is no run to compare with.
    """
    batch = _ACTIVE.get()
    if batch is not None:
        batch.families.append((_identity(main).parent, re.compile(pattern)))


def _commit(batch: _Set) -> None:
    for target, tmp in batch.pending.items():
        os.replace(tmp, target)
    written = set(batch.pending)
    for folder, pattern in batch.families:
        for entry in folder.iterdir():
            if pattern.fullmatch(entry.name) and folder / entry.name not in written \
                    and (entry.is_file() or entry.is_symlink()):
                entry.unlink()


@contextlib.contextmanager
def output_set() -> Iterator[None]:
    """Replace all files written through :func:`atomic_path` in the block together, or none.

    Every temporary is complete before the first rename; on any failure in the block all
    temporaries are removed and the earlier files stay.  Nested sets join the outer one.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with output_set():
    ...     with atomic_path(d / "a.txt") as tmp:
    ...         _ = tmp.write_text("picture")
    ...     (d / "a.txt").exists()
    False
    >>> (d / "a.txt").read_text()
    'picture'
    """
    if _ACTIVE.get() is not None:
        yield
        return
    batch = _Set()
    token = _ACTIVE.set(batch)
    try:
        yield
        _ACTIVE.reset(token)
        token = None
        _commit(batch)
    finally:
        if token is not None:
            _ACTIVE.reset(token)
        for tmp in batch.pending.values():
            if tmp.exists():
                tmp.unlink()
