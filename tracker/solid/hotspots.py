"""Hot spots: the local maxima of the freezing-time field of the casting.

Every casting cell points to the face neighbour that freezes last (itself
where none freezes later); following the pointers (steepest ascent of the
freezing time) ends at a local maximum, a hot spot, and the cells that end
there are the region that freezes last around it: its volume. Its modulus
is the freezing time converted by Chvorinov's rule, M = sqrt(t / B), with B
the mould constant of the same alloy, mould and pour (tracker.design.rules).
Regions under ``MIN_SHARE`` of the casting's volume are the grid's noise and
are left out; the hot spots come hottest first.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import ndimage

MIN_SHARE = 0.01      # a hot spot's region holds at least 1 % of the casting's volume
MAX_SPOTS = 20
TIE_SHARE = 0.005    # maxima this close in time and within two cells are one hot spot


def _ascent(st: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """(cells,) flat index of the local maximum each cell of ``mask`` climbs to (-1 outside)."""
    shape = st.shape
    val = np.where(mask, st, -np.inf)
    flat_idx = np.arange(st.size).reshape(shape)
    best_val, best = val.copy(), flat_idx.copy()
    pad_v = np.pad(val, 1, constant_values=-np.inf)
    pad_i = np.pad(flat_idx, 1, constant_values=-1)
    core = tuple(slice(1, n + 1) for n in shape)
    for a in range(3):
        for s in (-1, 1):
            sl = list(core)
            sl[a] = slice(1 + s, shape[a] + 1 + s)
            v, i = pad_v[tuple(sl)], pad_i[tuple(sl)]
            better = v > best_val
            best_val = np.where(better, v, best_val)
            best = np.where(better, i, best)
    parent = np.where(mask, best, -1).ravel()
    idx = np.flatnonzero(parent >= 0)
    for _ in range(64):          # pointer jumping: log2 of the longest path
        nxt = parent[parent[idx]]
        if np.array_equal(nxt, parent[idx]):
            break
        parent[idx] = nxt
    return parent


def _merge_ties(root, st, vols, area, cell_mm, centres_mm) -> None:
    """Join maxima a cell or two apart that freeze within TIE_SHARE of each other (one hot spot split
    by the grid's symmetry) into the hotter one, in place."""
    tops = np.flatnonzero(vols > 0)
    if tops.size < 2:
        return
    flat_t = st.ravel()
    order = tops[np.argsort(-flat_t[tops])]
    pos = np.stack([c[i] for c, i in zip(centres_mm, np.unravel_index(order, st.shape), strict=False)], axis=1)
    for n, r in enumerate(order):
        if vols[r] == 0:
            continue
        near = np.linalg.norm(pos[n + 1:] - pos[n], axis=1) <= 2.0 * cell_mm
        for m in np.flatnonzero(near) + n + 1:
            o = order[m]
            if vols[o] > 0 and flat_t[r] - flat_t[o] <= TIE_SHARE * flat_t[r]:
                root[root == o] = r
                vols[r] += vols[o]
                area[r] += area[o]
                vols[o] = area[o] = 0.0


def find(solid_time_s: np.ndarray, casting: np.ndarray, centres_mm, vol_mm3: np.ndarray, mould_b_s_cm2: float,
         cell_mm: float, exposed_mm2: np.ndarray) -> list[dict]:
    """The hot spots of the casting, hottest first: each a dict with ``x_mm``, ``y_mm``, ``z_mm``,
    ``modulus_cm``, ``freeze_s``, ``volume_cm3``, ``cooling_area_cm2`` (its region's faces against
    the mould), ``thickness_mm`` (twice the distance to the mould at the spot) and ``cell`` (its
    flat index)."""
    st = np.where(np.isnan(solid_time_s), np.inf, solid_time_s)
    root = _ascent(st, casting)
    inside = root >= 0
    total = float(vol_mm3.ravel()[casting.ravel()].sum())
    vols = np.bincount(root[inside], weights=vol_mm3.ravel()[inside], minlength=st.size)
    area = np.bincount(root[inside], weights=exposed_mm2.ravel()[inside], minlength=st.size)
    _merge_ties(root, st, vols, area, cell_mm, centres_mm)
    roots = np.flatnonzero(vols >= MIN_SHARE * total)
    if roots.size == 0 and inside.any():
        roots = np.array([int(np.argmax(vols))])
    dist = ndimage.distance_transform_edt(casting, sampling=cell_mm)
    spots = []
    for r in roots:
        i, j, k = np.unravel_index(r, st.shape)
        t = float(st.ravel()[r])
        spots.append({
            "x_mm": _mm(centres_mm[0][i]), "y_mm": _mm(centres_mm[1][j]), "z_mm": _mm(centres_mm[2][k]),
            "modulus_cm": math.sqrt(t / mould_b_s_cm2) if math.isfinite(t) else None,
            "freeze_s": t if math.isfinite(t) else None,
            "volume_cm3": float(vols[r]) / 1000.0, "cooling_area_cm2": float(area[r]) / 100.0,
            "thickness_mm": float(max(2.0 * dist[i, j, k] - cell_mm, cell_mm)), "cell": int(r)})
    spots.sort(key=lambda s: -(s["freeze_s"] if s["freeze_s"] is not None else math.inf))
    return spots[:MAX_SPOTS]


def _mm(v) -> float:
    """A position to 0.1 mm (no -0.0)."""
    return round(float(v), 1) + 0.0


def exposed_area_mm2(metal: np.ndarray, of: np.ndarray, edges_mm) -> np.ndarray:
    """(nx, ny, nz) area of each cell of ``of`` facing a cell that is not ``metal``, mm²."""
    d = [np.diff(e) for e in edges_mm]
    out = np.zeros(metal.shape)
    for a in range(3):
        others = [d[b] for b in range(3) if b != a]
        face = np.multiply.outer(others[0], others[1])
        face = np.expand_dims(face, a)
        pad = np.pad(metal, [(1, 1) if b == a else (0, 0) for b in range(3)], constant_values=False)
        n = metal.shape[a]
        for s in (0, 2):
            nb = np.take(pad, np.arange(s, s + n), axis=a)
            out += np.where(of & ~nb, face, 0.0)
    return out
