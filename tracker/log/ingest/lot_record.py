"""One lot typed in (the dashboard's lot form): checked by the lots import's own
validator, as one row of a lots file, and its problems worded as a form words them."""

from __future__ import annotations

import datetime as dt

import pandas as pd

from tracker.log import accounts as auth
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import COLUMNS
from tracker.log.ingest.duplicates import warn_lookalikes
from tracker.log.ingest.kinds.lots import LotsValidator
from tracker.log.ingest.record import refuse_if_bad
from tracker.log.ingest.result import ImportResult
from tracker.log.store import Store, retrying


@retrying
def log_lot(store: Store, record: dict, *, by: str | None = None, today: dt.date | None = None,
            source: str = "form") -> ImportResult:
    """Validate one lot as a row of a lots file and store it (BadRecord naming each
    field and reason otherwise). ``record`` has the lots columns (``pour_temp_f`` in
    place of ``pour_temp_c`` for a form in US units). A lot already in the log is
    refused, whatever its content. Returns the result, with any look-alike warning."""
    by = auth.author(store, auth.TABLE_ACTION["lots"], by)
    today = today or dt.date.today()
    required, _ = COLUMNS["lots"]
    cells = {k: "" for k in required}
    cells.update({k: "" if v is None else str(v).strip() for k, v in record.items()})
    frame = pd.DataFrame([cells], dtype=object)
    frame["_row"] = [1]
    result = ImportResult(kind="lots", file=source)
    with store.write():
        validator = LotsValidator(store, source, today, by, result)
        c = Checks(source, frame, result)
        rows = validator.validate(c)
        skip = validator.skipped(rows, c)
        # A file may repeat a stored lot (it is skipped); a lot typed in is meant as a new one.
        c.fail(skip & ~c.bad, "lot", f"lot {rows[0][0]} is in the log already; pick it in the inspection form",
               form="this lot is in the log already; pick it in the inspection form")
        refuse_if_bad(c, record)
        warn_lookalikes(store, "lots", rows, c, skip, result, validator.codes_seen)
        validator.write(rows, None)
        result.rows = 1
        auth.note_write(store, "lot_added", f"lot {rows[0][0]} of pattern {rows[0][1]} ({source})")
    return result
