"""Checked cells as the values stored (blank as NULL), and stored values compared."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker.numbers import missing


def to_null(v):
    """Blank cells and NaN become NULL."""
    if missing(v) or v == "":
        return None
    return v


def nulls(s: pd.Series) -> list:
    """A text column as a list, blank cells and NaN as None (as :func:`to_null`)."""
    a = s.to_numpy(dtype=object, copy=True)  # an object column's array is a read-only view
    a[pd.isna(a) | (a == "")] = None
    return a.tolist()


def ints(s: pd.Series) -> list:
    """A numeric column as a list of Python ints, NaN as None (as :func:`int_or_none`)."""
    a = np.asarray(s, dtype=float)
    nan = np.isnan(a)
    out = np.where(nan, 0, a).astype(np.int64).astype(object)
    out[nan] = None
    return out.tolist()


def int_or_none(v):
    """A whole-number cell as a Python int; blank and NaN as None."""
    v = to_null(v)
    return None if v is None else int(v)


def same_value(a, b) -> bool:
    """Whether a stored value and a file's are the same (numbers within 1e-9 relative)."""
    if a is None or b is None:
        return a is None and b is None
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return abs(float(a) - float(b)) <= 1e-9 * max(1.0, abs(float(a)))
    return str(a) == str(b)


def same(a: tuple, b: tuple) -> bool:
    """Whether two rows hold the same values (:func:`same_value` cell by cell)."""
    return len(a) == len(b) and all(same_value(x, y) for x, y in zip(a, b, strict=False))
