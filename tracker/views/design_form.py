"""The Pattern design page's data: a pattern's zones and newest riser revision as
the form starts from them (its risers carried over), and the choices of its
pickers (see :mod:`tracker.views.common` for the conventions)."""

from __future__ import annotations

import contextlib

import pandas as pd

from tracker import units
from tracker.log.ingest.next_revision import RISER_FIELDS, newest_revision, next_code, stored_risers
from tracker.log.store import Store

ZONE_FIELDS = ("zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm", "width_mm",
               "required_xray_level")
PATTERN_FIELDS = ("pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold", "metal_cost_per_kg",
                  "processing_cost_per_casting", "mould")


def design_start(store: Store, pattern: str | None, system: str = units.METRIC) -> dict:
    """Where the form starts for ``pattern`` (None: a new pattern): its stored
    zones (a display table in ``system``), its newest revision and effective
    date, a proposed next revision code, and the newest revision's risers as
    form rows (the risers import's columns named and valued in ``system``),
    to be carried over into the next revision."""
    out: dict = {"zones": pd.DataFrame(columns=[units.column_name(k, system) for k in ZONE_FIELDS]),
                 "revision": None, "effective_from": None, "next_code": "1", "risers": [], "stored": []}
    if not pattern:
        return out
    zones = store.zones_frame(pattern)
    shown = pd.DataFrame({units.column_name(k, system): units.to_system(k, zones[k], system) for k in ZONE_FIELDS})
    out["zones"] = shown
    newest = newest_revision(store, pattern)
    if newest is None:
        return out
    out.update(revision=newest["revision"], effective_from=newest["effective_from"],
               next_code=next_code(newest["revision"]))
    out["stored"] = stored_risers(store, pattern, newest["revision"])
    out["risers"] = [form_row(r, system) for r in out["stored"]]
    return out


def revision_rows(typed: list[dict], start: dict, system: str = units.METRIC) -> list[dict]:
    """The risers of the new revision, metric: a riser left as the form showed it is
    the stored one, exactly (carried over); a riser typed or changed has its measures
    converted from ``system`` (a cell that is not a number is passed on as typed, for
    the import's check to name). A stored riser left out of ``typed`` is named in the
    first row's ``removed_risers``."""
    shown = {r["riser"]: r for r in start.get("risers", [])}
    stored = {r["riser"]: r for r in start.get("stored", [])}
    out = []
    for row in typed:
        code = row.get("riser")
        if code in stored and shown.get(code) == row:
            out.append(dict(stored[code]))
            continue
        metric = {}
        for k in RISER_FIELDS:
            v = row.get(units.column_name(k, system), "")
            if k.endswith("_mm") and system != units.METRIC and str(v).strip():
                with contextlib.suppress(ValueError):
                    v = units.to_metric(k, float(v), system)
            metric[k] = v
        out.append(metric)
    gone = sorted(set(stored) - {row.get("riser") for row in typed})
    if gone and out:  # the risers taken out, said so as the risers import asks
        out[0]["removed_risers"] = ";".join(gone)
    return out


def form_row(row: dict, system: str) -> dict:
    """A stored riser (metric) as a form row: each measure named and valued in ``system``, as text."""
    out = {}
    for k in RISER_FIELDS:
        v = row.get(k)
        if k.endswith("_mm"):
            v = None if v is None or pd.isna(v) else f"{units.value_in(k, float(v), system):g}"
        out[units.column_name(k, system)] = "" if v is None else str(v)
    return out


def sleeve_codes(store: Store) -> list[str]:
    """The sleeve catalogue's codes, in order."""
    s = store.table("sleeves")
    return sorted(s["sleeve"].tolist()) if len(s) else []


def alloy_codes(store: Store) -> list[str]:
    """Every alloy the log knows (its alloys table), in order."""
    a = store.table("alloys")
    return sorted(a["alloy"].tolist()) if len(a) else []
