"""Picture step, shading kernels: compiled per-sample lighting, phase lookup, filtering and sRGB encoding.

The kernels work on the rasterizer's buffers (:mod:`orbitalrender.picture.raster`):

* **Normals** are interpolated per sample from the vertex normals (Phong
  interpolation) and lit with ambient + two diffuse lights + a modest
  Blinn-Phong highlight [1]_ [2]_.  Light and shadow change only the CIELAB
  lightness of the phase colour, keeping its hue and chroma: the colour is read
  from a table over phase and shade (:mod:`orbitalrender.picture.shadetable`),
  interpolated in shade; the highlight adds white.
* **Hue** is the phase of psi.  The unit phasors psi/|psi| of the three
  vertices are interpolated (never the angles, which would jump where the phase
  wraps from pi to -pi) and the angle of the result indexes that table.
* **Antialiasing**: samples are box-filtered to output pixels in linear light
  (:func:`downsample`), or shaded once per triangle and pixel at the mean
  weights of its samples (:func:`shade_resolve`, centroid sampling).
* The result is encoded to sRGB [3]_ through a table (:func:`encode_srgb`).

References
----------
.. [1] B. T. Phong, "Illumination for computer generated pictures",
       Commun. ACM 18, 311-317 (1975).
.. [2] J. F. Blinn, "Models of light reflection for computer synthesized
       pictures", SIGGRAPH '77, 192-198 (1977).
.. [3] IEC 61966-2-1:1999, the sRGB transfer function.
"""

from __future__ import annotations

from functools import cache
from typing import NamedTuple

import numba
import numpy as np

from ..colormap import linear_to_srgb
from .raster import Buffers, scan_triangle

__all__ = ["Light", "ShadedMesh", "Bands", "LINE_SAMPLE", "BAND_ROWS",
           "srgb_lut", "shade_pixels", "shade_resolve", "render_banded", "band_lists", "shade_points",
           "downsample", "encode_srgb"]

class Light(NamedTuple):
    """The lighting as the kernels read it, in world axes (built by the scene from its
    :class:`~orbitalrender.picture.scene.Lighting` and camera).  Vectors are given by their
    components: numba's parallel loops take a tuple of scalars, not one holding tuples."""

    key_x: float    #: unit direction toward the key light
    key_y: float
    key_z: float
    fill_x: float   #: unit direction toward the fill light
    fill_y: float
    fill_z: float
    half_x: float   #: Blinn's half vector of the key light and the eye
    half_y: float
    half_z: float
    ambient: float
    key_weight: float
    fill_weight: float
    specular: float
    shininess: float
    back_gain: float                   #: brightness of a back face relative to a front face
    levels_per_shade: float            #: shade-table levels per unit of shade (:mod:`.shadetable`)


class ShadedMesh(NamedTuple):
    """What shading needs of a mesh, per vertex and per triangle."""

    faces: np.ndarray    #: (F, 3) int64 vertex indices
    normals: np.ndarray  #: (V, 3) float64 unit vertex normals
    phasors: np.ndarray  #: (V,) complex128 unit psi/|psi|, the global phase already removed
    front: np.ndarray    #: (F,) bool, True where the triangle faces the eye
    lut: np.ndarray      #: (P, L, 3) float32 linear-light colours over phase and shade
    #: (:func:`orbitalrender.picture.shadetable.shade_table`)


class Bands(NamedTuple):
    """CSR lists of the triangles reaching each band: faces[start[b]:start[b + 1]] (:func:`band_lists`)."""

    start: np.ndarray
    faces: np.ndarray



@numba.njit(cache=True, nogil=True)
def _light(nx, ny, nz, light):  # pragma: no cover - compiled
    """(diffuse factor, specular term) for a unit normal under `light` (a Light)."""
    dk = nx * light.key_x + ny * light.key_y + nz * light.key_z
    df = nx * light.fill_x + ny * light.fill_y + nz * light.fill_z
    dh = nx * light.half_x + ny * light.half_y + nz * light.half_z
    diffuse = light.ambient + light.key_weight * max(dk, 0.0) + light.fill_weight * max(df, 0.0)
    spec = light.specular * max(dh, 0.0) ** light.shininess if dh > 0.0 else 0.0
    return diffuse, spec


@numba.njit(cache=True, nogil=True)
def _lut_index(re, im, size):  # pragma: no cover - compiled
    k = int(np.rint(np.arctan2(im, re) * (size / (2.0 * np.pi))))
    return k % size


@numba.njit(cache=True, nogil=True)
def _shaded(table, c, shade, spec, light):  # pragma: no cover - compiled
    """Linear-light (r, g, b) of phase entry c at `shade`, interpolated between the levels of
    `table` (light.levels_per_shade of them per unit of shade), plus the white highlight `spec`."""
    x = min(max(shade * light.levels_per_shade, 0.0), table.shape[1] - 1.0)
    k = min(int(x), table.shape[1] - 2)
    f = x - k
    return ((1.0 - f) * table[c, k, 0] + f * table[c, k + 1, 0] + spec,
            (1.0 - f) * table[c, k, 1] + f * table[c, k + 1, 1] + spec,
            (1.0 - f) * table[c, k, 2] + f * table[c, k + 1, 2] + spec)


@numba.njit(cache=True, nogil=True)
def _shade_sample(t, b0, b1, b2, mesh, light):  # pragma: no cover - compiled
    """Linear-light (r, g, b) of triangle t of `mesh` (a ShadedMesh) at barycentric weights
    (b0, b1, b2): Phong-interpolated normal, hue from the interpolated unit phasor; back faces
    lit from inside and dimmed."""
    faces, normals, phasors, lut = mesh.faces, mesh.normals, mesh.phasors, mesh.lut
    v0 = faces[t, 0]
    v1 = faces[t, 1]
    v2 = faces[t, 2]
    nx = b0 * normals[v0, 0] + b1 * normals[v1, 0] + b2 * normals[v2, 0]
    ny = b0 * normals[v0, 1] + b1 * normals[v1, 1] + b2 * normals[v2, 1]
    nz = b0 * normals[v0, 2] + b1 * normals[v1, 2] + b2 * normals[v2, 2]
    pr = b0 * phasors[v0].real + b1 * phasors[v1].real + b2 * phasors[v2].real
    pi = b0 * phasors[v0].imag + b1 * phasors[v1].imag + b2 * phasors[v2].imag
    norm = np.sqrt(nx * nx + ny * ny + nz * nz)
    if norm > 0.0:
        nx /= norm
        ny /= norm
        nz /= norm
    gain = 1.0
    if not mesh.front[t]:
        nx, ny, nz = -nx, -ny, -nz
        gain = light.back_gain
    diffuse, spec = _light(nx, ny, nz, light)
    c = _lut_index(pr, pi, lut.shape[0])
    return _shaded(lut, c, gain * diffuse, gain * spec, light)


@numba.njit(cache=True, nogil=True)
def shade_pixels(tri, wts, mesh, light, out, back):  # pragma: no cover - compiled
    """Linear-light colour of every covered sample; marks back-facing samples in `back`."""
    h, w = tri.shape
    for j in range(h):
        for i in range(w):
            t = tri[j, i]
            if t < 0:
                continue
            back[j, i] = not mesh.front[t]
            r, g, b = _shade_sample(t, wts[j, i, 0], wts[j, i, 1], wts[j, i, 2], mesh, light)
            out[j, i, 0] = r
            out[j, i, 1] = g
            out[j, i, 2] = b


#: Triangle index that marks a sample of the nodal axis line in the fused shading pass.
LINE_SAMPLE = -2


@numba.njit(cache=True, nogil=True)
def shade_resolve(tri, wts, mesh, light, ss, line_rgb, out, alpha,
                  out_row0=0):  # pragma: no cover - compiled
    """Shade and box-filter in one pass (opaque scenes without a cut): in each output pixel the
    samples of one triangle are shaded once, at their mean weights (the attributes are linear
    on a triangle: centroid sampling, as in multisample antialiasing), and weighted by their
    count.  Premultiplied linear colour and coverage, for the samples in `tri` (whole image, or
    a band whose first output row is `out_row0`)."""
    h = tri.shape[0] // ss
    w = out.shape[1]
    n_max = ss * ss
    ids = np.empty(n_max, dtype=np.int64)
    sums = np.empty((n_max, 3))
    counts = np.empty(n_max)
    scale = 1.0 / n_max
    for j in range(h):
        for i in range(w):
            n = 0
            covered = 0
            line = 0
            for dj in range(ss):
                for di in range(ss):
                    y = j * ss + dj
                    x = i * ss + di
                    t = tri[y, x]
                    if t == -1:
                        continue
                    covered += 1
                    if t == LINE_SAMPLE:
                        line += 1
                        continue
                    k = 0
                    while k < n and ids[k] != t:
                        k += 1
                    if k == n:
                        ids[k] = t
                        sums[k, 0] = 0.0
                        sums[k, 1] = 0.0
                        sums[k, 2] = 0.0
                        counts[k] = 0.0
                        n += 1
                    sums[k, 0] += wts[y, x, 0]
                    sums[k, 1] += wts[y, x, 1]
                    sums[k, 2] += wts[y, x, 2]
                    counts[k] += 1.0
            r = line * line_rgb[0]
            g = line * line_rgb[1]
            b = line * line_rgb[2]
            for k in range(n):
                c = counts[k]
                sr, sg, sb = _shade_sample(ids[k], sums[k, 0] / c, sums[k, 1] / c, sums[k, 2] / c,
                                           mesh, light)
                r += c * sr
                g += c * sg
                b += c * sb
            out[out_row0 + j, i, 0] = r * scale
            out[out_row0 + j, i, 1] = g * scale
            out[out_row0 + j, i, 2] = b * scale
            alpha[out_row0 + j, i] = covered * scale


#: Output rows per band of the banded pass: small enough that a band's sample buffers stay in
#: the processor cache (16 rows x 3 x 4800 samples x 20 bytes is about 4.6 MB at 1600 px).
BAND_ROWS = 16


@numba.njit(cache=True, nogil=True, parallel=True)
def render_banded(screen, bands, mesh, light, ss, line_rgb, out, alpha):  # pragma: no cover - compiled
    """Rasterize, shade and filter band by band (in parallel, each band with its own small
    buffers): the same result as rasterizing the whole supersampled image and then resolving
    it, without its memory.  `bands` (a Bands) lists the triangles that reach each band, in
    index order (so ties in depth go the same way whatever the threads)."""
    width = out.shape[1] * ss
    height = out.shape[0] * ss
    band = BAND_ROWS * ss
    band_start, band_faces = bands.start, bands.faces
    n_bands = band_start.shape[0] - 1
    clip = np.zeros((screen.x.shape[0], 0))
    for b in numba.prange(n_bands):
        y0 = b * band
        y1 = min(y0 + band, height)
        depth = np.full((y1 - y0, width), np.inf, dtype=np.float32)
        tri = np.full((y1 - y0, width), -1, dtype=np.int32)
        wts = np.empty((y1 - y0, width, 3), dtype=np.float32)
        buffers = Buffers(depth, tri, wts)
        for a in range(band_start[b], band_start[b + 1]):
            scan_triangle(band_faces[a], screen, mesh.faces, clip, width, y0, y1, buffers)
        shade_resolve(tri, wts, mesh, light, ss, line_rgb, out, alpha, y0 // ss)


def band_lists(rows_px: np.ndarray, keep: np.ndarray, height: int,
               band: int) -> tuple[np.ndarray, np.ndarray]:
    """CSR lists of the kept triangles reaching each band of `band` sample rows: (start, faces).

    rows_px : (F, 3) vertex rows of each triangle.
    """
    # elementwise over the three columns: several times faster than a reduction along axis 1
    top = np.minimum(np.minimum(rows_px[:, 0], rows_px[:, 1]), rows_px[:, 2])
    bottom = np.maximum(np.maximum(rows_px[:, 0], rows_px[:, 1]), rows_px[:, 2])
    lo = np.clip(np.floor(top - 0.5), 0, height - 1).astype(np.int64) // band
    hi = np.clip(np.ceil(bottom - 0.5), 0, height - 1).astype(np.int64) // band
    ok = keep & (bottom >= -1) & (top <= height + 1)
    ids = np.flatnonzero(ok)
    lo, hi = lo[ok], hi[ok]
    count = hi - lo + 1
    tri = np.repeat(ids, count)
    first = np.repeat(np.cumsum(count) - count, count)
    which = np.repeat(lo, count) + (np.arange(len(tri)) - first)
    order = np.argsort(which, kind="stable")  # by band, index order within a band
    n_bands = -(-height // band)
    start = np.zeros(n_bands + 1, dtype=np.int64)
    np.cumsum(np.bincount(which, minlength=n_bands), out=start[1:])
    return start, tri[order]


@numba.njit(cache=True, nogil=True)
def shade_points(normals, psi, lut, light):  # pragma: no cover - compiled
    """Linear-light colour (P, 3) of flat points (cut caps) with their normals and psi."""
    out = np.empty((normals.shape[0], 3), dtype=np.float32)
    size = lut.shape[0]
    for p in range(normals.shape[0]):
        diffuse, spec = _light(normals[p, 0], normals[p, 1], normals[p, 2], light)
        c = _lut_index(psi[p].real, psi[p].imag, size)
        out[p, 0], out[p, 1], out[p, 2] = _shaded(lut, c, diffuse, spec, light)
    return out


@numba.njit(cache=True, nogil=True)
def downsample(img, alpha, ss):  # pragma: no cover - compiled
    """Box filter: mean of ss x ss blocks of premultiplied colour (H, W, 3) and alpha."""
    h = img.shape[0] // ss
    w = img.shape[1] // ss
    out = np.zeros((h, w, 3), dtype=np.float32)
    a_out = np.zeros((h, w), dtype=np.float32)
    scale = 1.0 / (ss * ss)
    for j in range(h):
        for i in range(w):
            r = 0.0
            g = 0.0
            b = 0.0
            a = 0.0
            for dj in range(ss):
                for di in range(ss):
                    y = j * ss + dj
                    x = i * ss + di
                    r += img[y, x, 0]
                    g += img[y, x, 1]
                    b += img[y, x, 2]
                    a += alpha[y, x]
            out[j, i, 0] = r * scale
            out[j, i, 1] = g * scale
            out[j, i, 2] = b * scale
            a_out[j, i] = a * scale
    return out, a_out


#: Entries of the linear -> sRGB table used for the final image (tabulated from
#: colormap.linear_to_srgb and interpolated linearly: error below 1e-4, far under one 8-bit step).
_SRGB_LUT_SIZE = 8192


@cache
def srgb_lut() -> np.ndarray:
    """The linear -> sRGB table that :func:`encode_srgb` interpolates."""
    return linear_to_srgb(np.linspace(0.0, 1.0, _SRGB_LUT_SIZE)).astype(np.float32)


@numba.njit(cache=True, nogil=True)
def encode_srgb(premult, alpha, bg, opaque, lut, out):  # pragma: no cover - compiled
    """Premultiplied linear colour -> straight-alpha sRGB RGBA, over `bg` when `opaque`."""
    top = lut.shape[0] - 1
    for j in range(premult.shape[0]):
        for i in range(premult.shape[1]):
            a = alpha[j, i]
            for ch in range(3):
                if opaque:
                    v = premult[j, i, ch] + (1.0 - a) * bg[ch]
                else:
                    v = premult[j, i, ch] / a if a > 0.0 else 0.0
                v = min(max(v, 0.0), 1.0) * top
                k = min(int(v), top - 1)
                f = v - k
                out[j, i, ch] = (1.0 - f) * lut[k] + f * lut[k + 1]
            out[j, i, 3] = 1.0 if opaque else a


