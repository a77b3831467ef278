"""Benchmark of the lattice and surface steps at 512^3: time and peak memory of a big lattice.

Samples |4,3,1> (complex) on a 512^3 complex64 lattice, extracts the surface holding
90 %, and prints the wall time of each step, the peak resident memory (VmHWM of
/proc/self/status) after each, and the estimates of :mod:`orbitalrender.lattice.memory`
beside the measured growth, so the estimates can be checked against this machine.

Run:  python benchmarks/big_lattice.py [RESOLUTION] [STATE]
Not part of the test suite (it needs about 3 GiB and half a minute or more).
"""

from __future__ import annotations

import sys
import time

import numpy as np
from _proc import reset_peak, status_kib

from orbitalrender.lattice.memory import sampling_bytes, surface_bytes_per_point
from orbitalrender.lattice.sampler import sample
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import surface_at_level
from orbitalrender.surface.level import level_for_fraction

_MIB = 2**20


def main(resolution: int = 512, text: str = "4,3,1", fraction: float = 0.9) -> None:
    state = parse_state(text)
    dtype = np.complex64
    points = resolution**3
    print(f"state {text}, {resolution}^3 {np.dtype(dtype).name} lattice, F = {fraction:g}")
    print(f"baseline RSS {status_kib('VmRSS') / 1024:.0f} MiB")

    rss0 = status_kib("VmRSS") * 1024
    t0 = time.perf_counter()
    lattice = sample(state, resolution, dtype=dtype)
    t_sample = time.perf_counter() - t0
    hwm = status_kib("VmHWM") * 1024
    estimate = sampling_bytes(resolution, dtype)
    print(f"sample:  {t_sample:7.1f} s   peak RSS {hwm / _MIB:7.0f} MiB   "
          f"growth {(hwm - rss0) / _MIB:6.0f} MiB, estimate {estimate / _MIB:6.0f} MiB")

    t0 = time.perf_counter()
    level = level_for_fraction(lattice, fraction)
    t_level = time.perf_counter() - t0
    print(f"level:   {t_level:7.1f} s   (method {level.method}, enclosed {level.fraction_enclosed:.6f})")

    reset = reset_peak()
    rss1 = status_kib("VmRSS") * 1024
    t0 = time.perf_counter()
    surface = surface_at_level(lattice, level)
    t_surface = time.perf_counter() - t0
    hwm = status_kib("VmHWM") * 1024
    growth = hwm - rss1 if reset else float("nan")
    print(f"surface: {t_surface:7.1f} s   peak RSS {hwm / _MIB:7.0f} MiB   "
          f"growth {growth / _MIB:6.0f} MiB = {growth / points:.1f} B/point, "
          f"estimate {surface_bytes_per_point(dtype)} B/point"
          + ("" if reset else " (peak could not be reset: growth not measured)"))
    print(f"surface: {len(surface.vertices_a0)} vertices, {len(surface.faces)} faces, "
          f"level {surface.level:.4e} a0^-3")
    print(f"total {t_sample + t_level + t_surface:.1f} s; peak RSS of the run {hwm / 2**30:.2f} GiB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 512, sys.argv[2] if len(sys.argv) > 2 else "4,3,1")
