"""The seeded part of the demo: the pour lots and their inspection records,
drawn by the reject law from the scenario's riser margins. Every draw comes
from one generator in a fixed order, so a seed gives the same files."""

from __future__ import annotations

import datetime as dt
from typing import Any

import numpy as np

from tracker.demo.foundry import INSPECTORS, PATTERNS, POUR_TEMP_C, RADIOGRAPHERS, PatternSpec, ZoneSpec
from tracker.demo.law import (
    BACKGROUND,
    BACKGROUND_CONCENTRATION,
    LOT_CONCENTRATION,
    REWORK_SHARE,
    shrinkage_rate,
)
from tracker.demo.scenario import Scenario

# Per cadence: the chance a pattern is poured in a week, and how many lots then (with their weights).
_CADENCE = {"weekly": (0.95, (1, 2, 3, 4), (0.30, 0.35, 0.25, 0.10)),
            "often": (0.70, (1, 2, 3), (0.50, 0.35, 0.15)),
            "seldom": (0.40, (1, 2), (0.75, 0.25))}
# Days from pouring to inspection, per alloy: [low, high).
_INSPECTION_DELAY_DAYS = {"steel": (3, 8), "ductile_iron": (2, 5), "aluminum": (1, 4)}


def draw_lots(rng: np.random.Generator, sc: Scenario) -> list[dict[str, Any]]:
    """The pour lots of the scenario's weeks, in pouring order: pattern, alloy,
    poured_on (a date), molds, pour_temp_c (°C), lot and heat codes."""
    planned = _plan_pours(rng, sc)
    _number_lots_and_heats(rng, planned, sc.mondays[0].year)
    return planned


def _plan_pours(rng: np.random.Generator, sc: Scenario) -> list[dict[str, Any]]:
    planned: list[dict[str, Any]] = []
    temp_offset = {p.code: float(rng.uniform(-6, 6)) for p in PATTERNS}
    for monday in sc.mondays:
        for p in PATTERNS:
            prob, counts, weights = _CADENCE[p.cadence]
            if rng.random() > prob:
                continue
            n = int(rng.choice(counts, p=weights))
            days = np.sort(rng.choice(5, size=n, replace=True))
            for day in days:
                nominal, lo, hi = POUR_TEMP_C[p.alloy]
                t = float(np.clip(rng.normal(nominal + temp_offset[p.code], 7.0), lo, hi))
                planned.append({"pattern": p.code, "alloy": p.alloy,
                                "poured_on": monday + dt.timedelta(days=int(day)),
                                "molds": int(rng.integers(p.molds[0], p.molds[1] + 1)),
                                "pour_temp_c": round(t)})
    order = {p.code: i for i, p in enumerate(PATTERNS)}
    planned.sort(key=lambda r: (r["poured_on"], order[r["pattern"]]))
    return planned


def _number_lots_and_heats(rng: np.random.Generator, planned: list[dict[str, Any]], first_year: int) -> None:
    """Lot codes run within each ISO week; heats run within each year (from 401 in
    ``first_year``), one heat pouring one to three lots of the same alloy on the same day."""
    seq: dict[str, int] = {}
    heat_no: dict[int, int] = {}
    open_heat: dict[tuple, list] = {}
    for r in planned:
        d: dt.date = r["poured_on"]
        y, w, _ = d.isocalendar()
        key = f"{y % 100:02d}{w:02d}"
        seq[key] = seq.get(key, 0) + 1
        r["lot"] = f"L{key}-{seq[key]:03d}"
        hk = (d, r["alloy"])
        cur = open_heat.get(hk)
        if cur is None or cur[1] <= 0:
            heat_no[d.year] = heat_no.get(d.year, 400 if d.year == first_year else 0) + 1
            cur = [f"H{d.year % 100:02d}-{heat_no[d.year]:04d}", int(rng.integers(1, 4))]
            open_heat[hk] = cur
        r["heat"] = cur[0]
        cur[1] -= 1


def _revision_on(sc_revs: dict, pattern: str, day: dt.date) -> int:
    revs = [rev for rev, eff in sc_revs[pattern] if eff <= day]
    return max(revs)


def _method(rng, alloy: str, defect: str) -> str:
    if defect in ("misrun", "cold_shut", "other"):
        return "visual"
    if defect == "dimensional":
        return "dimensional"
    if alloy == "steel":
        if defect in ("shrinkage", "gas"):
            return "xray" if rng.random() < 0.9 else "visual"
        if defect in ("sand", "slag"):
            return "xray" if rng.random() < 0.5 else "visual"
        if defect == "hot_tear":
            return "xray" if rng.random() < 0.5 else "mt"
        return "mt"
    if alloy == "ductile_iron":
        if defect == "shrinkage":
            return str(rng.choice(["ut", "xray", "visual"], p=[0.6, 0.25, 0.15]))
        if defect == "crack":
            return "mt"
        return "visual"
    if defect in ("shrinkage", "gas"):
        return str(rng.choice(["xray", "pt"], p=[0.7, 0.3]))
    if defect in ("hot_tear", "crack"):
        return "pt"
    return "visual"


_XRAY_CAT = {"gas": "A", "sand": "B", "slag": "B", "crack": "D", "hot_tear": "E"}


def _xray(rng, defect: str, level: int | None) -> tuple[str, int | None]:
    if defect == "shrinkage":
        cat = str(rng.choice(["CA", "CB", "CC", "CD"], p=[0.3, 0.3, 0.25, 0.15]))
    else:
        cat = _XRAY_CAT.get(defect, "B")
    if cat in ("D", "E"):
        return cat, None  # cracks and hot tears are not graded
    lowest = min((level or 2) + 1, 5)  # a reject is graded above the required level
    return cat, int(lowest + rng.binomial(5 - lowest, 0.35))


_NOTES = {
    ("shrinkage", "rework"): "weld repaired, re-shot",
    ("gas", "reject"): "porosity near core print",
    ("sand", "rework"): "ground out, re-inspected",
    ("dimensional", "rework"): "straightened in press",
    ("hot_tear", "rework"): "excavated and welded",
}


def draw_inspections(rng: np.random.Generator, sc: Scenario, lots: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """The inspection records of ``lots``: one accept record per lot, one record
    per rejected or reworked casting, drawn by the reject law."""
    specs = {p.code: p for p in PATTERNS}
    revs: dict[str, list] = {}
    for r in sc.risers:
        if (r.revision, r.effective_from) not in revs.setdefault(r.pattern, []):
            revs[r.pattern].append((r.revision, r.effective_from))
    last_day = sc.mondays[-1] + dt.timedelta(days=6)
    factor = {p.code: p.background_factor * float(rng.uniform(0.6, 1.4)) for p in PATTERNS}
    rows: list[dict[str, Any]] = []
    for lot in lots:
        p = specs[lot["pattern"]]
        n = lot["molds"] * p.castings_per_mold
        rev = _revision_on(revs, p.code, lot["poured_on"])
        delta_t = lot["pour_temp_c"] - POUR_TEMP_C[p.alloy][0]
        cats, probs = _defect_rates(rng, sc, p, rev, delta_t, factor[p.code])
        counts = rng.multinomial(n, np.append(probs, 1.0 - probs.sum()))
        inspected = min(lot["poured_on"] + dt.timedelta(days=int(rng.integers(*_INSPECTION_DELAY_DAYS[p.alloy]))),
                        last_day)
        staff = (str(rng.choice(INSPECTORS)), str(rng.choice(RADIOGRAPHERS)))
        rows += _lot_records(rng, lot, p, n, cats, counts, inspected.isoformat(), staff)
    return rows


def _defect_rates(rng: np.random.Generator, sc: Scenario, p: PatternSpec, rev: int, delta_t: float,
                  factor: float) -> tuple[list[tuple[str, ZoneSpec]], np.ndarray]:
    """This lot's (defect, zone) categories and the chance of each per casting:
    shrinkage per zone by the reject law, then each background defect in a zone
    drawn by volume; scaled down to 0.9 in all where they would sum above it."""
    vols = np.array([z.volume_cm3 for z in p.zones])
    cats: list[tuple[str, ZoneSpec]] = []
    draws: list[float] = []
    for z in p.zones:
        mean = shrinkage_rate(sc.margins[(p.code, rev, z.zone)]["shortfall"], delta_t)
        cats.append(("shrinkage", z))
        draws.append(rng.beta(mean * LOT_CONCENTRATION, (1 - mean) * LOT_CONCENTRATION))
    for defect, base in BACKGROUND[p.alloy].items():
        mean, conc = base * factor, BACKGROUND_CONCENTRATION
        if defect == "gas" and p.gas_rate:
            mean, conc = p.gas_rate, LOT_CONCENTRATION
        z = p.zones[int(rng.choice(len(p.zones), p=vols / vols.sum()))]
        cats.append((defect, z))
        draws.append(rng.beta(mean * conc, (1 - mean) * conc))
    probs = np.array(draws)
    if probs.sum() > 0.9:
        probs *= 0.9 / probs.sum()
    return cats, probs


def _lot_records(rng: np.random.Generator, lot: dict[str, Any], p: PatternSpec, n: int,
                 cats: list[tuple[str, ZoneSpec]], counts: np.ndarray, inspected: str,
                 staff: tuple[str, str]) -> list[dict[str, Any]]:
    """The records of one lot of ``n`` castings: ``counts`` per category of ``cats``
    and, last, the accepted ones; ``staff`` (inspector, radiographer)."""
    inspector, radiographer = staff
    rows: list[dict[str, Any]] = []
    accepted = int(counts[-1])
    if accepted:
        method = "xray" if p.alloy == "steel" else "visual"
        rows.append({"lot": lot["lot"], "inspected_on": inspected,
                     "method": method, "quantity": accepted, "result": "accept",
                     "inspector": radiographer if method == "xray" else inspector,
                     "notes": "first-off approved" if rng.random() < 0.02 else None})
    serials = iter(rng.permutation(n) + 1)
    for (defect, z), c in zip(cats, counts[:-1], strict=False):
        for _ in range(int(c)):
            result = "rework" if rng.random() < REWORK_SHARE[defect] else "reject"
            method = _method(rng, p.alloy, defect)
            cat, sev = _xray(rng, defect, z.xray_level) if method == "xray" else (None, None)
            note = _NOTES.get((defect, result)) if rng.random() < 0.3 else None
            rows.append({"lot": lot["lot"], "inspected_on": inspected,
                         "method": method, "quantity": 1, "result": result,
                         "defect": defect, "zone": z.zone, "xray_category": cat,
                         "severity": sev,
                         "serial": f"{lot['lot']}/{next(serials):03d}"
                         if p.alloy == "steel" else None,
                         "inspector": radiographer if method == "xray" else inspector,
                         "notes": note})
    return rows
