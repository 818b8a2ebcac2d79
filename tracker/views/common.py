"""What the dashboard's pages share: display labels in a unit system, the log's
data version (the pages' cache key), the pickers several pages offer, the
refused rows of an import, and percent columns.

Nothing here imports streamlit or prints. Column names of the display tables
carry their unit ("castings", "mm", "%", "kg") so a table never shows a bare
number.

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
import os

import pandas as pd

from tracker import units
from tracker.errors import BadRow
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.log.store import Store, data_version
from tracker.review import stats

NONE = "(none)"  # the "no value" choice of an optional picker


def db_version(path: str | os.PathLike) -> tuple:
    """A value that changes whenever the log changes (see :func:`tracker.log.store.data_version`)."""
    return data_version(str(path))


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


def problems_frame(problems: list[BadRow]) -> pd.DataFrame:
    """The refused rows of an import, in file order: row number (header = row 1), column, reason."""
    t = pd.DataFrame([{"row": p.row, "column": p.column, "reason": p.reason} for p in problems],
                     columns=["row", "column", "reason"])
    return t.sort_values("row", kind="stable").reset_index(drop=True)


def week_options(store: Store) -> list[str]:
    """ISO weeks from the first to the last pour, newest first."""
    first, last = store.pour_span()
    if not first:
        return []
    start = stats.week_start(stats.iso_week(first))
    end = stats.week_start(stats.iso_week(last))
    n = (end - start).days // 7 + 1
    return [stats.iso_week(end - dt.timedelta(weeks=i)) for i in range(n)]


def pct_column(series: pd.Series) -> pd.Series:
    """A column of fractions (0..1) as percentages (0..100), non-numbers as NaN."""
    return 100.0 * pd.to_numeric(series, errors="coerce")


def money_head(name: str, review_or_code) -> str:
    """A money column's heading with the log's currency code: "scrap cost (EUR)"."""
    code = review_or_code.get("currency") if isinstance(review_or_code, dict) else review_or_code
    return f"{name} ({code or DEFAULT_CURRENCY})"
