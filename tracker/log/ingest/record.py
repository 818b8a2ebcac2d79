"""One inspection result typed in (a form, the CLI's ``log``): checked as the import
checks a row, and its problems worded as a form words them."""

from __future__ import annotations

import datetime as dt
import uuid

import numpy as np
import pandas as pd

from tracker.errors import BadRecord, BadRow
from tracker.log import accounts as auth
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import COLUMNS
from tracker.log.ingest.kinds.inspections import InspectionsValidator
from tracker.log.ingest.kinds.lot_totals import LotTotals
from tracker.log.ingest.result import ImportResult
from tracker.log.store import Store, retrying

FORM_LABELS = {"lot": "Lot", "inspected_on": "Inspected on", "method": "Method", "quantity": "Quantity",
               "result": "Result", "defect": "Defect", "zone": "Zone", "xray_category": "Radiography category",
               "severity": "Severity", "serial": "Serial", "inspector": "Inspector", "notes": "Notes",
               # a lot typed in (lot_record.py)
               "pattern": "Pattern", "poured_on": "Poured on", "heat": "Heat", "molds": "Molds",
               "pour_temp_c": "Pour temperature (°C)", "pour_temp_f": "Pour temperature (°F)"}


@retrying
def log_inspection(store: Store, record: dict, *, by: str | None = None,
                   today: dt.date | None = None, source: str = "form") -> int:
    """Validate one inspection result as the import would and store it.

    ``record`` has the inspection columns; returns the new record id.
    Each call is a new record (it is never taken as a duplicate). While served
    with sign-in the record carries the signed-in user, whatever ``by`` says.
    """
    by = auth.author(store, "log", by)
    return one_record(store, record, by=by, today=today, source=source)


def one_record(store: Store, record: dict, *, by: str | None, today: dt.date | None, source: str,
               supersedes: int | None = None, reason: str | None = None, void: bool = False,
               exclude: tuple = ()) -> int:
    """Check and store one record (``supersedes``, ``reason``, ``void``: a
    correction's); returns its id. ``exclude``: record ids left out of the lot's totals."""
    today = today or dt.date.today()
    required, optional = COLUMNS["inspections"]
    frame = pd.DataFrame([{k: "" if record.get(k) is None else str(record.get(k)).strip()
                           for k in required + optional}], dtype=object)
    frame["_row"] = [1]
    # The record's own checks run before the write lock: they are the slow part, and
    # the lots, patterns and zones they read never change once stored. Holding the
    # lock through them made concurrent writers queue for ~20 ms a record.
    result = ImportResult(kind="inspections", file=source)
    validator = InspectionsValidator(store, source, today, by, result, exclude=exclude)
    validator.radiographs_checked = not void
    c = Checks(source, frame, result)
    rows = validator.validate(c)
    refuse_if_bad(c, record)
    row = list(rows[0])
    row[12] = f"{source}:{uuid.uuid4().hex}"  # each record typed in is new
    row[16] = supersedes
    row[17] = 1 if void else 0
    row[18] = reason
    with store.write():
        # Inside the lock, the lot's totals again (other writers change them), always
        # checked: a record typed in is new even when an imported row has its content.
        c = Checks(source, frame, ImportResult(kind="inspections", file=source))
        totals = LotTotals(store, exclude=exclude, log_was_empty=not store.has_rows("inspections"))
        one = lambda v: pd.Series([v], index=frame.index)  # noqa: E731 (four one-cell columns)
        totals.check(c, one(row[0]), one(row[2]), one(row[4]), one(row[3]),
                     np.array([True]), np.array([True]), store.lots_info([row[0]]))
        refuse_if_bad(c, record)
        store.insert_rows("inspections", [tuple(row)])
        return store.last_insert_id()


def refuse_if_bad(c: Checks, record: dict) -> None:
    """Raise BadRecord with the record's problems, worded for a form, if it has any."""
    c.finish()
    if c.bad.any():
        raise BadRecord([(p.column, _form_text(p)) for p in c.result.problems],
                        record.get(c.result.problems[0].column))


def _form_text(p: BadRow) -> str:
    """A problem of a record typed in, as a form says it: "Defect: pick one for a reject"."""
    label = FORM_LABELS.get(p.column, p.column)
    if p.form:
        return f"{label}: {p.form}"
    got, _, rule = p.reason.partition("; ") if p.reason.startswith("got ") else ("", "", p.reason)
    if rule.startswith(p.column + " "):
        rule = rule[len(p.column) + 1:]
    got = got.replace("got ''", "left blank")
    return f"{label}: {got}; {rule}" if got else f"{label}: {rule}"
