"""The CSV guard every export goes through: a cell a spreadsheet will not run as a formula.

A shared leaf: the import's refused-rows files, the review's CSV and the
dashboard's downloads all call it.
"""

from __future__ import annotations

import re

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


_PLAIN_NUMBER = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?")


def safe_cell(value):
    """A CSV cell that a spreadsheet will not run as a formula: the one guard
    every export of the project goes through (CLI reports, refused-rows files,
    the dashboard's downloads).

    Text starting with = + - @ (or a tab / carriage return) gets a leading
    apostrophe. Numbers are left alone, and so is text that is a plain
    numeral (``-3``, ``+1.5e3``), which a spreadsheet reads as that number;
    text that only Python reads as a number (``-inf``, ``-nan``, ``+1_000``)
    is guarded like any other text.
    """
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        if _PLAIN_NUMBER.fullmatch(value):
            return value
        return "'" + value
    return value


def safe_frame(frame):
    """A copy of a table with every text cell through :func:`safe_cell`."""
    from pandas.api.types import is_numeric_dtype

    out = frame.copy()
    for col in out.columns:
        if not is_numeric_dtype(out[col]):
            out[col] = out[col].map(safe_cell)
    out.columns = [safe_cell(str(c)) for c in out.columns]
    return out


def csv_bytes(frame) -> bytes:
    """A table as CSV (UTF-8 with a byte-order mark, so spreadsheets read it as
    UTF-8), every cell guarded."""
    return safe_frame(frame).to_csv(index=False).encode("utf-8-sig")
