"""Benchmark of gallery reruns, whole processes: first run, rerun with nothing changed, rerun
after a change of style.

The config (written here) looks like a small version of the demo galleries: a single
figure, a layout of the n = 2 shell, a cross-section, a radial plot and a mesh, at
lattice resolution 64.  Three runs of ``python -m orbitalrender gallery`` into one
output folder, each a fresh process timed by wall clock:

1. first run, empty output folder and cache;
2. the same config again: every output is unchanged, so none is drawn and nothing is
   read from the cache (the target: at most a third of the first run);
3. the config with another phase colour map: the pictures that show phase are drawn
   again from cached surfaces, and no lattice is computed.

Printed per run: wall time, its ratio to the first run, and the counts of the index
page (outputs drawn / kept, lattices, levels and surfaces computed / loaded); then
whether the unchanged rerun left every output byte-identical.

Run:  python benchmarks/bench_gallery_rerun.py [--resolution 64] [--jobs 2]
"""

from __future__ import annotations

import argparse
import os
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]

CONFIG = """
title = "Bramblecombe fair, table 3 (benchmark copy)"
[defaults]
fraction = 0.9
resolution = {resolution}
phase_map = "{phase_map}"

[[outputs]]
name = "dz2"
kind = "figure"
state = "3dz2"
width_px = 700
height_px = 600

[[outputs]]
name = "shell2"
kind = "layout"
states = ["2s", "2px", "2py", "2pz"]

[[outputs]]
name = "cut"
kind = "section"
state = "3,2,1"
plane = "xz"

[[outputs]]
name = "radial"
kind = "radial"
states = ["1s", "2s", "3s"]

[[outputs]]
name = "ring"
kind = "mesh"
state = "2,1,1"
file = "ring.glb"
"""


def _run(cfg: Path, out: Path, jobs: int) -> float:
    env = {**os.environ, "MPLBACKEND": "Agg"}
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "orbitalrender", "gallery", str(cfg), "--out", str(out),
                    "--jobs", str(jobs), "--quiet"], cwd=REPO, env=env, check=True,
                   stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


def _counts(out: Path) -> str:
    text = (out / "index.html").read_text(encoding="utf-8")
    found = re.search(r"This run: (.*?)\.</p>", text)
    return found.group(1) if found else "?"


def _outputs(out: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(out.iterdir()) if p.is_file() and p.name != "index.html"}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--resolution", type=int, default=64)
    parser.add_argument("--jobs", type=int, default=2)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="bench-gallery-") as tmp:
        cfg, out = Path(tmp) / "fair.toml", Path(tmp) / "out"
        cfg.write_text(CONFIG.format(resolution=args.resolution, phase_map="uniform"), encoding="utf-8")
        first = _run(cfg, out, args.jobs)
        print(f"first run          {first:6.1f} s  1.00   {_counts(out)}")
        made = _outputs(out)
        same = _run(cfg, out, args.jobs)
        print(f"unchanged rerun    {same:6.1f} s  {same / first:.2f}   {_counts(out)}")
        identical = _outputs(out) == made
        cfg.write_text(CONFIG.format(resolution=args.resolution, phase_map="cvd"), encoding="utf-8")
        styled = _run(cfg, out, args.jobs)
        print(f"rerun, new colours {styled:6.1f} s  {styled / first:.2f}   {_counts(out)}")
        print(f"unchanged rerun left every output byte-identical: {identical}")


if __name__ == "__main__":
    main()
