"""``orbitalrender gallery``: make every output of a TOML gallery config (gallery step).

The config is validated completely before anything is computed or written; then
:func:`orbitalrender.gallery.runner.run_gallery` does the work with progress on
stderr.  Exit status 0 when every output was made; 2 for an invalid config or
when every failed output failed because of its input; 1 otherwise.  The options
are those of :class:`orbitalrender.gallery.options.GalleryRunOptions`.
"""

from __future__ import annotations

import argparse
import contextlib
import signal
import sys
import threading

from ..gallery.options import GalleryRunOptions
from .common import add_command

__all__ = ["register", "run"]

_GIB = 1024**3


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``gallery`` subcommand."""
    p = add_command(
        subparsers, "gallery", GalleryRunOptions, run,
        help="make all figures and meshes listed in a TOML gallery config",
        description="Make every output listed in CONFIG (a TOML file; see docs/guide.md) in the "
                    "folder --out, each with its JSON report, and an index.html page.  Lattices, "
                    "levels and surfaces are cached, so a second run after a change of style "
                    "only draws.",
        preload=("orbitalrender.gallery.runner",))
    p.add_argument("config", metavar="CONFIG", help="the gallery config (.toml)")
    next(a for a in p._actions if a.dest == "out").required = True


class _Terminated(BaseException):
    """SIGTERM arrived: unwinds like an interrupt, so the run stops its workers and removes
    their temporary files (a BaseException, so no ``except Exception`` swallows it)."""

    #: the signal, sent again if the exception is dropped (see ``cli._keep_interrupt``)
    stop_signal = signal.SIGTERM


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


def run(options: GalleryRunOptions, args: argparse.Namespace) -> int:
    """Run the gallery and report what was made.  SIGTERM ends it as Ctrl-C does, with status
    143 (128 + SIGTERM, the shells' convention)."""
    from ..gallery.runner import run_gallery

    try:
        with _sigterm_unwinds():
            result = run_gallery(args.config, options.out, jobs=options.jobs, use_cache=options.cache,
                                 cache_dir=options.cache_dir,
                                 cache_limit_bytes=int(options.cache_limit_gib * _GIB),
                                 resolution_cap=options.resolution_cap, size_cap_px=options.size_cap,
                                 progress=None if options.quiet else sys.stderr)
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
