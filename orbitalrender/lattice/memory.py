"""Memory estimates made before any large allocation, and the refusal that follows."""

from __future__ import annotations

import os

import numpy as np

__all__ = ["MemoryLimitError", "available_bytes", "sampling_bytes", "largest_resolution",
           "require_lattice_memory", "require_bytes", "surface_bytes_per_point", "surface_bytes",
           "require_surface_memory", "usable_bytes", "GIB", "require_lattice_and_surface_memory",
           "amount"]

# Bytes per lattice point that the sampler may need on top of the output array: a
# margin of 1/8 of the output plus the chunk temporaries of the slab-by-slab path,
# which are bounded by the chunk size, not by N (see sampler._CHUNK_POINTS).  The
# symmetric path needs neither (benchmarks/bench_sampling.py measures 1.03x the
# output at N = 256), so the estimate errs on the safe side.
_OCTANT_FRACTION = 0.125
_SAFETY = 0.8  # use at most 80 % of what the operating system says is free (common practice)
# Work of the surface step per lattice point, beyond the lattice: the float32 field that
# marching cubes reads, plus at most one temporary as wide as the real part of the values
# (the density whose maximum fixes the phase, then the imaginary-part check).  An upper
# bound: itemsize + 4 B = 12 B (complex64) and 20 B (complex128) were measured with
# tracemalloc on the first version of the step; the current one peaks at 5.2-6.5 B
# (complex64) and 7.1 B (complex128) at 160^3, and benchmarks/big_lattice.py shows 5.2 B
# of RSS growth at 512^3.  Kept as the bound so a later change of the step stays covered.
_SURFACE_FIELD_BYTES = 4
#: Bytes in a GiB, for messages.
GIB = 2**30


def amount(size_bytes: float) -> str:
    """A memory size for messages: GiB from 0.1 GiB up, else MiB from 0.1 MiB up, else KiB.

    Examples
    --------
    >>> amount(21 * GIB), amount(40 * 2**20), amount(3 * 1024)
    ('21.0 GiB', '40.0 MiB', '3.0 KiB')
    """
    for unit, size in (("GiB", GIB), ("MiB", 2**20)):
        if size_bytes >= 0.1 * size:
            return f"{size_bytes / size:.1f} {unit}"
    return f"{size_bytes / 1024:.1f} KiB"


class MemoryLimitError(MemoryError):
    """A request that would not fit in memory, refused before allocating."""


def available_bytes() -> int:
    """Memory the system can give this process now: MemAvailable on Linux, or less when the
    process's address space is capped (``ulimit -v``, RLIMIT_AS: the cap less what the
    process has mapped, VmSize) or its control group has a memory limit (cgroup v2
    ``memory.max`` less ``memory.current``)."""
    free = _meminfo_available()
    return int(min([free] + [room for room in (_address_space_room(), _cgroup_room()) if room is not None]))


def _meminfo_available() -> int:
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return int(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_AVPHYS_PAGES"))


def _address_space_room() -> int | None:
    """RLIMIT_AS less the mapped address space (VmSize), or None without a cap."""
    try:
        import resource

        cap = resource.getrlimit(resource.RLIMIT_AS)[0]
        if cap == resource.RLIM_INFINITY:
            return None
        with open("/proc/self/status", encoding="ascii") as fh:
            mapped = next(int(ln.split()[1]) * 1024 for ln in fh if ln.startswith("VmSize:"))
    except (ImportError, OSError, StopIteration, ValueError):
        return None
    return max(cap - mapped, 0)


def _cgroup_room() -> int | None:
    """memory.max less memory.current of this process's cgroup (v2), or None without a limit."""
    try:
        with open("/proc/self/cgroup", encoding="ascii") as fh:
            path = next(ln.split(":", 2)[2].strip() for ln in fh if ln.startswith("0::"))
        folder = os.path.join("/sys/fs/cgroup", path.lstrip("/"))
        with open(os.path.join(folder, "memory.max"), encoding="ascii") as fh:
            limit = fh.read().strip()
        if limit == "max":
            return None
        with open(os.path.join(folder, "memory.current"), encoding="ascii") as fh:
            used = int(fh.read().strip())
    except (OSError, StopIteration, ValueError):
        return None
    return max(int(limit) - used, 0)


def sampling_bytes(resolution: int, dtype=np.complex64, chunk_bytes: int = 0) -> int:
    """Peak bytes to sample an N^3 lattice of `dtype`, output included."""
    item = np.dtype(dtype).itemsize
    return int(resolution**3 * item * (1.0 + _OCTANT_FRACTION) + chunk_bytes)


#: Smallest lattice worth suggesting: the 8 points per axis that the sampler accepts at
#: least (lattice/sampler.py check_resolution), which put about four points across a lobe.
_SMALLEST_USEFUL_RESOLUTION = 8


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


def surface_bytes_per_point(dtype=np.complex64) -> int:
    """Bytes per lattice point that the surface step needs on top of the lattice itself.

    Examples
    --------
    >>> surface_bytes_per_point(np.complex64), surface_bytes_per_point(np.complex128)
    (12, 20)
    """
    return np.dtype(dtype).itemsize + _SURFACE_FIELD_BYTES


def surface_bytes(shape: tuple[int, ...], dtype=np.complex64) -> int:
    """Peak bytes of the surface step on a lattice of `shape` and `dtype`, lattice excluded."""
    return int(np.prod(shape, dtype=np.float64) * surface_bytes_per_point(dtype))


def usable_bytes() -> int:
    """Memory a request may use now: a share of :func:`available_bytes`."""
    return int(available_bytes() * _SAFETY)


def require_surface_memory(shape: tuple[int, ...], dtype=np.complex64) -> None:
    """Raise MemoryLimitError if the surface step on an existing lattice would not fit now."""
    require_bytes(surface_bytes(shape, dtype),
                  f"the surface of a {'x'.join(map(str, shape))} lattice")


def require_lattice_memory(resolution: int, dtype=np.complex64, chunk_bytes: int = 0,
                           extra_bytes_per_point: float = 0.0, what: str = "lattice") -> None:
    """Raise MemoryLimitError, naming the estimate and the largest N that fits, if an
    N^3 lattice (plus `extra_bytes_per_point` for later steps) would not fit now.

    `what` names the request in the message, e.g. "lattice with its surface" with
    ``extra_bytes_per_point=surface_bytes_per_point(dtype)``.
    """

    def need(n: int, dtype=dtype, chunk_bytes=chunk_bytes) -> int:
        return sampling_bytes(n, dtype, chunk_bytes) + int(extra_bytes_per_point * n**3)

    budget = usable_bytes()
    needed = need(resolution)
    if needed > budget:
        largest = largest_resolution(budget, need)
        advice = (f"the largest resolution that fits is {largest}" if largest >= _SMALLEST_USEFUL_RESOLUTION
                  else f"even the smallest useful resolution, {_SMALLEST_USEFUL_RESOLUTION}, does not fit: "
                       "this machine has too little free memory now")
        raise MemoryLimitError(
            f"a {resolution}^3 {what} needs about {amount(needed)} but only "
            f"{amount(budget)} can be used; {advice}")


def require_bytes(needed_bytes: int, what: str) -> None:
    """Raise MemoryLimitError, naming `what` and the estimate, if `needed_bytes` would not fit now."""
    budget = usable_bytes()
    if needed_bytes > budget:
        raise MemoryLimitError(
            f"{what} needs about {amount(needed_bytes)} but only {amount(budget)} can be used")


def require_lattice_and_surface_memory(resolution: int, dtype=np.complex64) -> None:
    """Before any work: raise MemoryLimitError if an N^3 lattice of `dtype` and the surface
    step on it would not fit together now.  The one check that the ``figure`` and ``mesh``
    commands, :func:`orbitalrender.surface.extract.extract_surface` and the gallery make.

    Examples
    --------
    >>> require_lattice_and_surface_memory(16)   # 16^3 points fit anywhere
    """
    require_lattice_memory(resolution, dtype, extra_bytes_per_point=surface_bytes_per_point(dtype),
                           what="lattice with its surface")
