"""Benchmark of the lattice step: orbitalrender.sample against a hand-written numpy baseline.

The baseline is what a practitioner writes by hand: np.meshgrid over the whole box,
spherical coordinates (r, theta = arccos(z/r), phi = arctan2(y, x)),
scipy.special.eval_genlaguerre and scipy.special.sph_harm_y in float64, with the
normalisation from math.factorial.  Both fill the same box (default_box of the
state) at the same points.

Every case runs in a fresh subprocess.  Peak memory is read from the kernel: after
imports and set-up the peak resident set is reset (``echo 5 > /proc/self/clear_refs``)
and VmHWM is read when the lattice is complete, so the figure is the memory the
sampling itself needed, output array included.  It is printed relative to the size
of that method's own output array.

Times are the best of --repeats runs.  Both methods run on one thread, so the CPU time
of the process (user + system, ``time.process_time``, page faults included) is the
figure compared: on a shared machine the wall-clock time also counts the time the
process waited for a core.  Wall-clock times are printed beside it.

Run:  python benchmarks/bench_sampling.py [--sizes 128 200 256] [--repeats 3]
"""

from __future__ import annotations

import argparse
import json
import math
import subprocess
import sys
import time

from _proc import reset_peak, status_kib

STATES = ((3, 2, 0), (4, 3, 1))
METHODS = ("ours-complex64", "ours-complex128", "baseline")


def baseline(n: int, l: int, m: int, resolution: int, half_width_a0: float):
    """psi_nlm on the full box the usual way (Z = 1, infinite nuclear mass)."""
    import numpy as np
    from scipy.special import eval_genlaguerre, sph_harm_y

    ax = np.linspace(-half_width_a0, half_width_a0, resolution)
    x, y, z = np.meshgrid(ax, ax, ax, indexing="ij")
    r = np.sqrt(x**2 + y**2 + z**2)
    theta = np.arccos(np.divide(z, r, out=np.ones_like(r), where=r > 0))
    phi = np.arctan2(y, x)
    rho = 2.0 * r / n
    norm = math.sqrt((2.0 / n) ** 3 * math.factorial(n - l - 1) / (2 * n * math.factorial(n + l)))
    radial = norm * np.exp(-rho / 2) * rho**l * eval_genlaguerre(n - l - 1, 2 * l + 1, rho)
    return radial * sph_harm_y(l, m, theta, phi)


def run_case(method: str, n: int, l: int, m: int, resolution: int, repeats: int) -> dict:
    """Time one method in this process and measure its peak memory."""
    import numpy as np

    from orbitalrender.lattice.sampler import default_box, sample
    from orbitalrender.state.model import eigenstate

    state = eigenstate(n, l, m)
    half = default_box(state).half_width_a0
    if method == "baseline":
        def job(res):
            return baseline(n, l, m, res, half)
    else:
        dtype = np.complex64 if method.endswith("64") else np.complex128

        def job(res):
            return sample(state, res, dtype=dtype).values
    job(16)  # warm-up: imports, compiled code and caches outside the measurement
    cpu = wall = math.inf
    peak_extra = 0
    for _ in range(repeats):
        reset_peak()
        before = status_kib("VmRSS")
        c0, w0 = time.process_time(), time.perf_counter()
        out = job(resolution)
        cpu, wall = min(cpu, time.process_time() - c0), min(wall, time.perf_counter() - w0)
        peak_extra = max(peak_extra, (status_kib("VmHWM") - before) * 1024)
        out_bytes = out.nbytes
        del out
    return {"cpu_seconds": cpu, "wall_seconds": wall, "peak_bytes": peak_extra, "output_bytes": out_bytes}


def agreement(n: int, l: int, m: int, resolution: int) -> float:
    """max |ours - baseline| / max |baseline| on the same points (complex128 lattice)."""
    import numpy as np

    from orbitalrender.lattice.sampler import default_box, sample
    from orbitalrender.state.model import eigenstate

    state = eigenstate(n, l, m)
    ours = sample(state, resolution, dtype=np.complex128).values
    ref = baseline(n, l, m, resolution, default_box(state).half_width_a0)
    return float(np.max(np.abs(ours - ref)) / np.max(np.abs(ref)))


def _subprocess(args: list[str]) -> dict:
    done = subprocess.run([sys.executable, __file__, *args], capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[128, 200, 256])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--case", nargs=5, metavar=("METHOD", "N", "L", "M", "RES"), help=argparse.SUPPRESS)
    parser.add_argument("--agree", nargs=4, metavar=("N", "L", "M", "RES"), type=int, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.case:
        method, *numbers = args.case
        print(json.dumps(run_case(method, *map(int, numbers), args.repeats)))
        return
    if args.agree:
        print(json.dumps({"max_relative_difference": agreement(*args.agree)}))
        return
    print(f"lattice sampling, best of {args.repeats}; peak = memory the sampling needed "
          "(VmHWM after a reset), relative to the method's own output array")
    header = (f"{'state':>9} {'N':>4} | {'method':>16} {'cpu ns/pt':>9} {'wall ns/pt':>10} {'peak MiB':>9} "
              f"{'peak/out':>8} | {'speed-up':>8}")
    print(header)
    print("-" * len(header))
    for n, l, m in STATES:
        for res in args.sizes:
            rows = {meth: _subprocess(["--case", meth, str(n), str(l), str(m), str(res),
                                       "--repeats", str(args.repeats)]) for meth in METHODS}
            base = rows["baseline"]["cpu_seconds"]
            for meth, row in rows.items():
                speed = f"{base / row['cpu_seconds']:7.1f}x" if meth != "baseline" else "    1.0x"
                print(f"{f'({n},{l},{m})':>9} {res:>4} | {meth:>16} {row['cpu_seconds'] / res**3 * 1e9:9.1f} "
                      f"{row['wall_seconds'] / res**3 * 1e9:10.1f} {row['peak_bytes'] / 2**20:9.1f} "
                      f"{row['peak_bytes'] / row['output_bytes']:8.2f} | {speed}")
            diff = _subprocess(["--agree", str(n), str(l), str(m), str(res)])["max_relative_difference"]
            print(f"{'':>9} {'':>4} | max |ours - baseline| / max |baseline| = {diff:.2e}")
    print()
    print("targets: speed-up (CPU time) >= 10x at N = 256; ours-complex64 peak/out <= 1.5")


if __name__ == "__main__":
    main()
