"""The Log results page's data: the lot and zone pickers, a form's record, what a
lot already holds, and the newest inspection records (see :mod:`tracker.views.common`
for the conventions of every view module)."""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd

from tracker import units
from tracker.errors import NotFound
from tracker.log.ingest import COLUMNS as IMPORT_COLUMNS
from tracker.log.ingest import METHODS
from tracker.log.store import Store
from tracker.views.common import NONE


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


# --- corrections at the bench -------------------------------------------------------------

# What the bench may change in a record (the rest is carried over by correct_inspection).
CORRECTABLE = ["inspected_on", "quantity", "result", "defect", "zone", "xray_category", "severity", "notes"]


def lot_records(store: Store, lot: str) -> pd.DataFrame:
    """The current records of ``lot`` (newest first), each with a picker label:
    the records a correction or a withdrawal may start from."""
    cur = store.current_inspections(lot=lot)
    if cur.empty:
        return pd.DataFrame(columns=["id", "label"])
    cur = cur.sort_values("id", ascending=False).reset_index(drop=True)
    defect = cur["defect"].fillna("").map(lambda d: f" ({d.replace('_', ' ')})" if d else "")
    cat = cur["xray_category"].fillna("").map(lambda c: f", category {c}" if c else "")
    cur["label"] = (cur["id"].astype(int).astype(str) + " · " + cur["inspected_on"] + " · "
                    + cur["method"].map(METHOD_WORDS) + " · " + cur["quantity"].astype(int).astype(str) + " "
                    + cur["result"] + defect + cat + " · by " + cur["recorded_by"].fillna("-"))
    return cur


def correction_changes(old: dict, values: dict) -> dict:
    """The fields of CORRECTABLE whose form value differs from record ``old``
    (form values as :func:`form_record` reads them; a cleared field is None)."""
    new = form_record(values)
    out = {}
    for key in CORRECTABLE:
        if key not in values:
            continue
        before, after = old.get(key), new.get(key)
        before = None if before is None or (isinstance(before, float) and math.isnan(before)) else before
        if key in ("quantity", "severity"):  # a column with blanks reads back as 4.0
            before, after = (None if v is None else int(v) for v in (before, after))
        if (None if before is None else str(before)) != (None if after is None else str(after)):
            out[key] = after
    return out


# --- a lot typed in -----------------------------------------------------------------------

def lot_form_record(values: dict, system: str) -> dict:
    """A lot for ``log_lot`` from form values: text stripped, the date as ISO, and the
    pour temperature under the column name of the form's unit ``system``
    (pour_temp_f in us), so the lots validator converts and words it as for a file."""
    out: dict = {}
    for key in IMPORT_COLUMNS["lots"][0] + IMPORT_COLUMNS["lots"][1]:
        v = values.get(key)
        if isinstance(v, (dt.date, dt.datetime)):
            v = v.isoformat()[:10]
        if isinstance(v, str):
            v = v.strip()
        if isinstance(v, float) and math.isnan(v):
            v = None
        out[units.column_name(key, system) if key == "pour_temp_c" else key] = None if v == "" else v
    return out
