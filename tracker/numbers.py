"""Small number helpers every layer shares: a leaf, importing nothing of the project.

- :func:`finite`: a value as a float, or None where it is missing, not a number,
  NaN or infinite.
- :func:`missing`: None, NaN, ``pd.NA`` or ``pd.NaT``.
- :func:`jsonable`: a JSON-ready copy of nested dicts and lists (numpy scalars to
  Python, NaN and infinity to None, dates to ISO text).
- :func:`pct_text` and :func:`money_text`: the one way a rate or an amount of
  money is written as text.
- :func:`bound_text`: a limit written so that it stays true (a lower one rounded
  up, an upper one down).
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

import numpy as np
import pandas as pd


def finite(value: Any) -> float | None:
    """``value`` as a float; None where it is None, not a number, NaN or infinite."""
    if value is None:
        return None
    try:
        f = float(value)
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def missing(value: Any) -> bool:
    """True for None, NaN (float or numpy), ``pd.NA`` and ``pd.NaT``."""
    if value is None or value is pd.NA or value is pd.NaT:
        return True
    if isinstance(value, (float, np.floating)):
        return math.isnan(value)
    return False


def jsonable(obj: Any, *, day_only: bool = False) -> Any:
    """A JSON-ready copy of ``obj``: dict keys as text, tuples and arrays as lists,
    numpy scalars as Python, NaN and infinity as None, dates as ISO text
    (``day_only``: timestamps cut to their day, as the review writes its weeks)."""
    if isinstance(obj, dict):
        return {str(k): jsonable(v, day_only=day_only) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v, day_only=day_only) for v in obj]
    if isinstance(obj, np.ndarray):
        return jsonable(obj.tolist(), day_only=day_only)
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return finite(obj)
    if obj is None or obj is pd.NA or obj is pd.NaT:
        return None
    if isinstance(obj, (dt.date, pd.Timestamp)):
        text = obj.isoformat()
        return text[:10] if day_only else text
    return obj


def pct_text(fraction: Any, digits: int = 1, *, unit: str = " %", none: str = "-") -> str:
    """A fraction (0..1) as a percentage, ``12.3 %``; ``none`` where it is missing."""
    f = finite(fraction)
    return none if f is None else f"{100.0 * f:.{digits}f}{unit}"


def money_text(value: Any, *, none: str = "-") -> str:
    """An amount in whole currency units with thousands separated, ``12,345``."""
    f = finite(value)
    return none if f is None else f"{f:,.0f}"


def bound_text(x: float, lower: bool, digits: int = 6) -> str:
    """A limit as people write it (1,000,000 rather than 1e+06), exact where it has
    few digits; else to ``digits`` significant digits rounded so that the text stays
    true: a lower limit up, an upper one down (5 mm is at least 0.196851 in, not
    0.19685 in, which is below it)."""
    x = float(x)
    if x.is_integer() and abs(x) < 1e15:
        return f"{int(x):,}"
    short = f"{x:g}"
    if float(short) == x:
        return short
    if abs(x) >= 10.0 ** (digits - 1):  # a whole number is exact enough: 6,102,374 (in³)
        return f"{int(math.ceil(x) if lower else math.floor(x)):,}"
    scale = 10.0 ** (math.floor(math.log10(abs(x))) - digits + 1)
    y = (math.ceil(x / scale) if lower else math.floor(x / scale)) * scale
    return f"{y:.{digits}g}"
