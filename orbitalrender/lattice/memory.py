"""Memory estimates made before any large allocation, and the refusal that follows."""

from __future__ import annotations

import os

import numpy as np

__all__ = ["MemoryLimitError", "available_bytes", "sampling_bytes", "largest_resolution",
           "require_lattice_memory", "require_bytes"]

# Bytes per lattice point that the sampler needs on top of the output array:
# the octant (1/8 of the output) plus the chunk temporaries, which are bounded
# by the chunk size, not by N (see sampler._CHUNK_POINTS).
_OCTANT_FRACTION = 0.125
_SAFETY = 0.8  # use at most 80 % of what the operating system says is free (common practice)


class MemoryLimitError(MemoryError):
    """A request that would not fit in memory, refused before allocating."""


def available_bytes() -> int:
    """Memory the system can give this process now (MemAvailable on Linux)."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return int(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_AVPHYS_PAGES"))


def sampling_bytes(resolution: int, dtype=np.complex64, chunk_bytes: int = 0) -> int:
    """Peak bytes to sample an N^3 lattice of `dtype`, output included."""
    item = np.dtype(dtype).itemsize
    return int(resolution**3 * item * (1.0 + _OCTANT_FRACTION) + chunk_bytes)


def largest_resolution(budget_bytes: int, bytes_for=sampling_bytes, **kwargs) -> int:
    """Largest N with bytes_for(N, **kwargs) <= budget_bytes."""
    lo, hi = 2, 2
    while bytes_for(hi * 2, **kwargs) <= budget_bytes:
        hi *= 2
    hi *= 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if bytes_for(mid, **kwargs) <= budget_bytes:
            lo = mid
        else:
            hi = mid
    return lo


def require_lattice_memory(resolution: int, dtype=np.complex64, chunk_bytes: int = 0,
                           extra_bytes_per_point: float = 0.0) -> None:
    """Raise MemoryLimitError, naming the estimate and the largest N that fits, if an
    N^3 lattice (plus `extra_bytes_per_point` for later steps) would not fit now."""

    def need(n: int, dtype=dtype, chunk_bytes=chunk_bytes) -> int:
        return sampling_bytes(n, dtype, chunk_bytes) + int(extra_bytes_per_point * n**3)

    budget = int(available_bytes() * _SAFETY)
    needed = need(resolution)
    if needed > budget:
        largest = largest_resolution(budget, need)
        raise MemoryLimitError(
            f"a {resolution}^3 lattice needs about {needed / 2**30:.1f} GiB but only "
            f"{budget / 2**30:.1f} GiB can be used; the largest resolution that fits is {largest}")


def require_bytes(needed_bytes: int, what: str) -> None:
    """Raise MemoryLimitError, naming `what` and the estimate, if `needed_bytes` would not fit now."""
    budget = int(available_bytes() * _SAFETY)
    if needed_bytes > budget:
        raise MemoryLimitError(
            f"{what} needs about {needed_bytes / 2**30:.1f} GiB but only "
            f"{budget / 2**30:.1f} GiB can be used")
