"""The cell checks of one chunk: text, codes, numbers, measures and dates, column by column.

Each check refuses the rows whose cell breaks its rule (``Checks.fail``) and
returns the column as its validator uses it; a validator (``kinds/``) calls
them column by column, then checks across columns.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from tracker import units
from tracker.errors import BadRow, cut
from tracker.limits import EARLIEST_DATE, RANGES, latest_date
from tracker.log.ingest.columns import US_COLUMNS
from tracker.log.ingest.result import MAX_PROBLEMS, ImportResult
from tracker.log.ingest.text import CONTROL, INVISIBLE, LINE_BREAK, code_spelling, invisible_text, prints
from tracker.numbers import bound_text


class Checks:
    """Collects the problems of one chunk; ``bad`` marks refused rows."""

    def __init__(self, file: str, chunk: pd.DataFrame, result: ImportResult, decimal: str = "."):
        self.file = file
        self.decimal = decimal
        self.chunk = chunk
        self.rows = chunk["_row"].to_numpy()
        self.bad = np.zeros(len(chunk), dtype=bool)
        self.bad_cols: dict[str, np.ndarray] = {}
        self.result = result
        self.reasons: dict[int, str] = {}
        self.found: list[tuple[int, BadRow]] = []
        # metric column -> the US customary column the file gives in its place
        us_cols = {u: m for kind in US_COLUMNS.values() for u, m in kind.items()}
        self.given = {us_cols[c]: c for c in chunk.columns if c in us_cols}

    def system(self, name: str) -> str:
        """The unit system the file gives a metric column in (tracker.units)."""
        return units.US if name in self.given else units.METRIC

    def shown(self, name: str) -> str:
        """The column as the file names it (``diameter_in`` for ``diameter_mm``)."""
        return self.given.get(name, name)

    def col(self, name: str) -> pd.Series:
        if name in self.chunk.columns:
            return self.chunk[name]
        # A column the file leaves out reads as one left blank (and of the same string
        # type: checks on a column of Python objects run a Python call per cell).
        return pd.Series([""] * len(self.chunk), index=self.chunk.index, dtype=str)

    def ok(self, *columns: str) -> np.ndarray:
        """Rows with no problem in any of ``columns`` (for checks across columns)."""
        out = np.ones(len(self.rows), dtype=bool)
        for name in map(self.shown, columns):
            if name in self.bad_cols:
                out &= ~self.bad_cols[name]
        return out

    def fail(self, mask, column: str, reason, form: str | None = None) -> None:
        """Refuse the rows of ``mask`` for ``column``. Every problem of a row is
        kept (one per column), so a file is fixed in one round. ``form``: the
        rule in the words of a form, where they differ. A metric column the file
        gives in US customary units is named as the file names it."""
        column = self.shown(column)
        done = self.bad_cols.get(column)
        mask = np.asarray(mask, dtype=bool) & (~done if done is not None else True)
        if not mask.any():
            return
        values = self.col(column).to_numpy() if column in self.chunk.columns else None
        for i in np.flatnonzero(mask):
            text = reason(i) if callable(reason) else reason
            got = f"got {cut(values[i])}; " if values is not None and "got " not in text else ""
            self.found.append((int(i), BadRow(self.file, int(self.rows[i]), column, got + text, form)))
        self.bad_cols[column] = mask if done is None else (done | mask)
        self.bad |= mask

    def finish(self) -> None:
        """Hand the chunk's problems to the result, rows in file order."""
        self.found.sort(key=lambda t: t[0])  # stable: a row's problems stay in check order
        for i, problem in self.found:
            self.reasons[i] = f"{self.reasons[i]} | {problem}" if i in self.reasons else str(problem)
            self.result.problem_count += 1
            if len(self.result.problems) < MAX_PROBLEMS:
                self.result.problems.append(problem)
        self.found = []

    def text(self, name: str, required: bool = True, max_len: int = 200, lines: bool = False) -> pd.Series:
        """A text cell; only free text (``lines``: notes, a description) may hold a
        line break or a tab: a code or a name is one line."""
        s = self.col(name)
        if required:
            self.fail(s == "", name, f"{name} is required")
        self.fail(s.str.len() > max_len, name, f"{name} is longer than {max_len} characters")
        # One scan of the whole column (a control or invisible character is rare): only a
        # column holding a character that does not print is checked cell by cell.
        if not prints(s.tolist()):
            self.fail(s.str.contains(CONTROL, regex=True), name, f"{name} holds control characters")
            if not lines:
                self.fail(s.str.contains(LINE_BREAK, regex=True), name,
                          lambda i: f"got {cut(s.iloc[i])}; {name} holds a line break or a tab; a code or a "
                                    "name is written on one line: remove it")
            hidden = s.str.contains(INVISIBLE, regex=True)
            if hidden.any():
                self.fail(hidden, name, lambda i: invisible_text(name, s.iloc[i]))
        return s

    def code(self, name: str, allowed, required: bool = True, lower: bool = True) -> pd.Series:
        """A code from a fixed list, matched whatever its case (and for words,
        spaces or hyphens for underscores and the spelling variants in
        ALIASES), returned in the list's own spelling."""
        # Spelled out once per distinct value (a column holds a handful), then spread.
        given, distinct, where = self.distinct(name)
        spelled = np.array([code_spelling(v, lower) for v in distinct] or [""], dtype=object)
        s = pd.Series(spelled[where], index=given.index, dtype=given.dtype)
        if required:
            self.fail(s == "", name, f"{name} is required; use one of {', '.join(allowed)}")
        self.fail((s != "") & ~s.isin(allowed), name, f"{name} must be one of {', '.join(allowed)}")
        return s

    def number(self, name: str, required: bool = True, low: float | None = None,
               low_inclusive: bool = False, high: float | None = None, whole: bool = False,
               unit: str = "") -> pd.Series:
        """A number column; one the file gives in US customary units (``diameter_in``
        for ``diameter_mm``) is checked in its own unit and returned in metric."""
        system, metric_name, name = self.system(name), name, self.shown(name)
        if system == units.US:
            low, high = (units.value_in(metric_name, x, system) for x in (low, high))
            unit = units.symbol(metric_name, system) if unit else unit
        # Checked once per distinct value (a file repeats its values), spread by ``where``.
        full, s, where = self.distinct(name)
        empty = (s == "").to_numpy()
        if required:
            self.fail(empty[where], name, f"{name} is required")
        text = s.str.replace(",", ".", regex=False) if self.decimal == "," else s
        num = pd.to_numeric(text.where(~empty, None), errors="coerce")
        kind = "a whole number" if whole else "a number"
        rule = kind
        if low is not None:
            rule += f" {'of at least' if low_inclusive else 'above'} {bound_text(low, lower=True)}"
        if high is not None:
            rule += f"{' and' if low is not None else ''} at most {bound_text(high, lower=False)}"
        rule += f" {unit}".rstrip()
        bad = ~empty & (num.isna() | ~np.isfinite(num.fillna(0)))
        if whole:
            bad |= ~empty & num.notna() & (num != np.floor(num.fillna(0)))
        if low is not None:
            bad |= ~empty & num.notna() & ((num < low) if low_inclusive else (num <= low))
        if high is not None:
            bad |= ~empty & num.notna() & (num > high)
        comma = bad & s.str.fullmatch(r"-?\d+,\d+") if self.decimal == "." else bad & False
        bad, comma = bad.to_numpy(dtype=bool), comma.to_numpy(dtype=bool)
        self.fail(comma[where], name, f"{name} must be {rule}; it is written with a decimal comma: write a "
                                      "decimal point, or import the file with `--decimal ','`")
        self.fail(bad[where], name, f"{name} must be {rule}")
        # A refused value (inf, 1e30, 1.5 ...) goes on as blank: later steps cast to int.
        value = units.value_from(metric_name, num.where(~bad), system)
        return pd.Series(np.asarray(value, dtype=float)[where], index=full.index)

    def distinct(self, name: str) -> tuple[pd.Series, pd.Series, np.ndarray]:
        """The column, its distinct values (a Series in first-seen order) and each
        row's position among them: a check of the distinct values, spread by
        position (``mask[where]``), is the check of every row."""
        full = self.col(name)
        where, values = pd.factorize(full.to_numpy(dtype=object), use_na_sentinel=False)
        return full, pd.Series(values, dtype=full.dtype), where

    def measure(self, name: str, required: bool = True) -> pd.Series:
        """A size, weight or cost within its physical range (tracker.limits.RANGES)."""
        low, high, unit = RANGES[name]
        return self.number(name, required=required, low=low, low_inclusive=True, high=high, unit=unit)

    def date(self, name: str, required: bool = True, not_after: dt.date | None = None,
             today: dt.date | None = None) -> pd.Series:
        full, s, where = self.distinct(name)  # checked once per distinct value

        def rows(mask) -> np.ndarray:  # a verdict on the distinct values, spread to the rows
            return np.asarray(mask, dtype=bool)[where]

        empty = s == ""
        if required:
            self.fail(rows(empty), name, f"{name} is required (YYYY-MM-DD)")
        shape = s.str.fullmatch(r"\d{4}-\d{2}-\d{2}")
        # The year first: pandas cannot hold year 0001 or 9999, and such a date is a slip.
        year = pd.to_numeric(s.str[:4].where(shape, None), errors="coerce")
        early = shape & (year < EARLIEST_DATE.year)
        self.fail(rows(early), name, f"{name} lies before {EARLIEST_DATE.isoformat()}; check the year")
        latest = latest_date(today or dt.date.today())
        far = shape & (year > latest.year)
        parsed = pd.to_datetime(s.where(shape & ~empty & ~early & ~far, None), format="%Y-%m-%d",
                                errors="coerce")
        self.fail(rows(~empty & ~early & ~far & parsed.isna()), name, f"{name} must be a date written YYYY-MM-DD")
        if not_after is not None:
            # Compare as timestamps: an all-NaT column's .dt.date is not comparable to a date.
            self.fail(rows(~empty & (far | (parsed.notna() & (parsed > pd.Timestamp(not_after))))), name,
                      f"{name} lies in the future (after {not_after.isoformat()})")
        self.fail(rows(~empty & (far | (parsed.notna() & (parsed > pd.Timestamp(latest))))), name,
                  f"{name} lies more than a year ahead (after {latest.isoformat()}); check the year")
        return full.where(~rows(empty), "")
