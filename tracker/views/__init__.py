"""Tables shaped for display: pure functions over a Store and pandas frames.

The dashboard (``dashboard/``) shows what these return and computes nothing
itself. Nothing here imports streamlit or prints. Column names of the
display tables carry their unit ("castings", "mm", "%", "kg") so a table
never shows a bare number.

Rates: functions returning ``*_pct`` columns give percentages (0..100);
every other rate is a fraction (0..1), as in ``tracker.review.stats``.

Unit systems: a display function that shows lengths, areas, volumes or
masses takes ``system`` (``"metric"``, the default, or ``"us"``); its
unit-bearing labels then name the unit of that system
(``units.symbol``) and its values are converted (``units.to_system``).
The constants below name the metric labels; :func:`label` gives a label
in another system.
"""

from __future__ import annotations

import datetime as dt
import math
import os
import pathlib

import numpy as np
import pandas as pd

from tracker import units
from tracker.design import rules
from tracker.design.alloys import ALLOYS
from tracker.design.assess import assess_frame, caine_curve_points, revision_in_effect
from tracker.errors import BadRow, NotFound
from tracker.log.ingest import COLUMNS as IMPORT_COLUMNS
from tracker.log.ingest import METHODS
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.log.store import Store, data_version
from tracker.review import stats

NONE = "(none)"  # the "no value" choice of an optional picker


# --- data version (cache key) ------------------------------------------------------

def db_version(path: str | os.PathLike) -> tuple:
    """A value that changes whenever the log changes (see :func:`tracker.log.store.data_version`)."""
    return data_version(str(path))


# --- unit systems ---------------------------------------------------------------------

# Display labels whose unit converts, with the metric quantity each holds
# (a name ``tracker.units`` knows by its suffix).
UNIT_LABELS = {
    "diameter (mm)": "diameter_mm", "height (mm)": "height_mm", "riser weight (kg)": "riser_weight_kg",
    "zone modulus (cm)": "modulus_cm", "riser modulus (cm)": "modulus_cm",
    "thickness (mm)": "thickness_mm", "width (mm)": "width_mm", "feeding length (mm)": "length_mm",
    "modulus (cm)": "modulus_cm", "volume (cm³)": "volume_cm3", "cooling area (cm²)": "cooling_area_cm2",
    "now: diameter (mm)": "diameter_mm", "suggested: diameter (mm)": "diameter_mm",
    "added metal (kg per mold)": "metal_kg",
}


def label(metric_label: str, system: str = units.METRIC) -> str:
    """A display label in ``system``: ``label("diameter (mm)", "us") == "diameter (in)"``;
    labels without a unit that converts are returned as they are."""
    name = UNIT_LABELS.get(metric_label)
    if name is None or system != units.US:
        return metric_label
    return metric_label.replace(f"({units.symbol(name, units.METRIC)}", f"({units.symbol(name, system)}", 1)


def labels(metric_labels, system: str = units.METRIC) -> list[str]:
    """:func:`label` of each."""
    return [label(c, system) for c in metric_labels]


def in_system(frame: pd.DataFrame, system: str = units.METRIC) -> pd.DataFrame:
    """A display table with metric labels (``UNIT_LABELS``) in ``system``: the
    unit-bearing columns converted and relabelled (a copy; metric: as it is)."""
    if system != units.US:
        return frame
    out = frame.copy()
    for col in out.columns:
        if col in UNIT_LABELS:
            out[col] = units.to_system(UNIT_LABELS[col], pd.to_numeric(out[col], errors="coerce"), system)
    return out.rename(columns={c: label(c, system) for c in out.columns})


def length_text(mm, system: str = units.METRIC, digits: int | None = None) -> str:
    """A length in mm as text in ``system`` without its unit: "140" mm, "5.51" in.
    Whole millimetres or, in inches, to 2 decimals (``digits`` to choose)."""
    v = units.to_system("length_mm", float(mm), system)
    if digits is None:
        return f"{v:.2f}".rstrip("0").rstrip(".") if system == units.US else f"{v:g}"
    return f"{v:.{digits}f}"


# --- what the log holds ------------------------------------------------------------

def start_state(store: Store) -> dict:
    """Counts of each table and what is missing before a page can show results.

    ``ready`` is True when there are patterns, lots and inspections;
    ``missing`` lists the import kinds still empty, in import order.
    """
    counts = store.quick_counts()
    missing = [k for k in ("patterns", "zones", "risers", "lots", "inspections") if counts.get(k, 0) == 0]
    return {"counts": counts, "missing": missing,
            "ready": all(counts.get(k, 0) > 0 for k in ("patterns", "lots", "inspections")),
            "has_design": counts.get("risers", 0) > 0}


def pattern_options(store: Store) -> pd.DataFrame:
    """Patterns with alloy and description, and a picker label."""
    p = store.table("patterns")
    if p.empty:
        return pd.DataFrame(columns=["pattern", "alloy", "description", "label"])
    p = p[["pattern", "alloy", "description"]].copy()
    p["label"] = p["pattern"] + " · " + p["description"].fillna("") + " (" + p["alloy"] + ")"
    return p.reset_index(drop=True)


def alloy_options(store: Store) -> list[str]:
    """Alloys that at least one pattern is poured in, sorted."""
    p = store.table("patterns")
    return sorted(p["alloy"].dropna().unique().tolist()) if not p.empty else []


def lot_options(store: Store, limit: int = 2000) -> pd.DataFrame:
    """The newest ``limit`` lots with pattern, pour date and castings poured, and a picker label."""
    codes = store.lot_codes(limit=limit)
    if not codes:
        return pd.DataFrame(columns=["lot", "pattern", "poured_on", "castings", "label"])
    info = store.lots_info(codes)
    rows = [{"lot": c, **info[c]} for c in codes if c in info]
    out = pd.DataFrame(rows, columns=["lot", "pattern", "poured_on", "castings"])
    out["label"] = (out["lot"] + " · " + out["pattern"] + " · poured " + out["poured_on"]
                    + " · " + out["castings"].astype(int).astype(str) + " castings")
    return out


def zone_options(store: Store, pattern: str | None) -> list[str]:
    """The zones of ``pattern`` (empty list for None or an unknown pattern)."""
    if not pattern:
        return []
    return sorted(z for (p, z) in store.zone_levels(pattern) if p == pattern)


# --- logging -------------------------------------------------------------------------

def form_record(values: dict) -> dict:
    """An inspection record for ``log_inspection`` from form values.

    Blank strings and the ``NONE`` choice become None, dates become ISO
    strings, text is stripped. Keys outside the inspection columns are
    dropped, so the library validates exactly what the form sent.
    """
    required, optional = IMPORT_COLUMNS["inspections"]
    out = {}
    for key in required + optional:
        v = values.get(key)
        if isinstance(v, (dt.date, dt.datetime)):
            v = v.isoformat()[:10]
        if isinstance(v, str):
            v = v.strip()
            if v == "" or v == NONE:
                v = None
        if isinstance(v, float) and math.isnan(v):
            v = None
        out[key] = v
    return out


METHOD_WORDS = {"visual": "visual", "xray": "x-ray", "ut": "ultrasonic (UT)", "mt": "magnetic particle (MT)",
                "pt": "dye penetrant (PT)", "dimensional": "dimensional"}


def lot_accounting(store: Store, lot: str) -> dict:
    """What the log already holds for ``lot``: castings poured, castings accounted for by
    each inspection method (current records) and how many are left per method (no
    method may inspect more castings than were poured), and rejects so far.

    Returns ``castings``, ``rejected``, ``rejects_left`` and ``methods``, a frame with
    method, "accounted (castings)" and "left (castings)", one row per method.
    """
    info = store.lots_info([lot])
    if lot not in info:
        raise NotFound("lot", lot, "pick a lot from the list, or import it first (lots.csv)")
    castings = int(info[lot]["castings"])
    t = store.lot_totals([lot]).get(lot, {"rejected": 0, "methods": {}})
    done = [int(t["methods"].get(m, 0)) for m in METHODS]
    methods = pd.DataFrame({"method": list(METHODS), "accounted (castings)": done,
                            "left (castings)": [max(castings - d, 0) for d in done]})
    return {"castings": castings, "rejected": int(t["rejected"]),
            "rejects_left": max(castings - int(t["rejected"]), 0), "methods": methods}


HISTORY_COLUMNS = {
    "id": "record", "lot": "lot", "inspected_on": "inspected on", "method": "method",
    "quantity": "quantity (castings)", "result": "result", "defect": "defect", "zone": "zone",
    "recorded_by": "recorded by", "status": "status", "xray_category": "x-ray category",
    "severity": "severity (1-5)", "inspector": "inspector", "notes": "notes",
    "recorded_at": "recorded at (UTC)", "source": "source",
}


# The columns a reader needs first; the rest behind a toggle on a narrow screen.
HISTORY_FIRST = ["id", "lot", "inspected_on", "method", "quantity", "result", "defect", "zone", "recorded_by",
                 "status"]


def latest_records(store: Store, limit: int = 50, full: bool = True) -> pd.DataFrame:
    """The newest ``limit`` inspection records for display, with a status column
    (``full`` False: only the columns that matter first, HISTORY_FIRST)."""
    keys = list(HISTORY_COLUMNS) if full else HISTORY_FIRST
    h = store.inspections_history(limit=limit)
    if h.empty:
        return pd.DataFrame(columns=[HISTORY_COLUMNS[k] for k in keys])
    status = np.where(h["superseded_by"].isna(),
                      np.where(h["void"].astype(bool), "withdrawn", "current"),
                      "superseded by " + h["superseded_by"].astype("Int64").astype(str))
    h = h.assign(status=status)
    h["severity"] = h["severity"].astype("Int64")
    return h[keys].rename(columns=HISTORY_COLUMNS).reset_index(drop=True)


def problems_frame(problems: list[BadRow]) -> pd.DataFrame:
    """The refused rows of an import, in file order: row number (header = row 1), column, reason."""
    t = pd.DataFrame([{"row": p.row, "column": p.column, "reason": p.reason} for p in problems],
                     columns=["row", "column", "reason"])
    return t.sort_values("row", kind="stable").reset_index(drop=True)


# --- weeks -------------------------------------------------------------------------

def week_options(store: Store) -> list[str]:
    """ISO weeks from the first to the last pour, newest first."""
    first, last = store.pour_span()
    if not first:
        return []
    start = stats.week_start(stats.iso_week(first))
    end = stats.week_start(stats.iso_week(last))
    n = (end - start).days // 7 + 1
    return [stats.iso_week(end - dt.timedelta(weeks=i)) for i in range(n)]


def pattern_weekly(store: Store, pattern: str, start: str | None = None,
                   end: str | None = None) -> pd.DataFrame:
    """One pattern's pours and rejects per ISO week of pour, every week in between included.

    Counted as the weekly review counts (``tracker.review.weekly``): a casting is
    *inspected* when its lot holds a current inspection record; rates are
    castings rejected / castings inspected. Columns: week, week_start (the
    Monday, a date), lots, poured, inspected, rejected, shrinkage_rejected
    (castings), reject_rate_pct and shrinkage_rate_pct (%; NaN in a week
    with nothing inspected).
    """
    store.pattern(pattern)  # NotFound with a hint for an unknown pattern
    cols = ["week", "week_start", "lots", "poured", "inspected", "rejected", "shrinkage_rejected",
            "reject_rate_pct", "shrinkage_rate_pct"]
    counts = ["lots", "poured", "inspected", "rejected", "shrinkage_rejected"]
    pours = store.pours_by_day(start, end, pattern)
    if pours.empty:
        return pd.DataFrame(columns=cols)
    pours["week"] = stats.iso_week(pours["poured_on"]).to_numpy()
    w = (pours.groupby("week")[["lots", "castings", "inspected_castings"]].sum()
         .rename(columns={"castings": "poured", "inspected_castings": "inspected"}))
    rej = store.rejects_by_day(start, end, pattern)
    rej = rej[rej["result"] == "reject"]
    if not rej.empty:
        rej = rej.assign(week=stats.iso_week(rej["poured_on"]).to_numpy(),
                         shrink=np.where(rej["defect"] == "shrinkage", rej["quantity"], 0))
        g = rej.groupby("week")
        w["rejected"] = g["quantity"].sum()
        w["shrinkage_rejected"] = g["shrink"].sum()
    first, last = stats.week_start(w.index.min()), stats.week_start(w.index.max())
    weeks = [stats.iso_week(first + dt.timedelta(weeks=i)) for i in range((last - first).days // 7 + 1)]
    w = w.reindex(weeks).rename_axis("week").reset_index()
    for c in counts:
        w[c] = pd.to_numeric(w.get(c, 0), errors="coerce").fillna(0).astype(np.int64)
    w["week_start"] = [stats.week_start(x) for x in w["week"]]
    seen = w["inspected"] > 0
    w["reject_rate_pct"] = (100.0 * w["rejected"] / w["inspected"]).where(seen)
    w["shrinkage_rate_pct"] = (100.0 * w["shrinkage_rejected"] / w["inspected"]).where(seen)
    return w[cols]


# --- pattern file ------------------------------------------------------------------

DESIGN_COLUMNS = {
    "revision": "revision", "effective_from": "effective from", "riser": "riser", "zone": "zone",
    "placement": "placement", "top": "top", "diameter_mm": "diameter (mm)", "height_mm": "height (mm)",
    "sleeve": "sleeve", "section_modulus_cm": "zone modulus (cm)", "riser_modulus_cm": "riser modulus (cm)",
    "modulus_ratio": "modulus ratio", "caine_margin": "Caine margin", "feed_margin": "feed margin",
    "riser_weight_kg": "riser weight (kg)", "rule_set": "rule set", "passes": "passes all rules",
    "failed_rules": "failed rules", "notes": "notes",
}


# The two halves of ``risers_by_revision``, for two narrower tables.
DESIGN_PART = ["revision", "effective from", "riser", "zone", "placement", "top", "diameter (mm)",
               "height (mm)", "sleeve", "riser weight (kg)"]
MARGIN_PART = ["revision", "riser", "zone", "passes all rules", "failed rules", "modulus ratio", "Caine margin",
               "feed margin", "rule set", "zone modulus (cm)", "riser modulus (cm)", "notes"]  # verdict first


def design_part(system: str = units.METRIC) -> list[str]:
    """DESIGN_PART's columns in ``system``."""
    return labels(DESIGN_PART, system)


def margin_part(system: str = units.METRIC) -> list[str]:
    """MARGIN_PART's columns in ``system``."""
    return labels(MARGIN_PART, system)


def pattern_summary(store: Store, pattern: str) -> dict:
    """A pattern's master data, its revisions and its pour totals (castings; rate in %
    of castings inspected, as the weekly review counts)."""
    p = store.pattern(pattern)
    w = pattern_weekly(store, pattern)
    poured, inspected, rejected = (int(w[c].sum()) if not w.empty else 0
                                   for c in ("poured", "inspected", "rejected"))
    lots = store.lots_frame(pattern=pattern)
    alloy = ALLOYS.get(p.get("alloy"))
    return {**p, "alloy_name": alloy.name if alloy else p.get("alloy"),
            "lots": int(len(lots)), "poured": poured, "inspected": inspected, "rejected": rejected,
            "reject_rate_pct": 100.0 * rejected / inspected if inspected else float("nan"),
            "first_pour": lots["poured_on"].min() if not lots.empty else None,
            "last_pour": lots["poured_on"].max() if not lots.empty else None,
            "revisions": store.revisions_frame(pattern).to_dict("records")}


ZONE_COLUMNS = {  # the feeding-distance geometry first: it must show at a tablet's width
    "zone": "zone", "thickness_mm": "thickness (mm)", "width_mm": "width (mm)",
    "length_mm": "feeding length (mm)", "section": "section", "modulus_cm": "modulus (cm)",
    "volume_cm3": "volume (cm³)", "cooling_area_cm2": "cooling area (cm²)", "required_xray_level": "x-ray level",
}


def pattern_zones(store: Store, pattern: str, system: str = units.METRIC) -> pd.DataFrame:
    """The zones of ``pattern`` for display: size, modulus V/A, thickness, width,
    feeding length and the section's shape for the feeding distance (bar or
    plate by width over thickness; blank where either is missing); in ``system``."""
    store.pattern(pattern)
    z = store.zones_frame(pattern)
    z["modulus_cm"] = z["volume_cm3"].astype(float) / z["cooling_area_cm2"].astype(float)
    z["section"] = rules.section_shape(z["thickness_mm"].astype(float), z["width_mm"].astype(float))
    return in_system(z[list(ZONE_COLUMNS)].rename(columns=ZONE_COLUMNS), system)


def risers_by_revision(store: Store, pattern: str, system: str = units.METRIC) -> pd.DataFrame:
    """Every riser of every revision of ``pattern`` with its rule margins, for display.

    Margins as ``tracker.design.assess.assess_frame``: modulus ratio = effective riser
    modulus / zone modulus (rule: 1.2 or more); Caine margin = freezing ratio
    above the curve (0 or more passes; blank where the alloy has no
    constants); feed margin = feed volume held above the need, as a fraction
    of the need (0 or more passes). Sizes and weights in ``system``
    (``design_part`` and ``margin_part`` name its two halves' columns).
    """
    store.pattern(pattern)
    r = store.risers_frame(pattern=pattern)
    if r.empty:
        return pd.DataFrame(columns=labels(DESIGN_COLUMNS.values(), system))
    a = assess_frame(r)
    a["effective_from"] = r["effective_from"].to_numpy()
    a["sleeve"] = a["sleeve"].fillna("none")
    a["caine_margin"] = a["caine_margin"].where(a["caine_applied"].astype(bool))
    a["failed_rules"] = a["failed_rules_text"].replace("", "none")
    a["rule_set"] = a["rule_set"].str.replace("_", " ")
    a = a.sort_values(["effective_from", "revision", "riser"], kind="stable")
    return in_system(a[list(DESIGN_COLUMNS)].rename(columns=DESIGN_COLUMNS).reset_index(drop=True), system)


def revision_marks(store: Store, pattern: str) -> pd.DataFrame:
    """Revision codes, their effective dates (as dates) and ISO weeks, for marking a time axis."""
    r = store.revisions_frame(pattern)
    r = r.assign(effective_from=pd.to_datetime(r["effective_from"]).dt.date,
                 label="revision " + r["revision"].astype(str))
    r["week"] = [stats.iso_week(d) for d in r["effective_from"]]
    return r[["revision", "effective_from", "week", "label"]].reset_index(drop=True)


# --- design map ----------------------------------------------------------------------

def caine_curve(store: Store, alloy: str, y_max: float = 3.0, x_max: float = 10.0,
                n: int = 200) -> pd.DataFrame | None:
    """Caine's curve for ``alloy`` with the constants the log holds, or None without constants.

    Volume ratio Y runs from just above b to ``y_max``; the part of the curve
    whose freezing ratio X lies above ``x_max`` is cut, so the plot is not
    squeezed by the asymptote at Y = b.
    """
    alloys = store.table("alloys").set_index("alloy")
    if alloy not in alloys.index:
        raise NotFound("alloy", alloy, "known alloys are " + ", ".join(alloys.index))
    row = alloys.loc[alloy]
    if pd.isna(row["caine_a"]):
        return None
    pts = caine_curve_points(float(row["caine_a"]), float(row["caine_b"]), float(row["caine_c"]),
                             y_max=max(float(y_max), float(row["caine_b"]) * 2 + 0.05), n=n)
    pts = pts[pts["freezing_ratio"] <= float(x_max)].reset_index(drop=True)
    pts["alloy"] = alloy
    return pts


def current_revisions(store: Store, on: str | None = None) -> dict[str, str]:
    """{pattern: revision in effect on ``on``} (default today), for telling a design in
    use from one a later revision superseded."""
    on = on or dt.date.today().isoformat()
    cur = revision_in_effect(store.revisions_frame(), on)
    return dict(zip(cur["pattern"], cur["revision"].astype(str), strict=False)) if not cur.empty else {}


SUPERSEDED = "superseded by a later revision"
IN_USE = "in use"
IN_USE_FLAGGED = "in use, pattern flagged"


def filter_design_map(frame: pd.DataFrame, alloy: str | None = None,
                      patterns: list[str] | None = None, current: dict | None = None,
                      flagged=None) -> pd.DataFrame:
    """Rows of a design map (``tracker.advice.features.design_map``) for one alloy and some patterns.

    Adds shrinkage_rate_pct (% of castings poured rejected for shrinkage)
    when the frame has shrinkage_rate; rows without a volume or freezing
    ratio are dropped (nothing to place on the map). With ``current``
    ({pattern: revision in use}, :func:`current_revisions`) a row of another
    revision is ``superseded``; ``flagged`` (pattern codes, e.g. the review's
    problems) marks the patterns the review flags. ``design`` says which of
    "in use", "in use, pattern flagged" or "superseded by a later revision" a
    row is.
    """
    f = frame
    if alloy is not None and "alloy" in f:
        f = f[f["alloy"] == alloy]
    if patterns:
        f = f[f["pattern"].isin(list(patterns))]
    f = f.dropna(subset=[c for c in ("volume_ratio", "freezing_ratio") if c in f])
    f = f.copy()
    for key in ("shrinkage_rate", "wilson_low", "wilson_high"):
        if key in f:
            f[f"{key}_pct"] = _pct(f[key])
    if "passes" in f:
        f["rules_text"] = np.where(f["passes"].astype(bool), "passes every rule", "fails a rule")
        if "rule_set" in f:  # which rule set judged it: pressure control for ductile iron
            f["rules_text"] = f["rules_text"] + " (" + f["rule_set"].fillna("").astype(str).str.replace(
                "_", " ") + ")"
    if current is not None and "revision" in f:
        f["superseded"] = [current.get(p) not in (None, str(r)) for p, r in zip(f["pattern"], f["revision"], strict=False)]
    else:
        f["superseded"] = False
    f["flagged"] = f["pattern"].isin(list(flagged or []))
    f["design"] = np.where(f["superseded"], SUPERSEDED, np.where(f["flagged"], IN_USE_FLAGGED, IN_USE))
    return f.reset_index(drop=True)


def design_map_summary(frame: pd.DataFrame) -> dict:
    """Zones, castings and shrinkage rejects on a (filtered) design map, how many of
    the zones' risers in use fail a rule (superseded revisions are counted apart), and
    the highest shrinkage rate shown (%)."""
    if frame.empty:
        return {"zones": 0, "castings": 0, "shrinkage_rejects": 0, "failing": 0, "superseded": 0,
                "flagged_patterns": 0, "rate_pct": float("nan"), "max_rate_pct": 0.0}
    castings = int(frame["castings"].sum())
    rejects = int(frame["shrinkage_rejects"].sum())
    old = frame["superseded"].astype(bool) if "superseded" in frame else pd.Series(False, index=frame.index)
    fails = ~frame["passes"].astype(bool) if "passes" in frame else pd.Series(False, index=frame.index)
    rates = frame["shrinkage_rate_pct"] if "shrinkage_rate_pct" in frame else _pct(frame["shrinkage_rate"])
    return {"zones": int(len(frame)), "castings": castings, "shrinkage_rejects": rejects,
            "failing": int((fails & ~old).sum()), "superseded": int(old.sum()),
            "flagged_patterns": int(frame.loc[frame.get("flagged", pd.Series(False, index=frame.index))
                                               .astype(bool), "pattern"].nunique()),
            "rate_pct": 100.0 * rejects / castings if castings else float("nan"),
            "max_rate_pct": float(np.nanmax(rates.to_numpy(float))) if len(rates) else 0.0}


DESIGN_MAP_TABLE = {
    "pattern": "pattern", "zone": "zone", "shrinkage_rate_pct": "shrinkage rate (%)",
    "castings": "castings poured", "rules_text": "rules", "design": "design",
    "revision": "revision", "riser": "riser", "shrinkage_rejects": "shrinkage (castings)",
    "volume_ratio": "volume ratio", "freezing_ratio": "freezing ratio",
    "caine_margin": "Caine margin", "feed_margin": "feed margin",
}
DESIGN_MAP_FIRST = 6  # pattern .. design: what a narrow screen shows first


def design_map_table(frame: pd.DataFrame, full: bool = True) -> pd.DataFrame:
    """A filtered design map as a table, worst shrinkage rate first; designs in use
    before superseded ones (``full`` False: the columns that matter first)."""
    keys = list(DESIGN_MAP_TABLE)[:None if full else DESIGN_MAP_FIRST]
    cols = [c for c in keys if c in frame]
    if frame.empty:
        return pd.DataFrame(columns=[DESIGN_MAP_TABLE[c] for c in cols] or [DESIGN_MAP_TABLE[k] for k in keys])
    f = frame.assign(_old=frame["superseded"] if "superseded" in frame else False)
    f = f.sort_values(["_old", "shrinkage_rate_pct", "castings"], ascending=[True, False, False], kind="stable")
    return f[cols].rename(columns=DESIGN_MAP_TABLE).reset_index(drop=True)


# --- suggestions ---------------------------------------------------------------------

MONEY_UNIT = "currency units/year"
SUGGESTION_COLUMNS = {
    "pattern": "pattern", "zone": "zone", "riser": "riser", "action": "action",
    "current_diameter_mm": "now: diameter (mm)", "current_sleeve": "now: sleeve",
    "suggested_diameter_mm": "suggested: diameter (mm)", "suggested_sleeve": "suggested: sleeve",
    "reject_rate_pct": "observed now (%)", "predicted_rate_now_pct": "predicted now (%)",
    "predicted_rate_after_pct": "predicted after (%)",
    "added_metal_kg_per_mold": "added metal (kg per mold)",
    "yield_before_pct": "yield now (%)", "yield_after_pct": "yield after (%)",
    "scrap_saved_per_year": f"scrap saved ({MONEY_UNIT})", "extra_cost_per_year": f"extra cost ({MONEY_UNIT})",
    "yearly_balance": f"balance ({MONEY_UNIT})", "pays_off": "pays off", "reason": "why",
}
# The two halves of ``suggestions_table``: what to change, and what it brings.
CHANGE_PART = ["pattern", "zone", "riser", "action", "now: diameter (mm)", "now: sleeve",
               "suggested: diameter (mm)", "suggested: sleeve"]
BALANCE_PART = ["pattern", "zone", "observed now (%)", "predicted now (%)", "predicted after (%)",
                f"balance ({MONEY_UNIT})", "pays off", f"scrap saved ({MONEY_UNIT})", f"extra cost ({MONEY_UNIT})",
                "added metal (kg per mold)", "yield now (%)", "yield after (%)"]


def _pct(series: pd.Series) -> pd.Series:
    return 100.0 * pd.to_numeric(series, errors="coerce")


def money_per_year(code: str | None) -> str:
    """The unit of a yearly money column: "EUR/year" (the log's currency code)."""
    return f"{code or DEFAULT_CURRENCY}/year"


def with_currency(columns: list[str], code: str | None) -> list[str]:
    """Column headings with the placeholder money unit replaced by the log's currency."""
    return [c.replace(MONEY_UNIT, money_per_year(code)) for c in columns]


def change_part(system: str = units.METRIC) -> list[str]:
    """CHANGE_PART's columns in ``system``."""
    return labels(CHANGE_PART, system)


def balance_part(code: str | None = None, system: str = units.METRIC) -> list[str]:
    """BALANCE_PART's columns in ``system``, money headed with the currency ``code``."""
    cols = labels(BALANCE_PART, system)
    return with_currency(cols, code) if code else cols


def suggestions_table(suggestions: list[dict], currency: str | None = None,
                      system: str = units.METRIC) -> pd.DataFrame:
    """Suggestions (``tracker.advice.suggest.suggest``) as a display table, rates and yields in %,
    diameters and added metal in ``system``.

    Money columns are headed "(CODE/year)" with the log's ``currency`` code
    when it is given, else with the placeholder ``MONEY_UNIT``.

    The observed rate and the model's rates now and after stand side by
    side; a row that changes nothing shows no predicted-after rate and no
    money. Columns the suggestions lack are left out; the order is
    SUGGESTION_COLUMNS'.
    """
    if not suggestions:
        cols = labels(SUGGESTION_COLUMNS.values(), system)
        return pd.DataFrame(columns=with_currency(cols, currency) if currency else cols)
    s = pd.DataFrame(suggestions)
    changes = s["action"] != "no_riser_change"
    s["action"] = s["action"].str.replace("_", " ")
    for key in ("predicted_rate_after", "scrap_saved_per_year", "extra_cost_per_year", "yearly_balance"):
        if key in s:
            s[key] = pd.to_numeric(s[key], errors="coerce").where(changes)
    if "pays_off" in s:
        s["pays_off"] = np.where(changes, np.where(s["pays_off"].fillna(False).astype(bool), "yes", "no"), None)
    for key in ("reject_rate", "predicted_rate_now", "predicted_rate_after", "yield_before", "yield_after"):
        if key in s:
            s[f"{key}_pct"] = _pct(s[key])
    has_riser = s["riser"].notna() if "riser" in s else pd.Series(False, index=s.index)
    for key in ("suggested_sleeve", "current_sleeve"):
        if key in s:  # "none" = a bare riser; blank where no riser is concerned
            fill = pd.Series(np.where(has_riser, "none", None), index=s.index, dtype=object)
            s[key] = s[key].astype(object).where(s[key].notna(), fill)
    cols = [c for c in SUGGESTION_COLUMNS if c in s]
    out = in_system(s[cols].rename(columns=SUGGESTION_COLUMNS).reset_index(drop=True), system)
    if currency:
        out.columns = with_currency(list(out.columns), currency)
    return out


WHAT_IF_RULES = (("modulus rule", "modulus_ratio", rules.DEFAULT_MODULUS_FACTOR),
                 ("Caine's curve", "caine_margin", 0.0),
                 ("feed volume", "feed_margin", 0.0))


def what_if_margins(result: dict) -> pd.DataFrame:
    """Rule margins of a what-if (``tracker.advice.suggest.what_if``), now and changed.

    One row per rule and design ("now", "changed"): ``margin`` is how far the
    riser clears the rule (0 = just passes): modulus ratio less 1.2, Caine
    margin, feed margin. Caine's rows are left out where the alloy has no
    constants.
    """
    rows = []
    for rule, key, need in WHAT_IF_RULES:
        now, new = result.get(f"{key}_now"), result.get(key)
        if now is None and new is None:
            continue
        for design, v in (("now", now), ("changed", new)):
            rows.append({"rule": rule, "design": design,
                         "margin": float("nan") if v is None else float(v) - need})
    return pd.DataFrame(rows, columns=["rule", "design", "margin"])


def riser_options(store: Store, on: str | None = None, system: str = units.METRIC) -> pd.DataFrame:
    """Risers of each pattern's revision in effect on ``on`` (default: the newest one of each).

    Columns: pattern, revision, riser, zone, alloy, placement, diameter_mm,
    height_mm (metric), sleeve and a picker label (its diameter in ``system``).
    """
    r = store.risers_frame()
    cols = ["pattern", "revision", "riser", "zone", "alloy", "placement", "diameter_mm", "height_mm",
            "sleeve", "label"]
    if r.empty:
        return pd.DataFrame(columns=cols)
    revs = store.revisions_frame()
    current = (revision_in_effect(revs, on) if on else
               revs.sort_values(["pattern", "effective_from"]).groupby("pattern", as_index=False).tail(1))
    r = r.merge(current[["pattern", "revision"]], on=["pattern", "revision"])
    r["label"] = (r["pattern"] + " · " + r["riser"] + " on " + r["zone"] + " · "
                  + r["diameter_mm"].map(lambda d: length_text(d, system))
                  + f" {units.symbol('diameter_mm', system)}"
                  + r["sleeve"].map(lambda s: f", sleeve {s}" if isinstance(s, str) and s else ", no sleeve"))
    return r[cols].sort_values(["pattern", "riser"]).reset_index(drop=True)


def sleeve_options(store: Store, system: str = units.METRIC) -> pd.DataFrame:
    """The sleeve catalogue, smallest inner diameter first, with a picker label
    (kind, inner diameter, height in ``system``, factor); the columns stay metric."""
    s = store.table("sleeves")
    if s.empty:
        return pd.DataFrame(columns=["sleeve", "kind", "inner_diameter_mm", "label"])
    s = s.sort_values(["inner_diameter_mm", "height_mm", "kind", "sleeve"], kind="stable")
    size = lambda v: length_text(v, system)  # noqa: E731
    s["label"] = (s["sleeve"] + " · " + s["kind"] + " · " + s["inner_diameter_mm"].map(size)
                  + " x " + s["height_mm"].map(size) + f" {units.symbol('height_mm', system)} · factor "
                  + s["modulus_factor"].map(lambda v: f"{v:g}"))
    return s.reset_index(drop=True)


# --- weekly review ---------------------------------------------------------------------

RULE_WORDS = {"beyond_limit": "point beyond a limit", "run_of_8": "8 or more weeks on one side"}
REASON_WORDS = {"signal:beyond_limit": "chart: point above the upper limit",
                "signal:run_of_8": "chart: 8 or more weeks above the centre",
                "shrinkage_above_target": "shrinkage rate above target",
                "rejects_above_target": "reject rate above target"}
VERDICT_WORDS = {"improved": "improved", "worse": "worse", "no_clear_change": "no clear change",
                 "not_enough_data": "not enough data yet"}


def signal_words(names, high=None) -> str:
    """Signal rule names (``tracker.review.stats.RULES``) in words ("" for none). With ``high``
    (the rules that fired above the centre), a signal below it is marked "(low: fewer rejects)"."""
    if names is None or (isinstance(names, float) and math.isnan(names)):
        return ""
    if isinstance(names, str):
        names = [r for r in names.split(",") if r]
    mark = (lambda r: "") if high is None else (lambda r: "" if r in set(high) else " (low: fewer rejects)")
    return ", ".join(RULE_WORDS.get(r, str(r)) + mark(r) for r in names)


def reason_words(reasons) -> str:
    """Why a pattern is flagged, in words ("" when it is not)."""
    return ", ".join(REASON_WORDS.get(r, str(r)) for r in (reasons or []))


def _num(v) -> float:
    return float("nan") if v is None else float(v)


def review_headline(review: dict) -> dict:
    """Headline figures of a review: the review week and the whole window.

    Counts in castings, rates in %, costs in the log's currency units.
    """
    out = {}
    for part in ("week", "window"):
        t = review["totals"][part]
        out[part] = {"poured": int(t["poured"]), "inspected": int(t["inspected"]),
                     "rejected": int(t["rejected"]), "reworked": int(t.get("reworked") or 0),
                     "reject_rate_pct": 100.0 * _num(t["reject_rate"]),
                     "wilson_low_pct": 100.0 * _num(t.get("wilson_low")),
                     "wilson_high_pct": 100.0 * _num(t.get("wilson_high")),
                     "scrap_cost": _num(t["scrap_cost"])}
    out["currency"] = review.get("currency") or DEFAULT_CURRENCY
    out["problems"] = list(review.get("problems") or [])
    out["patterns"] = len(review.get("patterns") or [])
    out["target_pct"] = 100.0 * _num(review.get("target"))
    return out


PATTERN_TABLE = {
    "pattern": "pattern", "reject_rate_pct": "reject rate (%)", "rejected": "rejected (castings)",
    "scrap_cost": "scrap cost", "flag_text": "flagged because",
    "poured": "poured (castings)", "range_text": "95 % range (%)",
    "shrinkage_rejected": "of which shrinkage (castings)", "signal_text": "chart signals (latest 2 weeks)",
}
# The columns a reader needs first (a narrow screen shows these; the rest behind a toggle).
PATTERN_TABLE_FIRST = 5


def money_head(name: str, review_or_code) -> str:
    """A money column's heading with the log's currency code: "scrap cost (EUR)"."""
    code = review_or_code.get("currency") if isinstance(review_or_code, dict) else review_or_code
    return f"{name} ({code or DEFAULT_CURRENCY})"


def _range(lo, hi) -> str:
    if lo is None or hi is None or lo != lo or hi != hi:
        return ""
    return f"{100 * lo:.1f} to {100 * hi:.1f}"


def review_patterns_table(review: dict, full: bool = True) -> pd.DataFrame:
    """The review's pattern rows for display, by scrap cost: rates in %, flags and chart
    signals in words, cost headed with the log's currency. ``full`` False keeps the
    columns that matter first (pattern, rate, rejects, cost, why flagged)."""
    names = {**PATTERN_TABLE, "scrap_cost": money_head("scrap cost", review)}
    keys = list(PATTERN_TABLE)[:None if full else PATTERN_TABLE_FIRST]
    rows = review.get("patterns") or []
    if not rows:
        return pd.DataFrame(columns=[names[k] for k in keys])
    p = pd.DataFrame(rows)
    p["reject_rate_pct"] = _pct(p["reject_rate"])
    p["range_text"] = [_range(lo, hi) for lo, hi in zip(p["wilson_low"], p["wilson_high"], strict=False)]
    p["flag_text"] = p["problem_reasons"].map(reason_words)
    p["signal_text"] = [signal_words(r, high) for r, high in zip(p["signal_rules"], p["signal_high_rules"], strict=False)]
    p["scrap_cost"] = p["scrap_cost"].astype(float).round(0)  # whole currency units
    return p[keys].rename(columns=names).reset_index(drop=True)


PLANT_TABLE = {
    "plant": "plant", "patterns": "patterns", "inspected": "castings inspected",
    "rejected": "castings rejected", "reject_rate_pct": "reject rate (%)", "low_pct": "95 % range from (%)",
    "high_pct": "95 % range to (%)", "shrinkage_rate_pct": "shrinkage rate (%)",
    "scrap_cost": "scrap cost (currency units)", "week_rejected": "review week: castings rejected",
    "week_inspected": "review week: castings inspected", "problems_text": "flagged patterns",
}


def plant_comparison_table(comparison: dict) -> pd.DataFrame:
    """A plant comparison (:func:`tracker.review.weekly.compare_plants`) for display: rates in %."""
    rows = comparison.get("plants") or []
    if not rows:
        return pd.DataFrame(columns=list(PLANT_TABLE.values()))
    p = pd.DataFrame(rows)
    p["reject_rate_pct"] = _pct(p["reject_rate"])
    p["low_pct"] = _pct(p["wilson_low"])
    p["high_pct"] = _pct(p["wilson_high"])
    p["shrinkage_rate_pct"] = _pct(p["shrinkage_rate"])
    p["problems_text"] = p["problems"].map(lambda v: ", ".join(v) or "none")
    return p[list(PLANT_TABLE)].rename(columns=PLANT_TABLE).reset_index(drop=True)


def review_pareto(review: dict, of: str = "patterns", by: str = "cost", top: int | None = None) -> pd.DataFrame:
    """Pareto rows of the review (``of`` patterns or defects, ``by`` cost or count), largest first.

    With ``top``, at most ``top`` bars: the largest ``top - 1`` items and one bar
    for all the rest ("the other 12 patterns"), so a chart can label every bar.

    Columns: the item (``pattern`` or ``defect``), ``value`` (scrap cost in
    currency units, or castings rejected), ``share_pct``,
    ``cumulative_pct``, ``vital_few`` and ``rank`` (1 = largest).
    """
    if of not in ("patterns", "defects") or by not in ("cost", "count"):
        from tracker.errors import BadInput
        raise BadInput("pareto", f"{of}/{by}", "use of = patterns or defects, by = cost or count")
    rows = review.get("pareto", {}).get(f"{of}_by_{by}") or []
    item = "pattern" if of == "patterns" else "defect"
    value = "scrap_cost" if by == "cost" else "rejected"
    cols = [item, "value", "share_pct", "cumulative_pct", "vital_few", "rank"]
    if not rows:
        return pd.DataFrame(columns=cols)
    d = pd.DataFrame(rows)
    d = d[d[value].fillna(0) > 0].reset_index(drop=True)
    d["value"] = d[value].astype(float)
    d["share_pct"] = _pct(d["share"])
    d["cumulative_pct"] = _pct(d["cumulative_share"])
    d["rank"] = np.arange(1, len(d) + 1)
    d = d[cols]
    if top is not None and len(d) > top:
        rest = d.iloc[top - 1:]
        d = pd.concat([d.iloc[:top - 1], pd.DataFrame([{
            item: f"the other {len(rest)} {of}", "value": rest["value"].sum(),
            "share_pct": rest["share_pct"].sum(), "cumulative_pct": 100.0,
            "vital_few": False, "rank": top}])], ignore_index=True)
    return d


def review_trend(review: dict) -> pd.DataFrame:
    """Weekly totals of the review window: castings, reject rate and its Wilson bounds in %."""
    rows = review.get("trend", {}).get("overall") or []
    cols = ["week", "week_start", "poured", "inspected", "rejected", "scrap_cost", "reject_rate_pct",
            "wilson_low_pct", "wilson_high_pct"]
    if not rows:
        return pd.DataFrame(columns=cols)
    t = pd.DataFrame(rows)
    t["week_start"] = pd.to_datetime(t["week_start"]).dt.date
    for key in ("reject_rate", "wilson_low", "wilson_high"):
        t[f"{key}_pct"] = _pct(t[key])
    return t[cols]


def review_pchart(review: dict, pattern: str) -> pd.DataFrame:
    """One pattern's weekly p-chart from the review, rates and limits in %.

    Adds ``status``: "signal" (a rule fired at that week), "in control", or
    "nothing inspected".
    """
    for p in review.get("patterns") or []:
        if p["pattern"] == pattern:
            c = pd.DataFrame(p["pchart"])
            break
    else:
        raise NotFound("pattern", pattern, "it was not poured in the review window")
    c = c.rename(columns={"label": "week"})
    c["week_start"] = pd.to_datetime(c["week_start"]).dt.date
    for key in ("p", "centre", "lcl", "ucl"):
        c[f"{key}_pct"] = _pct(c[key])
    c["status"] = np.where(c["inspected"] == 0, "nothing inspected",
                           np.where(c["signal"].astype(bool), "signal", "in control"))
    return c


REVISION_TABLE = {
    "pattern": "pattern", "revision": "revision", "effective_from": "effective from",
    "change_text": "what changed", "before_text": "before: shrinkage rejects",
    "after_text": "after: shrinkage rejects", "difference_pct": "change (% points)",
    "p_value": "p-value (Fisher)", "verdict_text": "verdict", "sentence": "verdict in words",
    "details": "statistics", "in_window_text": "took effect in the window",
}


def _chance_words(p) -> str:
    """How likely a before/after difference is to be chance, from Fisher's p-value."""
    if p is None or p != p:
        return ""
    if p < 0.001:
        return "very unlikely to be chance"
    if p < 0.01:
        return "unlikely to be chance"
    if p < 0.05:
        return "probably not chance"
    return "could well be chance"


def _rate_words(rate) -> str:
    return "-" if rate is None or rate != rate else f"{100 * rate:.1f} %".replace(".0 %", " %")


def verdict_sentence(rev: dict) -> str:
    """A riser revision's verdict in plain words first, e.g. "improved: shrinkage fell from
    12.2 % to 0 %, very unlikely to be chance" (the statistics are in :func:`verdict_details`)."""
    v = rev.get("verdict")
    before, after = _rate_words(rev.get("rate_before")), _rate_words(rev.get("rate_after"))
    chance = _chance_words(rev.get("p_value"))
    n_after = int((rev.get("after") or {}).get("inspected") or 0)
    if v == "improved":
        return f"improved: shrinkage fell from {before} to {after}, {chance}"
    if v == "worse":
        return f"worse: shrinkage rose from {before} to {after}, {chance}"
    if v == "no_clear_change":
        return f"no clear change: shrinkage went from {before} to {after}, which {chance}"
    if n_after == 0:
        return "not enough data yet: no castings poured since the change have been inspected"
    return (f"not enough data yet: shrinkage {before} before, {after} in the {n_after:,} castings "
            "inspected since; too few to tell a halving of the rate from chance")


def verdict_details(rev: dict) -> str:
    """The statistics behind a verdict, for a help tooltip."""
    parts = []
    d, lo, hi = rev.get("difference"), rev.get("diff_low"), rev.get("diff_high")
    if d is not None and d == d:
        parts.append(f"change {100 * d:+.1f} % points"
                     + (f" (95 % interval {100 * lo:+.1f} to {100 * hi:+.1f})" if lo is not None and lo == lo
                        else ""))
    p = rev.get("p_value")
    if p is not None and p == p:
        parts.append(f"Fisher's exact test p = {p:.2g} (the chance of a difference this large if the "
                     "revision changed nothing)")
    power = rev.get("power_to_halve")
    if power is not None and power == power:
        parts.append(f"with these numbers of castings a real halving of the rate would show with "
                     f"about {100 * power:.0f} % chance (80 % or more is needed before 'no clear change' "
                     "counts as a finding)")
    b, a = rev.get("before") or {}, rev.get("after") or {}
    parts.append(f"before: {b.get('shrinkage_rejected', 0):,} of {b.get('inspected', 0):,} castings; "
                 f"after: {a.get('shrinkage_rejected', 0):,} of {a.get('inspected', 0):,} castings")
    return "; ".join(parts) + "."


def _share(part: dict, rate) -> str:
    return (f"{part['shrinkage_rejected']:,} of {part['inspected']:,} castings"
            + ("" if rate is None else f" ({100 * rate:.1f} %)"))


def review_revisions_table(review: dict) -> pd.DataFrame:
    """Riser revisions under judgement: what changed, shrinkage rejects before and after
    (in the zones of the changed risers), the change in % points, and the verdict in words."""
    rows = review.get("revisions") or []
    if not rows:
        return pd.DataFrame(columns=list(REVISION_TABLE.values()))
    out = []
    for r in rows:
        changes = r.get("riser_changes") or []
        prev = r.get("previous_revision")
        out.append({
            "pattern": r["pattern"], "effective_from": r["effective_from"], "p_value": r.get("p_value"),
            "revision": f"{r['revision']}" + (f" (was {prev})" if prev else ""),
            "change_text": "; ".join(f"{c['riser']}: {c['change']}" for c in changes) or "no riser changed",
            "before_text": _share(r["before"], r.get("rate_before")),
            "after_text": _share(r["after"], r.get("rate_after")),
            "difference_pct": 100.0 * _num(r.get("difference")),
            "verdict_text": VERDICT_WORDS.get(r.get("verdict"), str(r.get("verdict"))),
            "sentence": verdict_sentence(r), "details": verdict_details(r),
            "in_window_text": "yes" if r.get("took_effect_in_window", True) else "no, still awaiting a verdict",
        })
    return pd.DataFrame(out)[list(REVISION_TABLE)].rename(columns=REVISION_TABLE)


def review_signals(review: dict) -> pd.DataFrame:
    """Run-rule and limit signals of the patterns' p-charts, in words: one row per
    pattern whose chart signals in the latest two weeks (``when`` "latest weeks") or
    only earlier in the window (``when`` "earlier in the window"). A signal below the
    centre means fewer rejects and is marked so; it does not flag a pattern."""
    cols = ["pattern", "signal", "when", "flagged"]
    out = []
    for p in review.get("patterns") or []:
        latest = list(p.get("signal_rules") or [])
        if latest:
            out.append({"pattern": p["pattern"], "signal": signal_words(latest, p.get("signal_high_rules") or []),
                        "when": "latest 2 weeks", "flagged": "yes" if p.get("problem") else "no"})
        elif p.get("signal_rules_window"):
            out.append({"pattern": p["pattern"], "signal": signal_words(p["signal_rules_window"]),
                        "when": "earlier in the window", "flagged": "yes" if p.get("problem") else "no"})
    return pd.DataFrame(out, columns=cols)


def review_changes(review: dict) -> dict:
    """What moved since the previous week's review, as lists of short lines."""
    c = review.get("changes") or {}
    moves = [f"{m['pattern']}: {100 * _num(m['previous_week_reject_rate']):.1f} % → "
             f"{100 * _num(m['week_reject_rate']):.1f} % of castings inspected"
             for m in c.get("rate_moves") or []]
    return {
        "previous_week": c.get("previous_week"),
        "new_problems": [f"{x['pattern']} ({reason_words(x.get('problem_reasons'))})"
                         for x in c.get("new_problems") or []],
        "no_longer_problems": list(c.get("no_longer_problems") or []),
        "still_problems": list(c.get("still_problems") or []),
        "revisions_took_effect": [f"{x['pattern']} revision {x['revision']} from {x['effective_from']}"
                                  for x in c.get("revisions_took_effect") or []],
        "rate_moves": moves,
    }
