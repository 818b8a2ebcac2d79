"""The Design map page's data: Caine's curve of an alloy, the design map's rows
for one alloy filtered and marked (in use, flagged, superseded), its summary and
its table (see :mod:`tracker.views.common` for the conventions)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from tracker.design.assess import caine_curve_points, revision_in_effect
from tracker.errors import NotFound
from tracker.log.store import Store
from tracker.review.rates import POURED, scope_text
from tracker.views.common import pct_column


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
            f[f"{key}_pct"] = pct_column(f[key])
    if "passes" in f:
        f["rules_text"] = np.where(f["passes"].astype(bool), "passes every rule", "fails a rule")
        if "rule_set" in f:  # which rule set judged it: pressure control for ductile iron
            f["rules_text"] = f["rules_text"] + " (" + f["rule_set"].fillna("").astype(str).str.replace(
                "_", " ") + ")"
    if current is not None and "revision" in f:
        f["superseded"] = [current.get(p) not in (None, str(r))
                           for p, r in zip(f["pattern"], f["revision"], strict=False)]
    else:
        f["superseded"] = False
    f["flagged"] = f["pattern"].isin(list(flagged or []))
    f["design"] = np.where(f["superseded"], SUPERSEDED, np.where(f["flagged"], IN_USE_FLAGGED, IN_USE))
    return f.reset_index(drop=True)


def rate_scope(start: str, end: str) -> str:
    """Which figure the map's shrinkage rates are: "shrinkage rejects, each zone, poured
    START to END, % of castings poured" (:func:`tracker.advice.features.zone_shrinkage_rates`)."""
    return scope_text("shrinkage", who="each zone", start=start, end=end, basis=POURED)


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
    rates = frame["shrinkage_rate_pct"] if "shrinkage_rate_pct" in frame else pct_column(frame["shrinkage_rate"])
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
    f = frame.assign(_old=frame.get("superseded", False))
    f = f.sort_values(["_old", "shrinkage_rate_pct", "castings"], ascending=[True, False, False], kind="stable")
    return f[cols].rename(columns=DESIGN_MAP_TABLE).reset_index(drop=True)
