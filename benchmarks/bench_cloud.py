"""Benchmark of the point sampler: exact draws from |psi|^2 against box rejection.

The cases: 1s, 3dz2, 4fxyz, |4 3 2>, sp3[1] and a two-centre pair.

* ours: :func:`orbitalrender.lattice.cloud.draw_cloud` (inverse CDF per term, mixture
  rejection for several terms; nothing cut off);
* baseline: the method drawn by hand: points uniform in the default box (which leaves
  out about 1e-4 of each term's probability), kept with probability |psi|^2 / max, the
  maximum taken from a 64^3 lattice of the same box (times 1.05 for the peak between
  lattice points; common practice, and still not a proven bound).

Both run in the same process; printed are the accepted fraction of each, the time per
accepted point of each (wall clock, best of --repeats) and their ratio.

Run:  python benchmarks/bench_cloud.py [--points 200000] [--repeats 2]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from orbitalrender.lattice.cloud import draw_cloud
from orbitalrender.lattice.sampler import default_box, sample
from orbitalrender.state.notation import parse_state

CASES = ["1s", "3dz2", "4fxyz", "4,3,2", "sp3[1]", "1s@(0,0,-0.7) + 1s@(0,0,0.7)"]
_BATCH = 1 << 18


def baseline(state, count: int, seed: int) -> tuple[np.ndarray, float]:
    """Box rejection: returns the points and the accepted fraction."""
    box = default_box(state)
    peak = float(sample(state, 64, box).density().max()) * 1.05
    lo = np.array(box.centre_a0) - box.half_width_a0
    rng = np.random.default_rng(seed)
    kept, tried, have = [], 0, 0
    while have < count:
        p = lo + rng.random((_BATCH, 3)) * (2 * box.half_width_a0)
        keep = rng.random(_BATCH) * peak < state.density(*p.T)
        kept.append(p[keep])
        have += int(keep.sum())
        tried += _BATCH
    return np.concatenate(kept)[:count], have / tried


def best_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=200_000)
    ap.add_argument("--repeats", type=int, default=2)
    args = ap.parse_args()
    n = args.points
    print(f"{n} points per case; wall-clock time per accepted point, best of {args.repeats}")
    print(f"{'state':32s} {'ours acc':>9s} {'box acc':>9s} {'ours us/pt':>11s} "
          f"{'box us/pt':>10s} {'box/ours':>9s}")
    for text in CASES:
        state = parse_state(text)
        draw_cloud(state, 1000, seed=0)  # build the inverse-CDF tables once
        ours_acc = draw_cloud(state, n, seed=1).accepted_fraction
        ours_t = best_time(lambda s=state: draw_cloud(s, n, seed=1), args.repeats)
        box_acc = baseline(state, n, 1)[1]
        box_t = best_time(lambda s=state: baseline(s, n, 1), args.repeats)
        print(f"{text:32s} {ours_acc:9.4f} {box_acc:9.4f} {1e6 * ours_t / n:11.2f} "
              f"{1e6 * box_t / n:10.2f} {box_t / ours_t:9.2f}")


if __name__ == "__main__":
    main()
