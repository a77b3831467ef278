"""Memory estimates made before any large allocation, and the refusal that follows."""

from __future__ import annotations

import os

import numpy as np

__all__ = ["MemoryLimitError", "available_bytes", "sampling_bytes", "largest_resolution",
           "require_lattice_memory", "require_bytes", "surface_bytes_per_point", "surface_bytes",
           "render_bytes", "require_surface_memory", "require_render_memory", "require_work_memory"]

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
# Renderer buffers per supersampled pixel: z-buffer (float64), triangle index (int32),
# barycentric weights (3 float32), linear colour (3 float32), depth, alpha and masks.
# Measured with tracemalloc at 800 x 600 px: 37 B without a cutaway, 87 B with one (the
# cap rays and a copy of the depth); rounded up to leave room for a second layer.
_RENDER_BYTES_PER_SAMPLE = 48
_RENDER_CUTAWAY_BYTES_PER_SAMPLE = 96
# ... and per output pixel: the downsampled colour, sRGB conversion, RGBA image and the
# matplotlib canvas of the composed figure (measured about 110 B at 400 x 300 px, ss = 1).
# An opaque scene without cut, translucency or axis line is rendered band by band with
# buffers of a few rows only: 46-68 B per output pixel measured at 800 x 600 px for
# supersampling 2 to 4, so only this per-pixel term applies to it.
_RENDER_BYTES_PER_PIXEL = 160
_GIB = 2**30


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


def render_bytes(width_px: int, height_px: int, supersample: int = 3, cutaway: bool = False,
                 banded: bool = False) -> int:
    """Peak bytes of one shaded render of `width_px` x `height_px` at `supersample`^2 samples
    per pixel, composed into a figure (the surface mesh itself excluded).  `banded`: the
    renderer's band-by-band path (opaque, no cut, no translucency, no axis line).

    Examples
    --------
    >>> round(render_bytes(900, 800, 3) / 2**20), round(render_bytes(900, 800, 3, banded=True) / 2**20)
    (406, 110)
    """
    pixels = float(width_px) * float(height_px)
    if banded and not cutaway:
        return int(pixels * _RENDER_BYTES_PER_PIXEL)
    per_sample = _RENDER_CUTAWAY_BYTES_PER_SAMPLE if cutaway else _RENDER_BYTES_PER_SAMPLE
    return int(pixels * (supersample**2 * per_sample + _RENDER_BYTES_PER_PIXEL))


def _budget() -> int:
    return int(available_bytes() * _SAFETY)


def require_surface_memory(shape: tuple[int, ...], dtype=np.complex64) -> None:
    """Raise MemoryLimitError if the surface step on an existing lattice would not fit now."""
    require_bytes(surface_bytes(shape, dtype),
                  f"the surface of a {'x'.join(map(str, shape))} lattice")


def require_render_memory(width_px: int, height_px: int, supersample: int = 3,
                          cutaway: bool = False, banded: bool = False) -> None:
    """Raise MemoryLimitError, naming the estimate and what would fit, if a render of this
    size would not fit now (see :func:`render_bytes` for `banded`)."""
    budget = _budget()
    needed = render_bytes(width_px, height_px, supersample, cutaway, banded)
    if needed <= budget:
        return
    fits = [k for k in range(supersample - 1, 0, -1)
            if render_bytes(width_px, height_px, k, cutaway, banded) <= budget]
    scale = (budget / needed) ** 0.5
    hint = (f"supersampling {fits[0]} fits" if fits else
            f"about {int(width_px * scale)} x {int(height_px * scale)} px fits")
    raise MemoryLimitError(
        f"a {width_px} x {height_px} px render at supersampling {supersample} needs about "
        f"{needed / _GIB:.1f} GiB but only {budget / _GIB:.1f} GiB can be used; {hint}")


def require_lattice_memory(resolution: int, dtype=np.complex64, chunk_bytes: int = 0,
                           extra_bytes_per_point: float = 0.0, what: str = "lattice") -> None:
    """Raise MemoryLimitError, naming the estimate and the largest N that fits, if an
    N^3 lattice (plus `extra_bytes_per_point` for later steps) would not fit now.

    `what` names the request in the message, e.g. "lattice with its surface" with
    ``extra_bytes_per_point=surface_bytes_per_point(dtype)``.
    """

    def need(n: int, dtype=dtype, chunk_bytes=chunk_bytes) -> int:
        return sampling_bytes(n, dtype, chunk_bytes) + int(extra_bytes_per_point * n**3)

    budget = _budget()
    needed = need(resolution)
    if needed > budget:
        largest = largest_resolution(budget, need)
        raise MemoryLimitError(
            f"a {resolution}^3 {what} needs about {needed / _GIB:.1f} GiB but only "
            f"{budget / _GIB:.1f} GiB can be used; the largest resolution that fits is {largest}")


def require_bytes(needed_bytes: int, what: str) -> None:
    """Raise MemoryLimitError, naming `what` and the estimate, if `needed_bytes` would not fit now."""
    budget = _budget()
    if needed_bytes > budget:
        raise MemoryLimitError(
            f"{what} needs about {needed_bytes / _GIB:.1f} GiB but only "
            f"{budget / _GIB:.1f} GiB can be used")


def require_work_memory(resolution: int | None = None, dtype=np.complex64, *,
                        render_px: tuple[int, int] | None = None, supersample: int = 3,
                        cutaway: bool = False, nodal_axis: bool = False,
                        translucent_outer: float | None = None) -> None:
    """Before any work, the estimate of every step of one picture or mesh, as the commands
    and the gallery make it: an N^3 lattice with its surface (`resolution`; None when the
    lattice is a user's file), then one render of `render_px` (width, height) with the
    given view options.  Raises MemoryLimitError naming what does not fit.

    Examples
    --------
    >>> require_work_memory(16, render_px=(64, 48), supersample=1)   # fits anywhere
    """
    if resolution is not None:
        require_lattice_memory(resolution, dtype, extra_bytes_per_point=surface_bytes_per_point(dtype),
                               what="lattice with its surface")
    if render_px is not None:
        # an opaque scene without cut, axis line or translucency is rendered band by band
        banded = not cutaway and not nodal_axis and translucent_outer in (None, 1.0)
        require_render_memory(*render_px, supersample, cutaway, banded)
