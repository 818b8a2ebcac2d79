"""Cells from closed meshes: the casting, its risers and the mould around them.

The grid is rectilinear: cubes of the cell size over the metal's bounding
box, growing by ``GROWTH`` per cell into a sand layer around it, thick
enough that the heat of the slowest part does not reach its edge within
the solve. A cell is metal where its centre lies inside the mesh: a ray up
each column of cell centres counts the triangles it crosses, entering (+1)
where a face looks down and leaving (-1) where it looks up; the running sum
is the winding number, 1 inside and 0 outside. A sum of 2 or -1 anywhere is
a mesh that intersects itself (or two shells that overlap), refused.

The cell size comes from the thinnest section: a first coarse fill, the
distance from every metal cell to the mould, and the ridge of that
distance (its local maxima, the mid-surface of each wall) give the
thickness of each wall; the thinnest (the 5th percentile over the ridge,
so that a stray edge does not decide it) is cut in ``CELLS_ACROSS`` cells.
Before anything is allocated the grid's cells and memory are counted; a
grid over the memory bound is coarsened and the coarsening stated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import cast

import numpy as np
import trimesh
from scipy import ndimage

from tracker.errors import BadInput, BadModel

CELLS_ACROSS = 4            # cells across the thinnest section by default
GROWTH = 1.3                # cell growth into the mould
MAX_GROWN = 4.0             # largest mould cell, as a multiple of the cell size
PRE_CELLS = 72              # cells along the longest side in the first, coarse fill
BYTES_PER_CELL = 420        # the solve's arrays per cell (float64 fields, sweeps, watch), measured
MAX_MEMORY_MB = 600.0       # default bound on the solve's memory
MIN_CELL_MM = 0.5
_JITTER = (1.234567e-7, 2.345678e-7)   # ray offsets (share of a cell) so no ray runs along an edge


@dataclass
class Grid3:
    """Cell edges along x, y, z (mm); ``region`` (nx, ny, nz) codes; ``body`` riser number per cell."""

    edges: tuple[np.ndarray, ...]
    region: np.ndarray
    body: np.ndarray
    cell_mm: float
    notes: list = field(default_factory=list)

    @property
    def shape(self) -> tuple[int, int, int]:
        nx, ny, nz = self.region.shape
        return int(nx), int(ny), int(nz)

    def centres(self) -> list[np.ndarray]:
        """Cell centres along x, y, z, mm."""
        return [0.5 * (e[1:] + e[:-1]) for e in self.edges]

    def volumes_mm3(self) -> np.ndarray:
        """(nx, ny, nz) cell volumes, mm³."""
        dx, dy, dz = (np.diff(e) for e in self.edges)
        return dx[:, None, None] * dy[None, :, None] * dz[None, None, :]


def memory_mb(cells: int) -> float:
    """The solve's memory for ``cells`` cells, MB (BYTES_PER_CELL each)."""
    return cells * BYTES_PER_CELL / 1e6


def axis_edges(breaks, h: float, margin: float) -> np.ndarray:
    """Edges (mm): cells of at most ``h`` between the ``breaks`` (the faces of the bodies' boxes, so that
    flat faces fall on cell faces), graded outwards over ``margin`` mm on both sides."""
    b = np.unique(np.round(np.asarray(breaks, dtype=float), 6))
    keep = [b[0]]
    for v in b[1:]:
        if v - keep[-1] > 0.3 * h:
            keep.append(v)
    if len(keep) > 1 and b[-1] > keep[-1]:
        keep[-1] = b[-1]
    core = [keep[0]]
    for lo, hi in zip(keep[:-1], keep[1:], strict=False):
        n = max(1, int(math.ceil((hi - lo) / h - 1e-6)))
        core.extend(np.linspace(lo, hi, n + 1)[1:])
    if len(core) == 1:
        core = [keep[0] - h / 2, keep[0] + h / 2]
    steps, size, pos = [], h, 0.0
    while pos < margin - 1e-9:
        size = min(size * GROWTH, MAX_GROWN * h)
        pos += size
        steps.append(pos)
    grown = np.array(steps)
    return np.concatenate([core[0] - grown[::-1], np.array(core), core[-1] + grown])


def box_breaks(boxes) -> list[list[float]]:
    """Per axis, the faces of the ``boxes`` ((2, 3) lowest and highest corners, mm)."""
    return [sorted({float(bx[i, a]) for bx in boxes for i in (0, 1)}) for a in range(3)]


def count_cells(breaks, h: float, margin: float) -> int:
    """Cells of the grid ``axis_edges`` would build from ``box_breaks``' ``breaks`` (edges only: no
    cell is made)."""
    total = 1
    for a in range(3):
        total *= axis_edges(breaks[a], h, margin).size - 1
    return total


def fill(mesh: trimesh.Trimesh, edges, name: str = "model") -> np.ndarray:
    """(nx, ny, nz) winding number of every cell centre (1 inside, 0 outside).

    BadModel where it is 2 or more or below 0 (the mesh intersects itself)."""
    xc, yc, zc = (0.5 * (e[1:] + e[:-1]) for e in edges)
    hx = float(np.min(np.diff(edges[0])))
    hy = float(np.min(np.diff(edges[1])))
    xs, ys = xc + _JITTER[0] * hx, yc + _JITTER[1] * hy
    tri = np.asarray(mesh.triangles, dtype=float)
    delta = np.zeros((xc.size, yc.size, zc.size + 1), dtype=np.int16)
    nz2 = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])[:, 2]
    tri = tri[nz2 != 0]
    lo = tri[:, :, :2].min(axis=1)
    hi = tri[:, :, :2].max(axis=1)
    i0, i1 = np.searchsorted(xs, lo[:, 0]), np.searchsorted(xs, hi[:, 0], side="right")
    j0, j1 = np.searchsorted(ys, lo[:, 1]), np.searchsorted(ys, hi[:, 1], side="right")
    ni, nj = np.maximum(i1 - i0, 0), np.maximum(j1 - j0, 0)
    count = ni * nj
    keep = np.flatnonzero(count)
    # triangles in chunks of about a million ray-triangle pairs (memory)
    csum = np.cumsum(count[keep])
    starts = np.searchsorted(csum, np.arange(0, csum[-1] if csum.size else 0, 1_000_000), side="right")
    bounds_ = list(starts) + [keep.size]
    for a, b in zip(bounds_[:-1], bounds_[1:], strict=False):
        _fill_chunk(tri, keep[a:b], i0, j0, ni, nj, xs, ys, zc, delta)
    wind = np.cumsum(delta[:, :, :-1], axis=2, dtype=np.int16)
    if wind.size and (wind.max() > 1 or wind.min() < 0):
        raise BadModel(name, "the mesh intersects itself (or two of its shells overlap); repair it in the "
                       "CAD model (a boolean union) and export it again")
    return wind


def _fill_chunk(tri, idx, i0, j0, ni, nj, xs, ys, zc, delta) -> None:
    """Add the crossings of the triangles ``idx`` with the column rays to ``delta``."""
    if idx.size == 0:
        return
    cnt = ni[idx] * nj[idx]
    t = np.repeat(idx, cnt)
    off = np.arange(cnt.sum()) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    nj_t = np.repeat(nj[idx], cnt)
    ii = np.repeat(i0[idx], cnt) + off // nj_t
    jj = np.repeat(j0[idx], cnt) + off % nj_t
    p = np.stack([xs[ii], ys[jj]], axis=1)
    a, b, c = tri[t, 0], tri[t, 1], tri[t, 2]
    v0, v1, v2 = b[:, :2] - a[:, :2], c[:, :2] - a[:, :2], p - a[:, :2]
    den = v0[:, 0] * v1[:, 1] - v1[:, 0] * v0[:, 1]
    u = (v2[:, 0] * v1[:, 1] - v1[:, 0] * v2[:, 1]) / den
    v = (v0[:, 0] * v2[:, 1] - v2[:, 0] * v0[:, 1]) / den
    hit = (u >= 0) & (v >= 0) & (u + v <= 1)
    if not hit.any():
        return
    u, v, t, ii, jj = u[hit], v[hit], t[hit], ii[hit], jj[hit]
    z = tri[t, 0, 2] + u * (tri[t, 1, 2] - tri[t, 0, 2]) + v * (tri[t, 2, 2] - tri[t, 0, 2])
    sign = np.where(den[hit] < 0, 1, -1).astype(np.int16)   # facing down: the ray enters
    kk = np.searchsorted(zc, z)
    np.add.at(delta, (ii, jj, kk), sign)


def thinnest_mm(meshes: list[trimesh.Trimesh]) -> float:
    """The thinnest section of the casting, mm (see the module docstring)."""
    mesh = meshes[0] if len(meshes) == 1 else cast(trimesh.Trimesh, trimesh.util.concatenate(meshes))
    lo, hi = np.asarray(mesh.bounds, dtype=float)
    h = float(np.max(hi - lo)) / PRE_CELLS
    edges = tuple(axis_edges([lo[a], hi[a]], h, 2 * h) for a in range(3))
    inside = fill(mesh, edges) > 0
    if not inside.any():
        return float(np.min(hi - lo))
    dist = ndimage.distance_transform_edt(inside, sampling=h)
    ridge = inside & (dist >= ndimage.maximum_filter(dist, size=3))
    t = 2.0 * np.percentile(dist[ridge], 5) - h     # the centre lies half a cell inside the wall
    return float(max(t, h))


def choose_cell(thinnest: float, breaks, margin: float, cell_mm: float | None,
                max_memory_mb: float = MAX_MEMORY_MB) -> tuple[float, list[str]]:
    """The cell size (mm) and what was decided: ``cell_mm`` where given (BadInput where its grid
    would pass the memory bound), else the thinnest section over CELLS_ACROSS, coarsened to the bound."""
    notes = []
    if cell_mm is not None:
        if not (math.isfinite(cell_mm) and cell_mm >= MIN_CELL_MM):
            raise BadInput("cell-mm", cell_mm, f"must be a length of at least {MIN_CELL_MM} mm")
        cells = count_cells(breaks, cell_mm, margin)
        if memory_mb(cells) > max_memory_mb:
            raise BadInput("cell-mm", cell_mm, f"gives {cells:,} cells, about {memory_mb(cells):,.0f} MB, "
                           f"above the bound of {max_memory_mb:,.0f} MB; give a larger cell")
        notes.append(f"cell {cell_mm:g} mm as given (thinnest section about {thinnest:.0f} mm)")
        return float(cell_mm), notes
    h = max(thinnest / CELLS_ACROSS, MIN_CELL_MM)
    notes.append(f"cell {h:.1f} mm: the thinnest section, about {thinnest:.0f} mm, in {CELLS_ACROSS} cells")
    while memory_mb(count_cells(breaks, h, margin)) > max_memory_mb:
        h *= 1.15
    if notes and not notes[0].startswith(f"cell {h:.1f} mm"):
        notes.append(f"coarsened to {h:.1f} mm to keep the solve within {max_memory_mb:,.0f} MB")
    return h, notes
