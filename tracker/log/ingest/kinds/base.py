"""What every validator shares: the store, the file, the look-up of known patterns,
and how rows already present are found and good rows written."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from tracker.errors import BadRow
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.duplicates import compare_existing, repeated_keys
from tracker.log.ingest.result import ImportResult
from tracker.log.store import Store


class Validator:
    """Validates and writes one file of one kind inside an open write transaction.

    A subclass per kind (``kinds/<kind>.py``) sets ``kind`` and checks the
    kind's columns in :meth:`validate`; the driver calls, chunk by chunk,
    ``validate``, ``skipped`` and ``write``, then once ``finish`` and
    ``write_last``.
    """

    kind = ""

    def __init__(self, store: Store, file: str, today: dt.date, by: str | None, result: ImportResult):
        self.store = store
        self.file = file
        self.today = today
        self.by = by
        self.result = result
        self.codes_seen: dict[tuple, list] = {}  # folded code -> new codes of this file (look-alikes)

    def validate(self, c: Checks) -> list[tuple]:
        """The chunk's rows as tuples in the table's column order (see
        ``tracker.log.store.TABLE_COLUMNS``); refused rows are marked in ``c``."""
        raise NotImplementedError

    def skipped(self, rows: list[tuple], c: Checks) -> np.ndarray:
        """Rows already present with the same content (stored, or earlier in the
        chunk); a key present with other content is refused in ``c``."""
        skip = compare_existing(self.store, self.kind, rows, c) & ~c.bad
        repeated_keys(self.kind, rows, c, skip)
        return skip

    def write(self, good: list[tuple], following: pd.DataFrame | None) -> None:
        """Write a chunk's good rows (``following``: the next chunk, None after the last)."""
        self.result.added += self.store.insert_rows(self.kind, good)

    def finish(self) -> list[BadRow]:
        """Checks across the whole file once every chunk is read: the problems found."""
        return []

    def write_last(self) -> None:
        """Write what waits for the whole file (nothing but for risers)."""

    def known_patterns(self, c: Checks, pattern: pd.Series) -> dict:
        """Refuse rows of a pattern not in the log; the stored patterns."""
        info = self.store.patterns_info()
        c.fail((pattern != "") & ~pattern.isin(list(info)), "pattern",
               "unknown pattern; import it in patterns.csv first or check the code")
        return info
