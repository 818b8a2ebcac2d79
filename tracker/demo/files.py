"""Writing the demo's six CSV files in the import formats."""

from __future__ import annotations

import csv
import pathlib

import numpy as np

from tracker.demo.foundry import METAL_COST_PER_KG, PATTERNS, SLEEVES
from tracker.demo.history import draw_inspections, draw_lots
from tracker.demo.scenario import Scenario, build_scenario
from tracker.design.alloys import get_alloy

COLUMNS: dict[str, tuple[str, ...]] = {
    "patterns": ("pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                 "metal_cost_per_kg", "processing_cost_per_casting"),
    "zones": ("pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm",
              "required_xray_level"),
    "sleeves": ("sleeve", "kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                "feeding_efficiency", "unit_cost"),
    "risers": ("pattern", "revision", "effective_from", "riser", "zone", "placement", "top",
               "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm"),
    "lots": ("lot", "pattern", "poured_on", "heat", "molds", "pour_temp_c"),
    "inspections": ("lot", "inspected_on", "method", "quantity", "result", "defect", "zone",
                    "xray_category", "severity", "serial", "inspector", "notes"),
}
FILES = tuple(COLUMNS)


def _fmt(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return f"{v:.10g}" if v != int(v) else str(int(v))
    return str(v)


def _write(path: pathlib.Path, name: str, rows: list[dict]) -> pathlib.Path:
    cols = COLUMNS[name]
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(cols)
        for r in rows:
            w.writerow([_fmt(r.get(c)) for c in cols])
    return path


def _pattern_rows() -> list[dict]:
    rows = []
    for p in PATTERNS:
        alloy = get_alloy(p.alloy)
        # Fed sections plus about 8 % of unfed detail (ribs, bosses, fillets).
        kg = sum(z.volume_cm3 for z in p.zones) * 1.08 * alloy.density_kg_dm3 / 1000.0
        fixed, per_kg = {"steel": (25.0, 1.8), "ductile_iron": (12.0, 0.9),
                         "aluminum": (8.0, 3.0)}[p.alloy]
        rows.append({"pattern": p.code, "description": p.description, "alloy": p.alloy,
                     "casting_weight_kg": round(kg, 1), "castings_per_mold": p.castings_per_mold,
                     "metal_cost_per_kg": METAL_COST_PER_KG[p.alloy],
                     "processing_cost_per_casting": round(fixed + per_kg * kg, 2)})
    return rows


def _zone_rows() -> list[dict]:
    rows = []
    for p in PATTERNS:
        for z in p.zones:
            rows.append({"pattern": p.code, "zone": z.zone,
                         "volume_cm3": round(z.volume_cm3, 1),
                         "cooling_area_cm2": round(z.cooling_area_cm2, 1),
                         "thickness_mm": z.thickness_mm if p.alloy != "aluminum" else None,
                         "length_mm": z.length_mm if p.alloy == "steel" else None,
                         "required_xray_level": z.xray_level})
    return rows


def _sleeve_rows() -> list[dict]:
    return [{"sleeve": s.sleeve, "kind": s.kind, "inner_diameter_mm": float(s.inner_diameter_mm),
             "height_mm": float(s.height_mm), "modulus_factor": s.modulus_factor,
             "feeding_efficiency": s.feeding_efficiency, "unit_cost": s.unit_cost}
            for s in SLEEVES]


def _riser_rows(sc: Scenario) -> list[dict]:
    return [{"pattern": r.pattern, "revision": r.revision,
             "effective_from": r.effective_from.isoformat(), "riser": r.riser, "zone": r.zone,
             "placement": r.placement, "top": r.top, "diameter_mm": float(r.diameter_mm),
             "height_mm": float(r.height_mm), "sleeve": r.sleeve,
             "neck_diameter_mm": r.neck_diameter_mm} for r in sc.risers]


def generate(out_dir, seed: int = 2026, weeks: int = 26,
             end_week: str = "2026-W47") -> dict[str, pathlib.Path]:
    """Write the demo foundry's six CSV files into ``out_dir``; returns name -> path.

    Same ``seed``, ``weeks`` and ``end_week`` give byte-identical files. The
    patterns, zones, sleeves and risers do not depend on the seed; the lots and
    inspections do.
    """
    out = pathlib.Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    sc = build_scenario(int(weeks), end_week)
    rng = np.random.default_rng(int(seed))
    lots = draw_lots(rng, sc)
    inspections = draw_inspections(rng, sc, lots)
    lot_rows = [{k: r[k] for k in COLUMNS["lots"]} | {"poured_on": r["poured_on"].isoformat()}
                for r in lots]
    tables = {"patterns": _pattern_rows(), "zones": _zone_rows(), "sleeves": _sleeve_rows(),
              "risers": _riser_rows(sc), "lots": lot_rows, "inspections": inspections}
    return {name: _write(out / f"{name}.csv", name, rows) for name, rows in tables.items()}


def default_out_dir() -> pathlib.Path:
    """The repository's ``sample_data`` folder."""
    return pathlib.Path(__file__).resolve().parents[2] / "sample_data"
