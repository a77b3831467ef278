"""Gallery step, rerun records: which outputs were made before from the same inputs and are intact.

After an output is made, a record is written beside its thumbnail
(``OUT_DIR/.index/FILE.record.json``): the sha256 of everything that decides its
bytes (:func:`output_key`) and the sha256 of each file it wrote (the output, its
report, its thumbnail).  A later run leaves the output alone when both still
agree: same key, and every file present with the recorded hash.  So a rerun with
nothing changed draws nothing, while any of these makes the output again:

- its config entry, the ``[defaults]`` it takes, the draft caps, or a user field
  file's content (its sha256, not its time stamp);
- the version of orbitalrender or of a library that draws (numpy, matplotlib, ...);
- the source code of the package (every module: the output's steps, the gallery's
  own code and the command defaults it reads);
- the output file, its report or its thumbnail edited, replaced or deleted.
"""

from __future__ import annotations

import hashlib
import json
from functools import cache
from importlib import metadata
from pathlib import Path
from typing import Any

from ..atomic import atomic_path
from .cache import canonical_json, file_sha256, state_key
from .config import OutputSpec

__all__ = ["RECORD_FORMAT", "output_key", "record_path", "read_record", "write_record"]

#: Bumped when the content of a record changes.
RECORD_FORMAT = 1
_PACKAGE = Path(__file__).resolve().parent.parent
#: Libraries whose version can change the bytes of an output.
_LIBRARIES = ("numpy", "scipy", "scikit-image", "matplotlib", "pillow", "trimesh", "numba", "manifold3d")


@cache
def _code_version() -> str:
    """sha256 of every source file of the package, with its path."""
    h = hashlib.sha256()
    for src in sorted(_PACKAGE.rglob("*.py")):
        h.update(src.relative_to(_PACKAGE).as_posix().encode())
        h.update(src.read_bytes())
    return h.hexdigest()


@cache
def _library_versions() -> dict[str, str]:
    found = {}
    for name in _LIBRARIES:
        try:
            found[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            found[name] = "absent"
    return found


def output_key(spec: OutputSpec, caps: tuple, field_sha256: str | None = None) -> str:
    """sha256 of what decides the files of `spec` under the draft `caps`.

    Examples
    --------
    >>> from orbitalrender.gallery.config import parse_config
    >>> cfg = parse_config({"outputs": [{"name": "a", "kind": "radial", "states": ["1s"]}]})
    >>> a = output_key(cfg.outputs[0], (None, None))
    >>> a == output_key(cfg.outputs[0], (None, None)), a == output_key(cfg.outputs[0], (32, None))
    (True, False)
    """
    from .. import __version__

    text = canonical_json({
        "format": RECORD_FORMAT, "version": __version__, "code": _code_version(),
        "libraries": _library_versions(), "name": spec.name, "kind": spec.kind, "file": spec.file,
        "options": spec.options, "caps": list(caps), "field_sha256": field_sha256,
        "states": [{**state_key(s), "label": s.label} for s in spec.states],
    })
    return hashlib.sha256(text.encode()).hexdigest()


def record_path(out_dir: Path, index_folder: str, spec: OutputSpec) -> Path:
    return out_dir / index_folder / (spec.file + ".record.json")


def read_record(path: Path, key: str, out_dir: Path) -> dict[str, Any] | None:
    """The record at `path` if it was made with `key` and every file it names is intact, else None."""
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
        if record.get("format") != RECORD_FORMAT or record.get("key") != key:
            return None
        files = record["files"]
        for rel, sha in files.items():
            if file_sha256(out_dir / rel) != sha:
                return None
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return None
    return record


def write_record(path: Path, key: str, out_dir: Path, files: list[Path]) -> None:
    """Record `key` and the sha256 of `files` (inside `out_dir`)."""
    hashes = {p.relative_to(out_dir).as_posix(): file_sha256(p) for p in files}
    path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_path(path) as tmp:
        tmp.write_text(canonical_json({"format": RECORD_FORMAT, "key": key, "files": hashes}) + "\n",
                       encoding="utf-8")
