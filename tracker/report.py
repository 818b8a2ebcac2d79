"""Output of a review: csv, md and html, with user text made safe."""

from __future__ import annotations

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def safe_cell(value):
    """A CSV cell that a spreadsheet will not run as a formula.

    Text starting with = + - @ (or a tab / carriage return) gets a leading
    apostrophe; numbers are left alone, so -3 stays a number.
    """
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        try:
            float(value)
            return value
        except ValueError:
            return "'" + value
    return value
