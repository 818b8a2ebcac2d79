"""Rows typed into a form (a pattern, its zones, a riser revision), or made by the
program (the next revision of a what-if), checked by the import's own validators
and written in one transaction: all of them or none.

A refusal is a :class:`~tracker.errors.BadFile` named for the form ("zones
form"), each problem naming the form's row, the field and the reason, as the
import names a file's.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence

import pandas as pd

from tracker.errors import BadFile
from tracker.log import accounts as auth
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import COLUMNS, US_COLUMNS
from tracker.log.ingest.kinds import validator_for
from tracker.log.ingest.result import ImportResult
from tracker.log.store import Store, retrying

FORM_KINDS = ("patterns", "zones", "sleeves", "risers")  # what a form may write this way


def form_frame(kind: str, rows: Sequence[dict]) -> pd.DataFrame:
    """``rows`` as the import reads a file: every known column (a metric one or
    its US customary twin, as given) as text, blank for a missing value, and
    ``_row`` numbering the rows from 1."""
    required, optional = COLUMNS[kind]
    us = {u: m for u, m in US_COLUMNS[kind].items()}
    given = {k for r in rows for k in r}
    names = [next((u for u, m in us.items() if m == c and u in given), c) for c in required + optional]
    frame = pd.DataFrame([{n: _text(r.get(n)) for n in names} for r in rows], columns=names, dtype=object)
    frame["_row"] = range(1, len(rows) + 1)
    return frame


def _text(value) -> str:
    if value is None or (isinstance(value, float) and value != value):
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def write_form_rows(store: Store, items: Sequence[tuple[str, Sequence[dict]]], *, by: str | None,
                    today: dt.date | None = None, source: str = "form") -> list[ImportResult]:
    """Check and write each (kind, rows) of ``items`` as the import does, in order,
    inside the caller's write transaction (opened here when there is none).

    The caller has checked the user's role. Rows the log holds already with the
    same content are skipped, as on import. Raises BadFile, naming "KIND
    form", row, field and reason, for the first kind with a refused row;
    nothing of any kind is then written.
    """
    today = today or dt.date.today()
    results = []
    with store.write():
        for kind, rows in items:
            if kind not in FORM_KINDS:
                raise ValueError(kind)
            if not rows:
                continue
            results.append(_write_kind(store, kind, rows, by=by, today=today, name=f"{kind} {source}"))
    return results


def _write_kind(store: Store, kind: str, rows: Sequence[dict], *, by: str | None, today: dt.date,
                name: str) -> ImportResult:
    result = ImportResult(kind=kind, file=name)
    validator = validator_for(kind, store, name, today, by, result)
    frame = form_frame(kind, rows)
    c = Checks(name, frame, result)
    checked = validator.validate(c)
    result.rows = len(checked)
    skip = validator.skipped(checked, c)
    c.finish()
    result.problems.extend(validator.finish())
    if c.bad.any() or len(result.problems):
        raise BadFile(name, result.problems, total=max(result.problem_count, len(result.problems)))
    result.skipped = int(skip.sum())
    validator.write([r for r, s in zip(checked, skip, strict=True) if not s], None)
    validator.write_last()
    return result


@retrying
def save_design(store: Store, *, pattern: dict | None = None, zones: Sequence[dict] = (),
                risers: Sequence[dict] = (), by: str | None = None, today: dt.date | None = None) -> list[ImportResult]:
    """Store what the pattern design form holds: a new pattern (``pattern``, the
    patterns import's columns), its new zones and a riser revision (the risers
    import's columns, one revision listing every riser), checked as their
    imports check them, all in one transaction or nothing (see
    :func:`write_form_rows`). Needs the role that may change designs; audited
    as an import is."""
    author = auth.author(store, "design", by)
    with store.write():
        results = write_form_rows(store, [("patterns", [pattern] if pattern else []), ("zones", list(zones)),
                                          ("risers", list(risers))], by=author, today=today)
        auth.note_write(store, "design_form", "; ".join(f"{r.kind}: {r.added} added" for r in results))
    return results
