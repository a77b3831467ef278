"""Gallery step, the run's own options: workers, cache and draft caps (light; no heavy import).

The command line's ``gallery`` subcommand is generated from :class:`GalleryRunOptions`
as the other subcommands are from the jobs' options dataclasses.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from ..jobs.option import Options, option

__all__ = ["GalleryRunOptions", "CACHE_FOLDER", "DEFAULT_LIMIT_GIB", "default_jobs"]

#: Folder of the cache inside the output folder, unless another is given.
CACHE_FOLDER = ".cache"
#: Size bound of the cache, GiB (our choice: a few hundred surfaces at resolution 128).
DEFAULT_LIMIT_GIB = 2.0


def default_jobs() -> int:
    """min(2, number of usable cores)."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(2, cores))


@dataclass(frozen=True)
class GalleryRunOptions(Options):
    """How a gallery config is run (the gallery command)."""

    out: str | None = option(None, "output folder (created if missing)", type="text", metavar="DIR")
    jobs: int | None = option(None, "worker processes (default min(2, cores))", type="integer", lo=1,
                              metavar="N")
    cache: bool = option(True, "neither read nor keep the cache (shared work is still done once per run)",
                         type="bool")
    cache_dir: str | None = option(None, f"cache folder (default DIR/{CACHE_FOLDER} inside the output "
                                   "folder)", type="text", metavar="DIR")
    cache_limit_gib: float = option(DEFAULT_LIMIT_GIB, "size bound of the cache; least recently used "
                                    "entries go first", lo=0, lo_open=True, metavar="GIB")
    resolution_cap: int | None = option(None, "draft mode: at most N lattice points per axis (and "
                                        "section pixels)", type="integer", lo=1, metavar="N")
    size_cap: int | None = option(None, "draft mode: at most PX pixels per side of any picture",
                                  type="integer", lo=1, metavar="PX")
    quiet: bool = option(False, "no progress lines", type="bool")
