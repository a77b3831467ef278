"""Benchmark of the surface step end to end: state -> closed mesh with psi at every vertex.

Ours: ``extract_surface(eigenstate(n, l, m), F, resolution=N)`` (symmetric complex64
sampling, level by quadrature, signed-field marching cubes, vertices projected onto the
exact surface, exact psi and normals at the vertices).

Baseline, what a practitioner writes by hand on the same box (the cube ours picks for
F, :func:`orbitalrender.surface.extract.surface_box`) and the same N: the whole-box
float64 scipy evaluation of ``bench_sampling.baseline`` (meshgrid, eval_genlaguerre, sph_harm_y), |psi|^2,
``np.sort`` of all densities and a cumulative sum times the voxel volume for the level,
skimage marching cubes on the density, and psi at the vertices from the same scipy
formulas.

Every case runs in a fresh subprocess.  Peak memory: after imports and a warm-up the
kernel's peak resident set is reset (``echo 5 > /proc/self/clear_refs``) and VmHWM is
read at the end, so the figure is what the pipeline needed above the resident set it
started from.  Time is CPU time of the process (``time.process_time``): both run on
one thread, and on a shared machine wall-clock time also counts waiting for a core;
wall-clock is printed beside it.

The fraction error is the TRUE enclosed probability at each method's level minus F,
the probability computed by the independent reference quadrature of
tests/test_level.py (sympy R_nl, numpy Legendre polynomials, scipy quad), which is
not the rule either method used.

Run:  python benchmarks/bench_surface.py [--sizes 200 256] [--fraction 0.9]
"""

from __future__ import annotations

import argparse
import json
import math
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from _proc import reset_peak, status_kib  # noqa: E402
from bench_sampling import baseline  # noqa: E402

STATES = ((3, 2, 0), (4, 3, 1))
METHODS = ("ours", "baseline")


def _baseline_vertex_psi(n: int, l: int, m: int, verts):
    """psi at the vertices with the formulas of bench_sampling.baseline."""
    import numpy as np
    from scipy.special import eval_genlaguerre, sph_harm_y

    x, y, z = verts.T
    r = np.sqrt(x * x + y * y + z * z)
    theta = np.arccos(np.divide(z, r, out=np.ones_like(r), where=r > 0))
    rho = 2.0 * r / n
    norm = math.sqrt((2.0 / n) ** 3 * math.factorial(n - l - 1) / (2 * n * math.factorial(n + l)))
    radial = norm * np.exp(-rho / 2) * rho**l * eval_genlaguerre(n - l - 1, 2 * l + 1, rho)
    return radial * sph_harm_y(l, m, theta, np.arctan2(y, x))


def baseline_surface(n: int, l: int, m: int, resolution: int, half_width_a0: float, fraction: float):
    """Level by sorting every lattice density, marching cubes on |psi|^2."""
    import numpy as np
    from skimage.measure import marching_cubes

    psi = baseline(n, l, m, resolution, half_width_a0)
    density = np.abs(psi) ** 2
    del psi
    h = 2.0 * half_width_a0 / (resolution - 1)
    ordered = np.sort(density, axis=None)[::-1]
    cumulative = np.cumsum(ordered) * h**3
    level = float(ordered[min(int(np.searchsorted(cumulative, fraction)), ordered.size - 1)])
    del ordered, cumulative
    verts, faces, normals, _ = marching_cubes(density, level, spacing=(h, h, h),
                                              gradient_direction="ascent")
    verts = verts - half_width_a0
    return level, verts, faces, _baseline_vertex_psi(n, l, m, verts)


def run_case(method: str, n: int, l: int, m: int, resolution: int, fraction: float) -> dict:
    import numpy as np

    from orbitalrender.state.model import eigenstate
    from orbitalrender.surface.extract import extract_surface, surface_box
    from orbitalrender.surface.level import level_for_fraction
    from orbitalrender.surface.model import Surface
    from orbitalrender.surface.topology import topology

    state = eigenstate(n, l, m)
    # the baseline gets the cube ours chooses for this F (set-up, outside the timing), so
    # that both mesh the same lattice points
    half = surface_box(state, level_for_fraction(state, fraction).level, resolution).half_width_a0

    def job(res):
        if method == "ours":
            s = extract_surface(state, fraction, resolution=res)
            return s.level, s.vertices_a0, s.faces, s.psi
        return baseline_surface(n, l, m, res, half, fraction)

    job(24)  # warm-up: imports, compiled code and caches outside the measurement
    reset_peak()
    before = status_kib("VmRSS")
    c0, w0 = time.process_time(), time.perf_counter()
    level, verts, faces, psi = job(resolution)
    cpu, wall = time.process_time() - c0, time.perf_counter() - w0
    peak = (status_kib("VmHWM") - before) * 1024
    faces = np.asarray(faces, dtype=np.int64)
    surf = Surface(np.asarray(verts, float), faces, np.zeros_like(verts, dtype=float), psi, level,
                   fraction, None, None, (resolution,) * 3, (1.0, 1.0, 1.0))
    topo = topology(surf)
    return {"cpu_seconds": cpu, "wall_seconds": wall, "peak_bytes": peak, "level": level,
            "vertices": len(verts), "components": topo.components, "closed": topo.closed,
            "genus": list(topo.genus)}


def true_fraction(n: int, l: int, m: int, level: float) -> float:
    """P(|psi|^2 >= level) by the independent reference quadrature of tests/test_level.py
    (sympy R_nl, numpy Legendre polynomials, adaptive scipy quad), not by the rule that
    produced our level."""
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
    from test_level import _reference

    return _reference(n, l, m)(level)


def _subprocess(args: list[str]) -> dict:
    done = subprocess.run([sys.executable, __file__, *args], capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[200, 256])
    parser.add_argument("--fraction", type=float, default=0.9)
    parser.add_argument("--case", nargs=5, metavar=("METHOD", "N", "L", "M", "RES"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.case:
        method, *numbers = args.case
        print(json.dumps(run_case(method, *map(int, numbers), args.fraction)))
        return
    F = args.fraction
    print(f"state -> closed mesh with vertex psi, F = {F}; CPU time; peak = VmHWM above the "
          "starting resident set (after a reset); fraction error = true P(level) - F")
    header = (f"{'state':>9} {'N':>4} | {'method':>8} {'cpu s':>7} {'wall s':>7} {'peak MiB':>9} "
              f"{'vertices':>9} {'parts':>5} {'closed':>6} {'fraction error':>14}")
    print(header)
    print("-" * len(header))
    for n, l, m in STATES:
        for res in args.sizes:
            rows = {meth: _subprocess(["--case", meth, str(n), str(l), str(m), str(res),
                                       "--fraction", str(F)]) for meth in METHODS}
            for meth, row in rows.items():
                err = true_fraction(n, l, m, row["level"]) - F
                row["fraction_error"] = err
                print(f"{f'({n},{l},{m})':>9} {res:>4} | {meth:>8} {row['cpu_seconds']:7.2f} "
                      f"{row['wall_seconds']:7.2f} {row['peak_bytes'] / 2**20:9.1f} {row['vertices']:9d} "
                      f"{row['components']:5d} {str(row['closed']):>6} {err:+14.2e}")
            ours, base = rows["ours"], rows["baseline"]
            print(f"{'':>9} {'':>4} | ours vs baseline: {base['cpu_seconds'] / ours['cpu_seconds']:.1f}x "
                  f"faster (CPU), {ours['peak_bytes'] / base['peak_bytes']:.2f} of the peak memory, "
                  f"|fraction error| {abs(ours['fraction_error']):.1e} vs {abs(base['fraction_error']):.1e}")
    print()
    print("targets: >= 5x faster, <= 0.5 of the peak memory, smaller fraction error")


if __name__ == "__main__":
    main()
