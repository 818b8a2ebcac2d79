"""The header row of an import file, and cells trimmed as they are compared."""

from __future__ import annotations

import pandas as pd

from tracker import units
from tracker.errors import BadFile
from tracker.log.ingest.columns import COLUMNS, US_COLUMNS


def normalise(chunk: pd.DataFrame) -> pd.DataFrame:
    """Column names lower case and trimmed, every cell as trimmed text."""
    chunk = chunk.rename(columns=lambda c: str(c).strip().lower().lstrip("\ufeff"))
    if not len(chunk):
        return chunk
    return pd.DataFrame({c: (s if isinstance(s.dtype, pd.StringDtype) else s.astype(str)).str.strip()
                         for c, s in chunk.items()},
                        index=chunk.index)


def _quantity(metric: str) -> str:
    """What a metric column holds, in words: "diameter" for diameter_mm."""
    kind = units.kind_of(metric)
    return (metric[:-len(kind.metric_suffix)] if kind is not None else metric).replace("_", " ")


REPORT_COLUMNS = ("row", "reason")  # added by the refused-rows report; ignored on import


def check_header(name: str, kind: str, columns: list[str]) -> None:
    """Refuse a header that misses a required column, names an unknown or repeated
    one, or gives a quantity both in metric and US customary units."""
    cols = [str(c).strip().lower().lstrip("\ufeff") for c in columns]
    if all(c in cols for c in REPORT_COLUMNS):
        # A refused-rows report, its rows fixed, is imported as it is.
        cols = [c for c in cols if c not in REPORT_COLUMNS]
    required, optional = COLUMNS[kind]
    us = US_COLUMNS[kind]
    both = [(m, u) for u, m in us.items() if u in cols and m in cols]
    dupes = sorted({c for c in cols if cols.count(c) > 1})
    cols = [us.get(c, c) for c in cols]  # a customary column stands for its metric twin
    missing = [c for c in required if c not in cols]
    unknown = [c for c in cols if c not in required and c not in optional]
    parts = []
    if missing:
        parts.append("missing column(s) " + ", ".join(missing))
    if unknown:
        parts.append("unknown column(s) " + ", ".join(repr(c) for c in unknown))
    if dupes:
        parts.append("repeated column(s) " + ", ".join(dupes))
    if both:
        parts.append("; ".join(f"columns {m} and {u} both give the "
                               f"{_quantity(m)}; "
                               f"keep one of them (metric {m} or US customary {u})" for m, u in both))
    if parts:
        twins = [f"{u} for {m}" for u, m in us.items()]
        raise BadFile(name, [], f"{name}, row 1 (header): {'; '.join(parts)}. A {kind} file has the "
                                f"columns {', '.join(required)}"
                                + (f" and optionally {', '.join(optional)}" if optional else "")
                                + (f" (in US customary units: {', '.join(twins)})" if twins else ""))
