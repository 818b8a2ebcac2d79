"""The pattern file's 3-D view: the stored casting, its hot spots and risers, and
slices through the freezing-time field (data only; the page draws them).

The solve is ``tracker.solid.pattern.whole``: with the current revision's
risers where every one has a position, else the casting alone (its hot
spots, where risers should go). Where zones carry positions (placed at hot
spots), the shrinkage rejects logged against them are shown there.
"""

from __future__ import annotations

import numpy as np

from tracker.solid.pattern import log_risers, risers_placed, stored_model, whole
from tracker.solid.run import SOLID_CAUTION


def has_casting(store, pattern: str) -> bool:
    """Whether a casting model is stored with ``pattern``."""
    return store.casting(pattern) is not None


def _mesh(mesh) -> dict:
    v, f = np.asarray(mesh.vertices), np.asarray(mesh.faces)
    return {"x": v[:, 0].tolist(), "y": v[:, 1].tolist(), "z": v[:, 2].tolist(),
            "i": f[:, 0].tolist(), "j": f[:, 1].tolist(), "k": f[:, 2].tolist()}


def _slices(maps: dict, spot: dict) -> list[dict]:
    """Three planes through the hottest spot: freezing time (min) of the metal cells."""
    edges = maps["edges_mm"]
    centres = [0.5 * (e[1:] + e[:-1]) for e in edges]
    st = np.where(maps["region"] > 0, maps["solid_time_s"] / 60.0, np.nan)
    out = []
    for axis, name in enumerate("xyz"):
        idx = int(np.argmin(np.abs(centres[axis] - spot[f"{name}_mm"])))
        plane = np.take(st, idx, axis=axis)
        other = [a for a in range(3) if a != axis]
        keep = [np.flatnonzero(np.isfinite(plane).any(axis=1 - n)) for n in range(2)]
        if any(k.size == 0 for k in keep):
            continue
        sub = plane[keep[0].min():keep[0].max() + 1, keep[1].min():keep[1].max() + 1]
        out.append({"plane": f"{name} = {centres[axis][idx]:.0f} mm",
                    "h_label": f"{'xyz'[other[0]]} (mm)", "v_label": f"{'xyz'[other[1]]} (mm)",
                    "h": centres[other[0]][keep[0].min():keep[0].max() + 1].tolist(),
                    "v": centres[other[1]][keep[1].min():keep[1].max() + 1].tolist(),
                    "minutes": [[None if not np.isfinite(x) else float(x) for x in row] for row in sub.T]})
    return out


def rejects_at_zones(store, pattern: str) -> list[dict]:
    """Shrinkage rejects logged against each zone of ``pattern`` that has a position on the model (the
    zones a ``--write-zones`` import placed at hot spots), all revisions and pours counted."""
    z = store.zones_frame(pattern).dropna(subset=["x_mm", "y_mm", "z_mm"])
    if z.empty:
        return []
    counts: dict[str, int] = store.shrinkage_by_zone(pattern)
    return [{"zone": str(r.zone), "x_mm": float(r.x_mm), "y_mm": float(r.y_mm), "z_mm": float(r.z_mm),
             "shrinkage_rejects": counts[str(r.zone)]}
            for r in z.itertuples() if counts.get(str(r.zone), 0) > 0]


def casting_view(store, pattern: str, cell_mm: float | None = None) -> dict:
    """The 3-D view of ``pattern``'s stored casting (see the module docstring)."""
    placed = risers_placed(store, pattern)
    r = whole(store, pattern, cell_mm, keep_maps=True, with_risers=placed)
    model = stored_model(store, pattern)
    risers = [{"riser": n, **_mesh(m)} for n, m in log_risers(store, pattern)] if placed else []
    summary = {k: v for k, v in r.__dict__.items() if k not in ("maps", "hot_spots", "risers")}
    return {"summary": summary, "casting": _mesh(model.mesh), "risers_mesh": risers, "hot_spots": r.hot_spots,
            "risers": r.risers, "slices": _slices(r.maps, r.hot_spots[0]) if r.hot_spots else [],
            "with_risers": placed, "rejects": rejects_at_zones(store, pattern), "caution": SOLID_CAUTION}
