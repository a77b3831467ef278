"""Soak run of the gallery step: 50 outputs drawn one after another in one process.

Every output of a generated 50-output config (figures, layouts, sections, radial plots
and meshes of 25 different states, so the cache keeps filling) is prepared and drawn
in this process with :func:`orbitalrender.gallery.produce.make_request` and
:func:`orbitalrender.gallery.produce.make_output`, and the cache is trimmed to its
bound after each output, as a long run would.  After every 10 outputs it prints the
resident memory (VmRSS), its peak (VmHWM), the cache folder's size against its bound,
the number of open matplotlib figures and the in-process caches, so growth from
unclosed figures or unbounded caches of big arrays would show as RSS rising step by
step instead of levelling off.

Run:  python benchmarks/soak_gallery.py [OUTPUTS] [CACHE_LIMIT_MIB]
Not part of the test suite (a few minutes).
"""

from __future__ import annotations

import gc
import sys
import tempfile
import time
import tomllib
from pathlib import Path

import matplotlib.pyplot as plt
from _proc import status_kib

from orbitalrender.gallery.cache import DiskCache
from orbitalrender.gallery.config import parse_config
from orbitalrender.gallery.produce import Caps, make_output, make_request, requests_for
from orbitalrender.gallery.store import evict

_MIB = 2**20
_STATES = ["1s", "2s", "2pz", "2px", "2,1,1", "3s", "3pz", "3dz2", "3dxy", "3,2,1", "3,2,2", "3dx2-y2",
           "4s", "4pz", "4dz2", "4fz3", "4,3,1", "4fxyz", "5s", "5,4,2", "0.6*2,1,1 + 0.8*2,1,-1",
           "2s + 2pz", "3dz2 + 3s", "real(4,3,-2)", "5dz2"]
_KINDS = ["figure", "section", "mesh", "radial", "layout"]


def _config_text(count: int) -> str:
    """`count` outputs cycling through the kinds, each with its own state and fraction."""
    parts = ['title = "Soak run"\n\n[defaults]\nresolution = 64\nfraction = 0.9\n']
    for i in range(count):
        kind = _KINDS[i % len(_KINDS)]
        state = _STATES[i % len(_STATES)]
        fraction = 0.5 + 0.4 * ((i * 7) % 10) / 10
        lines = [f'[[outputs]]\nname = "out{i:02d}"\nkind = "{kind}"', f"fraction = {fraction:.2f}"]
        if kind == "radial":
            single = [s for s in _STATES if "+" not in s and "real" not in s]
            lines.append(f'states = ["{single[i % len(single)]}"]')
        elif kind == "layout":
            lines.append(f'states = ["{state}", "{_STATES[(i + 1) % len(_STATES)]}"]\npanel_px = 240')
        else:
            lines.append(f'state = "{state}"')
        if kind == "figure":
            lines.append("width_px = 480\nheight_px = 360")
        if kind == "section":
            lines.append("pixels = 256")
        parts.append("\n".join(lines) + "\n")
    return "\n".join(parts)


def _folder_bytes(folder: Path) -> int:
    return sum(p.stat().st_size for p in folder.rglob("*") if p.is_file())


def main(count: int = 50, cache_limit_mib: float = 64.0) -> None:
    config = parse_config(tomllib.loads(_config_text(count)), "soak.toml")
    limit = int(cache_limit_mib * _MIB)
    caps = Caps()
    with tempfile.TemporaryDirectory(prefix="orbitalrender-soak-") as scratch:
        out = Path(scratch) / "out"
        out.mkdir()
        cache = DiskCache(Path(scratch) / "cache", limit)
        cache.folder.mkdir()
        print(f"{count} outputs, cache bound {cache_limit_mib:g} MiB; start RSS "
              f"{status_kib('VmRSS') / 1024:.0f} MiB")
        print(" done  seconds   RSS MiB  peak MiB  cache MiB  figures  failed")
        t0 = time.perf_counter()
        failed = 0
        rss_at: list[float] = []
        for i, spec in enumerate(config.outputs, start=1):
            for req in requests_for(spec, caps):
                make_request(req, cache)
            record, _ = make_output(spec, out, cache, caps)
            if record.error is not None:
                failed += 1
                print(f"  {spec.name} failed: {record.error}")
            evict(cache.folder, cache.limit_bytes)
            if i % 10 == 0 or i == count:
                gc.collect()
                rss = status_kib("VmRSS") / 1024
                rss_at.append(rss)
                print(f"{i:5d} {time.perf_counter() - t0:9.1f} {rss:9.0f} {status_kib('VmHWM') / 1024:9.0f} "
                      f"{_folder_bytes(cache.folder) / _MIB:10.1f} {len(plt.get_fignums()):8d} {failed:7d}")
        steps = [b - a for a, b in zip(rss_at, rss_at[1:])]
        print(f"RSS change per 10 outputs after the first 10: {', '.join(f'{s:+.0f}' for s in steps)} MiB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 50, float(sys.argv[2]) if len(sys.argv) > 2 else 64.0)
