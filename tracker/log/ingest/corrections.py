"""Corrections: a record superseded by a corrected copy, or withdrawn; the old one stays in the history."""

from __future__ import annotations

import datetime as dt

from tracker.errors import BadInput
from tracker.log import accounts as auth
from tracker.log.ingest.columns import COLUMNS
from tracker.log.ingest.record import one_record
from tracker.log.store import Store, retrying


@retrying
def correct_inspection(store: Store, record_id: int, changes: dict, *, by: str, reason: str,
                       today: dt.date | None = None) -> int:
    """Supersede record ``record_id`` by a corrected copy; the old one stays in the history.

    ``changes`` holds the columns that differ. With ``changes={"void": True}``
    the record is withdrawn (a void record supersedes it).
    """
    author = auth.author(store, "log", by)
    if not str(author or "").strip():
        raise BadInput("by", author, "name who makes the correction")
    if not str(reason or "").strip():
        raise BadInput("reason", reason, "say why the record is corrected")
    with store.write():
        old = store.inspection(record_id)
        newer = store.superseded_by(record_id)
        if newer is not None:
            if store.inspection(newer)["void"]:
                raise BadInput("record", record_id, f"it was withdrawn by record {newer}; a withdrawn record "
                                                    "stays withdrawn: log the result again as a new record")
            raise BadInput("record", record_id, f"it was already corrected by record {newer}; correct that one")
        if old["void"]:
            # Correcting the withdrawal itself would bring the record back into the counts unseen.
            raise BadInput("record", record_id, f"it is the withdrawal of record {old['supersedes']}; a "
                                                "withdrawn record stays withdrawn: log the result again as a "
                                                "new record")
        void = bool(changes.pop("void", False))
        rec = {k: old.get(k) for k in sum(COLUMNS["inspections"], [])}
        rec.update({k: v for k, v in changes.items() if k in rec})
        if void:
            # A withdrawal must not count against the lot's totals.
            rec["quantity"] = old["quantity"]
        # The lot's totals are checked as if the old record were gone.
        return one_record(store, rec, by=author, today=today, source="correction",
                          supersedes=record_id, reason=reason, void=void, exclude=(record_id,))
