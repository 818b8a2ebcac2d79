"""The thermal check where the rules are used: check, what-if and suggest.

Every solve goes through :func:`solve_case`, which keeps recent results (a
case is a frozen dataclass), so a riser judged twice is solved once.
"""

from __future__ import annotations

import functools
import time

import pandas as pd

from tracker import units
from tracker.errors import NotFound
from tracker.numbers import finite
from tracker.thermal import ThermalCase, ThermalResult, reasons_text, run
from tracker.thermal.cases import case_from_row, pour_temp_for

# `suggest` checks its risers thermally by default when all problem zones'
# solves are expected to take at most this long (the issue: "fits in a minute").
AUTO_BUDGET_S = 60.0
THERMAL_COLUMNS = ("thermal_ok", "thermal_verdict", "last_to_freeze")


@functools.lru_cache(maxsize=128)
def solve_case(case: ThermalCase, cells_across: int | None = None) -> ThermalResult:
    """``run(case)``, kept for reuse."""
    return run(case, cells_across=cells_across)


def row_fields(store, row: dict) -> dict:
    """``fields`` of one riser row, with the pattern's pouring temperature, and its case
    (``thermal_case``, a plain dict the dashboard's view takes)."""
    case = case_from_row(row, pour_temp_for(store, row["pattern"], row["alloy"]))
    return {**fields(solve_case(case)), "thermal_case": case.to_dict()}


def check_row(row: dict, pour_temp_c: float | None = None, mould: str = "silica_sand") -> ThermalResult:
    """The thermal check of one riser row (a ``Store.risers_frame`` row or a candidate built from one)."""
    return solve_case(case_from_row(row, pour_temp_c, mould))


def fields(result: ThermalResult) -> dict:
    """The few figures that go beside a riser's rule margins."""
    return {"thermal_ok": bool(result.thermal_ok), "thermal_verdict": result.verdict,
            "last_to_freeze": result.last_to_freeze,
            "freeze_ratio": finite(result.freeze_ratio), "isolated_liquid": bool(result.isolated_liquid),
            "min_niyama": finite(result.min_niyama)}


def thermal_columns(store, judged: pd.DataFrame, columns=THERMAL_COLUMNS) -> pd.DataFrame:
    """``judged`` (rows with pattern, revision, riser) with the thermal check's ``columns``
    (any of :func:`fields`' keys) added."""
    out = judged.copy()
    for c in columns:
        out[c] = None
    if judged.empty:
        return out
    rows = pd.concat([store.risers_frame(pattern=p) for p in judged["pattern"].unique()], ignore_index=True)
    rows = rows.set_index(["pattern", "revision", "riser"])
    temps = {}
    for i, r in judged.iterrows():
        key = (r["pattern"], r["revision"], r["riser"])
        row = rows.loc[key].to_dict()
        row.update(zip(("pattern", "revision", "riser"), key, strict=False))
        if r["pattern"] not in temps:
            temps[r["pattern"]] = pour_temp_for(store, r["pattern"], row["alloy"])
        found = fields(check_row(row, temps[r["pattern"]]))
        for k in columns:
            out.at[i, k] = found[k]
    return out


@functools.lru_cache(maxsize=1)
def reference_solve_s() -> float:
    """Wall time of one solve at the default resolution on this machine (measured once)."""
    case = ThermalCase("steel", "top", 50.0, 300.0, 300.0, 155.0, 155.0)
    t0 = time.perf_counter()
    run(case, keep_maps=False)
    return time.perf_counter() - t0


def auto_enabled(zones: int, budget_s: float = AUTO_BUDGET_S) -> bool:
    """Whether ``zones`` solves are expected to fit in ``budget_s``."""
    return zones == 0 or zones * reference_solve_s() <= budget_s


def first_passing(rows: list[dict], pour_temp_c: float | None = None) -> tuple[int | None, list]:
    """Index of the first row (in the caller's order of preference) that passes
    the thermal check, and the results solved on the way (None where none passes)."""
    results = []
    for i, row in enumerate(rows):
        r = check_row(row, pour_temp_c)
        results.append(r)
        if r.thermal_ok:
            return i, results
    return None, results


def changed_row(store, pattern: str, revision: str, riser: str, diameter_mm: float,
                height_mm: float | None = None, sleeve: str | None = None,
                neck_diameter_mm: float | None = None) -> dict:
    """The stored riser row with a changed diameter, height, sleeve (catalogue code or
    None for bare) and, where given, neck."""
    rows = store.risers_frame(pattern=pattern, revision=revision)
    hit = rows[rows["riser"] == riser]
    if hit.empty:
        raise NotFound("riser", riser, f"{pattern} revision {revision} has " + ", ".join(rows["riser"]))
    row = hit.iloc[0].to_dict()
    row.update(diameter_mm=float(diameter_mm), height_mm=float(height_mm or row["height_mm"]))
    row["sleeve_factor"] = float(store.sleeve(sleeve)["modulus_factor"]) if sleeve else None
    if neck_diameter_mm is not None:
        row["neck_diameter_mm"] = float(neck_diameter_mm)
    return row


def what_if_fields(store, result: dict) -> dict:
    """``row_fields`` of the changed riser of a what-if result (``tracker.advice.suggest.what_if``)."""
    row = changed_row(store, result["pattern"], result["revision"], result["riser"], result["diameter_mm"],
                      result.get("height_mm"), result.get("sleeve"), result.get("neck_diameter_mm"))
    return row_fields(store, row)


def suggestion_row(store, suggestion: dict) -> dict | None:
    """The riser row a suggestion proposes (None where it proposes no riser)."""
    s = suggestion
    if s.get("suggested_diameter_mm") is None or not s.get("riser"):
        return None
    return changed_row(store, s["pattern"], s["revision"], s["riser"], s["suggested_diameter_mm"],
                       s.get("suggested_height_mm"), s.get("suggested_sleeve"),
                       s.get("suggested_neck_diameter_mm"))


def check_suggestions(store, suggestions: list[dict]) -> list[dict | None]:
    """The thermal check (``fields``) of each suggestion's proposed riser, None where it proposes none."""
    out = []
    for s in suggestions:
        row = suggestion_row(store, s)
        out.append(None if row is None else
                   fields(check_row(row, pour_temp_for(store, s["pattern"], row["alloy"]))))
    return out


# --- suggest: the thermal filter before the choice ------------------------------------

MAX_SOLVES_PER_ZONE = 6


def _zone_notes(priced: pd.DataFrame, choose, failed: dict, original: pd.Series,
                system: str, unsure: dict | None = None) -> dict:
    """A note per zone on its thermal check; a zone where every candidate tried failed
    gets its rule-based ``full_ok`` back from ``original`` (in ``priced``); ``unsure`` the
    reasons of a zone whose candidate was inconclusive."""
    unsure = unsure or {}
    notes = {}
    chosen = choose(priced)
    for z, c in chosen.iterrows():
        ok = priced.at[c["_cand"], "thermal_ok"]
        fails = failed.get(z, [])
        if priced.at[c["_cand"], "thermal_verdict"] == "inconclusive":
            notes[z] = (" Thermal check: inconclusive (" + "; ".join(unsure.get(z, [])) + "); neither passed "
                        "nor refuted: confirm it by a full solidification simulation or a trial pour.")
        elif ok is True and not fails:
            notes[z] = (" Thermal check: passes (the riser freezes last, nothing cut off, Niyama at or above "
                        "the threshold where one applies).")
        elif ok is True:
            first = fails[0]
            notes[z] = (f" Thermal check: the first choice ({first[0]}, {units.say('diameter_mm', first[1], system)}) "
                        "fails (" + "; ".join(first[2]) + "); this is the next candidate that passes"
                        + (f" ({len(fails)} failed before it)." if len(fails) > 1 else "."))
        elif fails:
            # none tried passes: keep the rule-based choice, say so
            zone_c = priced["_z"] == z
            priced.loc[zone_c, "full_ok"] = original[zone_c]
            notes[z] = (f" Thermal check: none of the {len(fails)} candidates tried passes ("
                        + "; ".join(fails[0][2]) + "); the rule-based choice stands: confirm it by a full "
                        "solidification simulation or a trial pour.")
    return notes


def narrow(store, priced: pd.DataFrame, cands: pd.DataFrame, choose,
           max_solves: int = MAX_SOLVES_PER_ZONE, system: str = "metric") -> tuple[pd.DataFrame, dict]:
    """The thermal check before ``choose`` (``tracker.advice.suggest``'s choice of one candidate per zone).

    The candidate ``choose`` takes for a zone is solved; where it fails, it no
    longer counts as passing every rule and the next one ``choose`` takes is
    solved, up to ``max_solves`` per zone. Where none tried passes, the zone
    keeps its rule-based choice. An inconclusive candidate (a margin inside the
    solver's error) ends the search: neither passed nor refuted, it stands with
    a note to confirm it. ``priced`` is indexed by candidate (``_cand``)
    with the zone in ``_z``; ``cands`` holds each candidate's riser row.
    Returns (priced with ``thermal_ok`` and ``last_to_freeze``, a note per zone).
    """
    priced = priced.copy()
    priced["thermal_ok"] = None
    priced["thermal_verdict"] = None
    priced["last_to_freeze"] = None
    rows = cands.set_index("_cand")
    pours: dict = {}
    tries: dict = {}
    failed: dict = {}
    unsure: dict = {}
    done: set = set()
    original = priced["full_ok"].copy()
    while True:
        chosen = choose(priced)
        work = [(z, c) for z, c in chosen.iterrows() if z not in done]
        if not work:
            break
        for z, c in work:
            cand = c["_cand"]
            if priced.at[cand, "thermal_ok"] is not None or int(c["tier"]) == 2:
                done.add(z)
                continue
            row = rows.loc[cand].to_dict()
            key = (row["pattern"], row["alloy"])
            if key not in pours:
                pours[key] = pour_temp_for(store, *key)
            r = check_row(row, pours[key])
            priced.at[cand, "thermal_ok"] = bool(r.thermal_ok)
            priced.at[cand, "thermal_verdict"] = r.verdict
            priced.at[cand, "last_to_freeze"] = r.last_to_freeze
            tries[z] = tries.get(z, 0) + 1
            if r.thermal_ok or r.verdict == "inconclusive":
                done.add(z)
                if not r.thermal_ok:
                    unsure[z] = reasons_text(r, system)
                continue
            failed.setdefault(z, []).append((row.get("action"), row["diameter_mm"], reasons_text(r, system)))
            priced.at[cand, "full_ok"] = False
            if tries[z] >= max_solves:
                done.add(z)
    notes = _zone_notes(priced, choose, failed, original, system, unsure)
    return priced, notes


def suggest_filter(store, priced: pd.DataFrame, cands: pd.DataFrame, zones: int, thermal: bool | None,
                   choose, system: str = "metric") -> tuple[pd.DataFrame, dict]:
    """``narrow`` where ``thermal`` is True, or where it is None (the default) and the
    ``zones`` solves are expected to fit in AUTO_BUDGET_S; else ``priced`` as it is,
    with a note per zone where the default left the check out."""
    if not len(priced) or thermal is False:
        return priced, {}
    if thermal is None and not auto_enabled(zones):
        note = (f" Thermal check not run: {zones} zones would take about "
                f"{zones * reference_solve_s():.0f} s, over the {AUTO_BUDGET_S:.0f} s a default run allows "
                "(ask for it with --thermal).")
        return priced, {z: note for z in priced["_z"].unique()}
    return narrow(store, priced, cands, choose, system=system)
