"""One validator per import kind; :func:`validator_for` gives the one for a kind.

A new kind: a module here with a :class:`~tracker.log.ingest.kinds.base.Validator`
subclass, named in :data:`VALIDATORS`, its columns in ``columns.py``.
"""

from __future__ import annotations

import datetime as dt

from tracker.log.ingest.identity import FileIdentity
from tracker.log.ingest.kinds.base import Validator
from tracker.log.ingest.kinds.inspections import InspectionsValidator
from tracker.log.ingest.kinds.lots import LotsValidator
from tracker.log.ingest.kinds.patterns import PatternsValidator
from tracker.log.ingest.kinds.risers import RisersValidator
from tracker.log.ingest.kinds.sleeves import SleevesValidator
from tracker.log.ingest.kinds.zones import ZonesValidator
from tracker.log.ingest.result import ImportResult
from tracker.log.store import Store

VALIDATORS: dict[str, type[Validator]] = {
    "patterns": PatternsValidator, "zones": ZonesValidator, "sleeves": SleevesValidator,
    "risers": RisersValidator, "lots": LotsValidator, "inspections": InspectionsValidator,
}


def validator_for(kind: str, store: Store, file: str, today: dt.date, by: str | None, result: ImportResult,
                  identity: FileIdentity | None = None) -> Validator:
    """The validator of one file of ``kind`` (``identity``: an inspections file's, see FileIdentity)."""
    if kind == "inspections":
        return InspectionsValidator(store, file, today, by, result, identity=identity)
    return VALIDATORS[kind](store, file, today, by, result)
