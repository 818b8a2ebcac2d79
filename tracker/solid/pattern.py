"""A pattern's casting model in the log, and the whole-casting solve of it.

``store_casting`` checks an STL and keeps it with the pattern (its SHA-256
and unit recorded); ``whole`` solves the stored casting with the risers of
the pattern's current revision: each riser is a cylinder of its diameter and
height standing on its contact centre (``x_mm``, ``y_mm``, ``z_mm`` of the
risers import, in the model's frame) along its ``axis`` (z: up, the default).
The alloy, mould and pouring temperature are the pattern's, as for the 2-D
check (tracker.thermal.cases). ``zone_rows`` turns hot spots into rows of a
zones import.
"""

from __future__ import annotations

import numpy as np
import trimesh

from tracker.errors import BadInput, NotFound
from tracker.numbers import finite
from tracker.solid import stl
from tracker.solid.run import SolidResult, run
from tracker.thermal.cases import MOULD_OF_RIGIDITY, current_risers, pour_temp_for

AXIS_VECTORS = {"x": (1, 0, 0), "-x": (-1, 0, 0), "y": (0, 1, 0), "-y": (0, -1, 0), "z": (0, 0, 1),
                "-z": (0, 0, -1)}
ZONE_COLUMNS = ("pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "modulus_cm", "x_mm", "y_mm",
                "z_mm")


def store_casting(store, pattern: str, data: bytes, name: str, units: str = "mm") -> stl.Model:
    """Check the STL ``data`` and keep it with ``pattern`` (which must be in the log)."""
    store.pattern(pattern)
    model = stl.read_bytes(data, units, name)
    store.save_casting(pattern, name, model.units, model.digest, model.volume_cm3, data)
    return model


def stored_model(store, pattern: str) -> stl.Model:
    """``pattern``'s stored model; NotFound with the fix where none is stored."""
    store.pattern(pattern)
    row = store.casting(pattern)
    if row is None:
        raise NotFound("casting model", pattern, f"store one with `pourback casting {pattern} --stl FILE`")
    return stl.read_bytes(row["stl"], row["units"], row["file"])


def riser_mesh(diameter_mm: float, height_mm: float, at_mm, axis: str = "z") -> trimesh.Trimesh:
    """A cylindrical riser standing on its contact centre ``at_mm`` along ``axis``."""
    d = np.asarray(AXIS_VECTORS[axis], dtype=float)
    cyl = trimesh.creation.cylinder(radius=diameter_mm / 2, height=height_mm, sections=64)
    rot = trimesh.geometry.align_vectors([0, 0, 1], d)
    cyl.apply_transform(rot)
    return cyl.apply_translation(np.asarray(at_mm, dtype=float) + d * height_mm / 2)


def log_risers(store, pattern: str, on: str | None = None) -> list[tuple[str, trimesh.Trimesh]]:
    """(riser, mesh) of each riser of ``pattern``'s current revision; BadInput where one has no position."""
    rows = current_risers(store, pattern, on)
    out = []
    for r in rows.to_dict("records"):
        at = [finite(r.get(k)) for k in ("x_mm", "y_mm", "z_mm")]
        if any(v is None for v in at):
            raise BadInput("risers", r["riser"], f"riser {r['riser']} of {pattern} revision {r['revision']} has no "
                           "position; give x_mm, y_mm, z_mm (and axis) in the risers import")
        out.append((str(r["riser"]), riser_mesh(float(r["diameter_mm"]), float(r["height_mm"]), at,
                                                str(r.get("axis") or "z"))))
    return out


def whole(store, pattern: str, cell_mm: float | None = None, on: str | None = None,
          keep_maps: bool = False, with_risers: bool = True) -> SolidResult:
    """The stored casting of ``pattern`` solved with its current revision's risers (or alone)."""
    info = store.pattern(pattern)
    model = stored_model(store, pattern)
    risers = log_risers(store, pattern, on) if with_risers else None
    mould = MOULD_OF_RIGIDITY.get(str(info.get("mould") or "").strip().lower(), "silica_sand")
    return run(model, risers, str(info["alloy"]), mould=mould, pour_temp_c=pour_temp_for(store, pattern, info["alloy"]),
               cell_mm=cell_mm, keep_maps=keep_maps)


def _thickness(spot: dict) -> float | None:
    """The thickness at a hot spot, mm; None where its region's V/A is above half of it (a region
    joined to other metal on faces that do not cool, which the zones import would refuse as a plate)."""
    if spot["cooling_area_cm2"] <= 0 or spot["volume_cm3"] / spot["cooling_area_cm2"] > spot["thickness_mm"] / 20.0:
        return None
    return round(spot["thickness_mm"], 1)


def risers_placed(store, pattern: str, on: str | None = None) -> bool:
    """Whether every riser of ``pattern``'s current revision has a position on the model."""
    try:
        rows = current_risers(store, pattern, on)
    except NotFound:
        return False
    return not rows.empty and bool(rows[["x_mm", "y_mm", "z_mm"]].notna().all(axis=None))


def zone_rows(pattern: str, result: SolidResult) -> list[dict]:
    """One zones-import row per hot spot (zone H1, H2, ... hottest first): its region's volume and
    cooling area (its faces against the mould), the thickness at the spot (see ``_thickness``), its
    modulus from the solve and its position."""
    return [{"pattern": pattern, "zone": f"H{i + 1}", "volume_cm3": round(s["volume_cm3"], 1),
             "cooling_area_cm2": round(s["cooling_area_cm2"], 1), "thickness_mm": _thickness(s),
             "modulus_cm": None if s["modulus_cm"] is None else round(s["modulus_cm"], 2),
             "x_mm": s["x_mm"], "y_mm": s["y_mm"], "z_mm": s["z_mm"]}
            for i, s in enumerate(result.hot_spots)]
