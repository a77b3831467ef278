"""Picture step, section lines: the nodal lines of psi on a section and the cut through the F surface.

:func:`section_lines` finds both once for a :class:`~orbitalrender.picture.section.Section`;
the figure and its metadata use the same result.  See :func:`nodal_lines` for the method.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from skimage.measure import find_contours

from .section import Section

__all__ = ["SectionLines", "section_lines", "nodal_lines", "level_contour"]

#: A point of a zero line of Re or Im is on a node when |psi| there is below this share of
#: |psi| at the corners of its pixel cell.  On a true node |psi| vanishes to first order
#: across the cell, on a zero of the real part alone it stays comparable to its corners;
#: 0.25 sits between the two (our choice; see nodal_lines).
_NODE_RATIO = 0.25
#: With exact psi: bisection steps on a pixel edge (2^-40 of a pixel, far below any
#: drawing precision) and the share of |psi| at the edge ends that |psi| at the zero
#: found may keep on a node (on a true node it is ~1e-12; where Re and Im only come
#: close it stays of order 1e-3 to 1).
_BISECTIONS = 40
_EXACT_NODE_RATIO = 1e-6
#: Nodal runs shorter than this many contour vertices are dropped (isolated zeros).
_MIN_RUN = 3


def _to_a0(section: Section, rows_cols: np.ndarray) -> np.ndarray:
    """Contour vertices (row, col) in pixel indices -> (u, v) in a0."""
    h = section.pixel_a0
    return np.column_stack([section.u_a0[0] + h * rows_cols[:, 1], section.v_a0[0] + h * rows_cols[:, 0]])


def _bilinear(field: np.ndarray, rows_cols: np.ndarray) -> np.ndarray:
    """`field` (real or complex) at fractional (row, col) positions."""
    r, c = rows_cols[:, 0], rows_cols[:, 1]
    r0 = np.clip(np.floor(r).astype(int), 0, field.shape[0] - 2)
    c0 = np.clip(np.floor(c).astype(int), 0, field.shape[1] - 2)
    fr, fc = r - r0, c - c0
    return ((1 - fr) * (1 - fc) * field[r0, c0] + (1 - fr) * fc * field[r0, c0 + 1]
            + fr * (1 - fc) * field[r0 + 1, c0] + fr * fc * field[r0 + 1, c0 + 1])


def _corner_peak(field: np.ndarray, rows_cols: np.ndarray) -> np.ndarray:
    """Largest |field| at the four grid points around each fractional position."""
    r0 = np.clip(np.floor(rows_cols[:, 0]).astype(int), 0, field.shape[0] - 2)
    c0 = np.clip(np.floor(rows_cols[:, 1]).astype(int), 0, field.shape[1] - 2)
    a = np.abs(field)
    return np.maximum.reduce([a[r0, c0], a[r0, c0 + 1], a[r0 + 1, c0], a[r0 + 1, c0 + 1]])


def _runs(line: np.ndarray, keep: np.ndarray) -> list[np.ndarray]:
    """The pieces of a polyline where `keep` holds, each of at least _MIN_RUN vertices."""
    pieces, start = [], None
    for i, k in enumerate(np.append(keep, False)):
        if k and start is None:
            start = i
        elif not k and start is not None:
            if i - start >= _MIN_RUN:
                pieces.append(line[start:i])
            start = None
    return pieces


def _zero_lines(field: np.ndarray) -> list[np.ndarray]:
    """Zero contours (row, col) of a real field, NaN (outside a lattice) kept out."""
    if not np.any(field > 0) or not np.any(field < 0):
        return []
    mask = np.isfinite(field)
    return find_contours(np.where(mask, field, 0.0), 0.0, mask=None if mask.all() else mask)


def _edge_ends(rows_cols: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The two grid points (row, col) of the pixel-centre edge each contour vertex lies on."""
    r, c = rows_cols[:, 0], rows_cols[:, 1]
    on_row = np.abs(r - np.round(r)) < 1e-9
    a = np.where(on_row[:, None], np.column_stack([np.round(r), np.floor(c)]),
                 np.column_stack([np.floor(r), np.round(c)]))
    b = a + np.where(on_row[:, None], [0.0, 1.0], [1.0, 0.0])
    return a, b


def _exact_psi(section: Section, rows_cols: np.ndarray) -> np.ndarray:
    """psi of the section's state at fractional pixel positions, exactly."""
    uv = _to_a0(section, rows_cols)
    return section.state.psi(*section.plane.point(uv[:, 0], uv[:, 1], section.centre_a0))


def _exact_node_test(section: Section, line: np.ndarray, use_real: bool) -> tuple[np.ndarray, np.ndarray]:
    """For each vertex of a zero line of Re or Im (after the section's rotation): find the zero
    of that part on its grid edge by bisection on the exact psi, and test whether |psi| vanishes
    there too.  Returns (on_node mask, the refined vertices in pixel coordinates)."""
    a, b = _edge_ends(line)
    u = np.conj(section.rotation)

    def part(t):
        v = _exact_psi(section, a + t[:, None] * (b - a)) * u
        return v.real if use_real else v.imag

    lo, hi = np.zeros(len(line)), np.ones(len(line))
    f_lo = part(lo)
    for _ in range(_BISECTIONS):
        mid = 0.5 * (lo + hi)
        f_mid = part(mid)
        same = np.sign(f_mid) == np.sign(f_lo)
        lo, f_lo = np.where(same, mid, lo), np.where(same, f_mid, f_lo)
        hi = np.where(same, hi, mid)
    t = 0.5 * (lo + hi)
    refined = a + t[:, None] * (b - a)
    scale = np.maximum(np.abs(_exact_psi(section, a)), np.abs(_exact_psi(section, b)))
    on_node = np.abs(_exact_psi(section, refined)) <= _EXACT_NODE_RATIO * scale
    return on_node, refined


def nodal_lines(section: Section) -> list[np.ndarray]:
    """Lines of the plane where psi = 0, as (K, 2) arrays of (u, v) in a0.

    Notes
    -----
    Where psi is real on the plane up to one global phase u (real states, and
    eigenstates |n l m> on any plane containing the z axis, where e^{i m phi} is
    +-1), the nodal lines are the zero contour of the signed field Re(psi u*)
    (marching squares, :func:`skimage.measure.find_contours`, linear between pixel
    centres).

    Otherwise psi is genuinely complex on the plane and a nodal line is where
    psi = f e^{i chi} has f changing sign with a smooth chi: both Re and Im vanish
    there.  The zero contours of Re(psi u*) and Im(psi u*) are traced and, of the
    two parts, only the one that crosses zero more steeply is used at each vertex
    (Re when cos^2 chi >= 1/2, read from psi^2), so each node is traced once.  A
    vertex is kept when |psi| vanishes there too:

    * for an analytic state, the zero of that part on the vertex's pixel edge is found
      by bisection on the exact psi, and |psi| there must be below 1e-6 of |psi| at the
      edge ends (on a node it is zero to the bisection tolerance; where Re and Im merely
      come close, as where a small term keeps psi from vanishing, it is not);
    * for a user lattice, |psi| interpolated at the vertex must be below 0.25 of |psi|
      at the corners of its pixel cell (on a node |psi| falls to zero across the cell;
      on a zero of one part alone it stays comparable), which cannot tell a node from a
      near-node narrower than a pixel.

    Isolated zeros (vortex points, such as the z axis piercing the xy plane for
    m != 0) are points, not lines, and are not drawn.
    """
    if section.is_nodal_plane:
        return []
    signed = section.signed
    if signed is not None:
        return [_to_a0(section, line) for line in _zero_lines(signed)]
    rotated = section.psi * np.conj(section.rotation)
    squared = rotated * rotated
    out = []
    for part, use_real in ((rotated.real, True), (rotated.imag, False)):
        for line in _zero_lines(part):
            steeper = (_bilinear(squared, line).real >= 0.0) == use_real
            if section.exact:
                on_node, line = _exact_node_test(section, line, use_real)
            else:
                on_node = np.abs(_bilinear(rotated, line)) <= _NODE_RATIO * _corner_peak(rotated, line)
            out.extend(_to_a0(section, piece) for piece in _runs(line, on_node & steeper))
    return out


def level_contour(section: Section) -> list[np.ndarray]:
    """The cut through the F surface: contour |psi|^2 = level, (K, 2) arrays of (u, v) in a0."""
    if section.level is None:
        return []
    density = section.density
    mask = np.isfinite(density)
    if not np.any(density[mask] >= section.level):
        return []
    lines = find_contours(np.where(mask, density, 0.0), section.level, mask=None if mask.all() else mask)
    return [_to_a0(section, line) for line in lines]




@dataclass(frozen=True, eq=False)
class SectionLines:
    """The lines drawn on a section, found once and shared by its figure and metadata.

    Attributes
    ----------
    contour : list of ndarray (K, 2)
        The cut through the F surface (:func:`level_contour`), (u, v) in a0; empty when
        the section has no level.
    nodes : list of ndarray (K, 2)
        The nodal lines (:func:`nodal_lines`); empty when they were not asked for.
    """

    contour: list[np.ndarray]
    nodes: list[np.ndarray]


def section_lines(section: Section, *, nodes: bool = True) -> SectionLines:
    """The F contour and (with `nodes`) the nodal lines of `section`.

    Examples
    --------
    >>> from orbitalrender.picture.plane import plane
    >>> from orbitalrender.picture.section import cross_section
    >>> from orbitalrender.state.model import eigenstate
    >>> s = cross_section(eigenstate(2, 0, 0), plane("xy"), half_width_a0=6.0, pixels=32, fraction=None)
    >>> lines = section_lines(s)
    >>> len(lines.contour), len(lines.nodes)
    (0, 1)
    """
    return SectionLines(level_contour(section), nodal_lines(section) if nodes else [])
