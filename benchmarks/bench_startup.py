"""Start-up time of the command line: whole processes, against ``python -c "import numpy"``.

Runs ``python -m orbitalrender --help``, ``python -m orbitalrender figure --help`` and
the baseline in turn (alternating, so a change in the machine's load touches all
three alike), ROUNDS times each, and prints the medians and their ratios to the
baseline.  Target: each ratio at most 2.5 (the command line should start about as
fast as numpy imports: its --help loads nothing heavier).

    python benchmarks/bench_startup.py [ROUNDS]
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
#: Runs of each command (our choice: medians of 15 settle within a few per cent on a quiet machine).
ROUNDS = 15
COMMANDS = {
    "import numpy": [sys.executable, "-c", "import numpy"],
    "orbitalrender --help": [sys.executable, "-m", "orbitalrender", "--help"],
    "orbitalrender figure --help": [sys.executable, "-m", "orbitalrender", "figure", "--help"],
}


def _seconds(argv: list[str]) -> float:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    t0 = time.perf_counter()
    subprocess.run(argv, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, check=True)
    return time.perf_counter() - t0


def main(rounds: int = ROUNDS) -> dict[str, float]:
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for argv in COMMANDS.values():  # one warm-up run each (file cache, .pyc files)
        _seconds(argv)
    for _ in range(rounds):
        for name, argv in COMMANDS.items():
            times[name].append(_seconds(argv))
    medians = {name: statistics.median(t) for name, t in times.items()}
    base = medians["import numpy"]
    for name, m in medians.items():
        print(f"{name:32s} median {1000 * m:7.1f} ms   ratio to import numpy {m / base:5.2f}")
    return medians


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else ROUNDS)
