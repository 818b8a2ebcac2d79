"""Importing files: :func:`import_file`, :func:`import_files` and :func:`import_dir`.

A file is read in chunks (so a file of millions of rows needs little memory),
every chunk validated column by column with vectorised checks, and the good
rows written inside one write transaction. By default one bad row refuses the
whole import and nothing is written; with ``skip_bad`` the good rows are
written and the refused ones returned (and written to a CSV by the caller).

Rows are numbered as a spreadsheet shows them: the header is row 1.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import json
import os
import pathlib
import shutil
import tempfile
from collections.abc import Callable, Iterator

import numpy as np
import pandas as pd

from tracker.errors import BadFile, BadInput
from tracker.log import accounts as auth
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import KINDS
from tracker.log.ingest.duplicates import LOOKALIKE_CODES, warn_lookalikes
from tracker.log.ingest.identity import file_identity
from tracker.log.ingest.kinds import validator_for
from tracker.log.ingest.kinds.base import Validator
from tracker.log.ingest.reading.chunks import ahead, read_chunks
from tracker.log.ingest.reading.csv_shape import SEPARATORS
from tracker.log.ingest.refused import RefusedReport
from tracker.log.ingest.result import ImportResult
from tracker.log.store import Store, retrying

# Rows validated and written at a time. On PostgreSQL a chunk's COPY runs while the next
# chunk is read and checked (Store.insert_rows), so several chunks keep both busy.
CHUNK_ROWS = 20_000


def import_file(store: Store, kind: str, path: str | os.PathLike, *, skip_bad: bool = False,
                by: str | None = None, today: dt.date | None = None,
                progress: Callable[[int], None] | None = None,
                chunk_rows: int = CHUNK_ROWS, sep: str = ",", decimal: str = ".",
                refused_to: Callable | None = None, new_records: bool = False) -> ImportResult:
    """Validate and import one file of ``kind``; all of it or (by default) nothing.

    Raises BadFile listing every refused row unless ``skip_bad``. ``progress``
    is called with the number of rows just handled.
    """
    return import_files(store, [(kind, path)], skip_bad=skip_bad, by=by, today=today,
                        progress=progress, chunk_rows=chunk_rows, sep=sep, decimal=decimal,
                        refused_to=refused_to, new_records=new_records)[0]


def _check_format(sep: str, decimal: str) -> str:
    """The separator as read (``tab`` as a tab character), once the pair is checked."""
    sep = "\t" if sep in ("tab", "\\t") else sep
    if sep not in SEPARATORS:
        raise BadInput("sep", sep, "the separator is one of , ; | or tab")
    if decimal not in (".", ","):
        raise BadInput("decimal", decimal, "the decimal mark is '.' or ','")
    if sep == decimal:
        raise BadInput("decimal", decimal, f"the decimal mark cannot be the separator {sep!r} too")
    return sep


@retrying
def import_files(store: Store, items: list[tuple[str, str | os.PathLike]], *, skip_bad: bool = False,
                 by: str | None = None, today: dt.date | None = None,
                 progress: Callable[[int], None] | None = None,
                 chunk_rows: int = CHUNK_ROWS, sep: str = ",", decimal: str = ".",
                 refused_to: Callable | None = None, new_records: bool = False) -> list[ImportResult]:
    """Import several files in one transaction, in the order given.

    An inspections row found in the log from an earlier import (the same rows of
    the same bytes, under any file name) is not added again, and the result's
    warnings name that file and its import date; with ``new_records`` such rows
    are added as new records (rows with a ``record_id`` are always matched by it).
    A pipe (``/dev/stdin``) is read into a temporary file first.

    ``sep`` (``,`` ``;`` ``|`` or ``tab``) and ``decimal`` (``.`` or ``,``) say
    how the CSV files are written. With ``skip_bad``, ``refused_to(path)``
    names the file each import's refused rows are written to (streamed as they
    are found, and complete before the good rows are committed); without it
    they are kept in ``ImportResult.refused_rows``.
    """
    today = today or dt.date.today()
    sep = _check_format(sep, decimal)
    by = auth.author(store, [auth.TABLE_ACTION.get(k, "design") for k, _ in items], by)
    reports: list[RefusedReport] = []
    try:
        with store.write():
            results = []
            for kind, path in items:
                run = _FileImport(store, kind, path, skip_bad=skip_bad, by=by, today=today,
                                  refused_to=refused_to, new_records=new_records)
                if run.report is not None:
                    reports.append(run.report)
                result = run.run(progress=progress, chunk_rows=chunk_rows, sep=sep, decimal=decimal)
                if result.refused and not skip_bad:
                    raise result.refusal()  # rolls the whole transaction back
                results.append(result)
            auth.note_write(store, "import", "; ".join(f"{r.kind} {r.file}: {r.added} added" for r in results))
            # The refused rows' reports are complete before the good rows are committed.
            for report, result in zip(reports, results, strict=False):
                result.refused_file = report.publish()
        return results
    except BaseException:
        for report in reports:
            report.discard()
        raise


class _FileImport:
    """One file's import inside the open transaction: its validator, its result
    and where its refused rows go."""

    def __init__(self, store: Store, kind: str, path: str | os.PathLike, *, skip_bad: bool, by: str | None,
                 today: dt.date, refused_to: Callable | None, new_records: bool = False):
        if kind not in KINDS:
            raise BadInput("kind", kind, "must be one of " + ", ".join(KINDS))
        self.path = pathlib.Path(path)
        if not self.path.exists():
            raise BadFile(self.path.name, [], f"{self.path}: no such file")
        if self.path.is_dir():
            raise BadFile(self.path.name, [], f"{self.path}: is a folder; give a file")
        self.new_records = new_records
        self.store = store
        self.kind = kind
        self.skip_bad = skip_bad
        self.by = by
        self.today = today
        self.report = RefusedReport(pathlib.Path(refused_to(self.path))) if skip_bad and refused_to else None
        self.result = ImportResult(kind=kind, file=self.path.name)
        self.columns: list[str] = []

    @property
    def writing(self) -> bool:
        """Whether good rows are written: with skip_bad always, else while no row is refused."""
        return self.skip_bad or not self.result.refused

    def refuse_row(self, row: dict) -> None:
        """A refused row (its row number, cells and reasons) to the report, or kept in the result."""
        if self.report is not None:
            self.report.write(row, self.columns)
        else:
            self.result.refused_rows.append(row)

    def run(self, *, progress: Callable[[int], None] | None, chunk_rows: int, sep: str,
            decimal: str) -> ImportResult:
        """Validate the file chunk by chunk and write its good rows (none once a
        row is refused, unless ``skip_bad``)."""
        with spooled(self.path) as path:
            return self._run(path, progress=progress, chunk_rows=chunk_rows, sep=sep, decimal=decimal)

    def _run(self, path: pathlib.Path, *, progress: Callable[[int], None] | None, chunk_rows: int, sep: str,
             decimal: str) -> ImportResult:
        identity = file_identity(self.store, path) if self.kind == "inspections" else None
        if identity is not None and self.new_records:
            identity = identity.as_new()
        validator = validator_for(self.kind, self.store, self.path.name, self.today, self.by, self.result,
                                  identity=identity)
        shape: dict = {}
        chunks = read_chunks(path, self.kind, chunk_rows, shape, sep=sep, name=self.path.name)
        for chunk, following in ahead(chunks):
            if not len(chunk):
                continue
            self._chunk(validator, chunk, following, decimal)
            if progress:
                progress(len(chunk))
        for p in validator.finish():
            self.result.problems.append(p)
            self.result.problem_count += 1
            self.result.refused += 1
            self.refuse_row({"row": p.row, "reason": str(p)})
        if self.writing:
            validator.write_last()
        if identity is not None and self.result.added and self.writing:
            self.store.record_import(identity.digest, self.path.name, identity.size, shape.get("last_row", 1),
                                     json.dumps(identity.segments), self.by)
        return self.result

    def _chunk(self, validator: Validator, chunk: pd.DataFrame, following: pd.DataFrame | None, decimal: str) -> None:
        """Validate one chunk, count and refuse its bad rows, write its good ones."""
        result = self.result
        self.columns = list(chunk.columns)
        c = Checks(self.path.name, chunk, result, decimal=decimal)
        rows = validator.validate(c)
        result.rows += len(rows)
        skip = validator.skipped(rows, c)
        c.finish()
        good = [r for r, b, sk in zip(rows, c.bad, skip, strict=False) if not b and not sk]
        if self.kind in LOOKALIKE_CODES:
            warn_lookalikes(self.store, self.kind, rows, c, skip, result, validator.codes_seen)
        result.skipped += int((skip & ~c.bad).sum())
        result.refused += int(c.bad.sum())
        for i in np.flatnonzero(c.bad):
            row = chunk.iloc[i].to_dict()
            self.refuse_row({"row": row.pop("_row"), **row, "reason": c.reasons.get(int(i), "")})
        if self.writing:
            validator.write(good, following)


@contextlib.contextmanager
def spooled(path: pathlib.Path) -> Iterator[pathlib.Path]:
    """``path`` itself when it is a regular file; else (a pipe, ``/dev/stdin``) its
    bytes copied into a temporary file with the same suffix, removed afterwards:
    a file is read more than once (its digest, its shape, its rows)."""
    if path.is_file():
        yield path
        return
    fd, tmp = tempfile.mkstemp(prefix="pourback-pipe-", suffix=path.suffix if path.suffix else ".csv")
    try:
        with os.fdopen(fd, "wb") as out, path.open("rb") as src:
            shutil.copyfileobj(src, out, 1 << 20)
        yield pathlib.Path(tmp)
    finally:
        os.unlink(tmp)


def import_dir(store: Store, folder: str | os.PathLike, **kwargs) -> list[ImportResult]:
    """Import every known file of a folder (patterns.csv, zones.csv, ...) in
    dependency order, all in one transaction."""
    folder = pathlib.Path(folder)
    if not folder.is_dir():
        raise BadFile(str(folder), [], f"{folder}: no such folder")
    items: list[tuple[str, str | os.PathLike]] = []
    for kind in KINDS:
        for ext in (".csv", ".xlsx"):
            p = folder / f"{kind}{ext}"
            if p.is_file():
                items.append((kind, p))
                break
    if not items:
        raise BadFile(str(folder), [], f"{folder}: holds none of " + ", ".join(f"{k}.csv" for k in KINDS))
    return import_files(store, items, **kwargs)
