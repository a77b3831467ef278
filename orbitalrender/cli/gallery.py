"""``orbitalrender gallery``: make every output of a TOML gallery config (gallery step).

The config is validated completely before anything is computed or written; then
:func:`orbitalrender.gallery.runner.run_gallery` does the work with progress on
stderr.  Exit status 0 when every output was made; 2 for an invalid config or
when every failed output failed because of its input; 1 otherwise.
"""

from __future__ import annotations

import argparse
import contextlib
import math
import signal
import sys
import threading

from ..gallery.cache import DEFAULT_LIMIT_BYTES
from ..gallery.runner import CACHE_FOLDER, default_jobs, run_gallery

__all__ = ["register", "run"]

_GIB = 1024**3


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a number of at least 1, got {value}")
    return value


def _positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if not (value > 0 and math.isfinite(value)):
        raise argparse.ArgumentTypeError(f"expected a positive finite number, got {text}")
    return value


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``gallery`` subcommand."""
    p = subparsers.add_parser(
        "gallery", help="make all figures and meshes listed in a TOML gallery config",
        description="Make every output listed in CONFIG (a TOML file; see docs/guide.md) in the "
                    "folder --out, each with its JSON report, and an index.html page.  Lattices, "
                    "levels and surfaces are cached, so a second run after a change of style "
                    "only draws.")
    p.add_argument("config", metavar="CONFIG", help="the gallery config (.toml)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (created if missing)")
    p.add_argument("--jobs", type=_positive_int, default=None, metavar="N",
                   help=f"worker processes (default min(2, cores) = {default_jobs()} here)")
    p.add_argument("--no-cache", action="store_true",
                   help="neither read nor keep the cache (shared work is still done once per run)")
    p.add_argument("--cache-dir", default=None, metavar="DIR",
                   help=f"cache folder (default DIR/{CACHE_FOLDER} inside --out)")
    p.add_argument("--cache-limit-gib", type=_positive_float, default=DEFAULT_LIMIT_BYTES / _GIB,
                   metavar="GIB", help="size bound of the cache; least recently used entries go first "
                                       f"(default {DEFAULT_LIMIT_BYTES / _GIB:g})")
    p.add_argument("--resolution-cap", type=_positive_int, default=None, metavar="N",
                   help="draft mode: at most N lattice points per axis (and section pixels)")
    p.add_argument("--size-cap", type=_positive_int, default=None, metavar="PX",
                   help="draft mode: at most PX pixels per side of any picture")
    p.add_argument("--quiet", action="store_true", help="no progress lines")
    p.set_defaults(run=run)


class _Terminated(BaseException):
    """SIGTERM arrived: unwinds like an interrupt, so the run stops its workers and removes
    their temporary files (a BaseException, so no ``except Exception`` swallows it)."""


def _terminate(signum, frame) -> None:
    raise _Terminated


@contextlib.contextmanager
def _sigterm_unwinds():
    if threading.current_thread() is not threading.main_thread():  # only the main thread may
        yield  # set handlers; a caller in another thread keeps its own
        return
    previous = signal.signal(signal.SIGTERM, _terminate)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def run(args: argparse.Namespace) -> int:
    """Run the gallery and report what was made.  SIGTERM ends it as Ctrl-C does, with status
    143 (128 + SIGTERM, the shells' convention)."""
    try:
        with _sigterm_unwinds():
            result = run_gallery(args.config, args.out, jobs=args.jobs, use_cache=not args.no_cache,
                                 cache_dir=args.cache_dir, cache_limit_bytes=int(args.cache_limit_gib * _GIB),
                                 resolution_cap=args.resolution_cap, size_cap_px=args.size_cap,
                                 progress=None if args.quiet else sys.stderr)
    except _Terminated:
        print("orbitalrender gallery: terminated", file=sys.stderr)
        return 128 + signal.SIGTERM
    made = len(result.records) - len(result.failed)
    for note in result.stats.notes:
        print(f"orbitalrender gallery: warning: {note}", file=sys.stderr)
    kept = f" ({result.stats.kept} unchanged, kept)" if result.stats.kept else ""
    print(f"made {made} of {len(result.records)} outputs{kept} in {result.out_dir} in "
          f"{result.seconds:.1f} s; index: {result.index_path}")
    if not result.failed:
        return 0
    for rec in result.failed:
        print(f"orbitalrender gallery: error: output '{rec.spec.name}' ({rec.spec.file}): {rec.error}",
              file=sys.stderr)
    return 2 if all(rec.user_error for rec in result.failed) else 1
