"""The refused rows of an import, written to a CSV with their row numbers and reasons."""

from __future__ import annotations

import csv
import os
import pathlib
from typing import TextIO

from tracker.csvsafe import safe_cell
from tracker.log.ingest.result import ImportResult


class RefusedReport:
    """The refused rows of one import, streamed to a CSV as they are found: a
    temporary file beside ``path``, renamed to ``path`` when complete."""

    def __init__(self, path: pathlib.Path):
        self.path = path
        self.tmp = path.with_name(f".{path.name}.{os.getpid()}.part")
        self.fh: TextIO | None = None
        self.writer: csv.DictWriter | None = None
        self.published = False

    def write(self, row: dict, columns: list[str]) -> None:
        """Add one refused row (``columns``: the file's, as read)."""
        if self.writer is None:
            self.fh = fh = self.tmp.open("w", newline="", encoding="utf-8")
            fields = ["row", *[c for c in columns if c != "_row"], "reason"]
            self.writer = csv.DictWriter(fh, fieldnames=fields, restval="", extrasaction="ignore")
            self.writer.writeheader()
        self.writer.writerow({k: safe_cell(v) for k, v in row.items()})

    def publish(self) -> str | None:
        """Put the complete report in its place; its path, or None when no row was refused."""
        if self.fh is None:
            return None
        self.fh.flush()
        os.fsync(self.fh.fileno())
        self.fh.close()
        os.replace(self.tmp, self.path)
        self.published = True
        return str(self.path)

    def discard(self) -> None:
        """Remove the report, finished or not (the import was rolled back)."""
        if self.fh is not None and not self.fh.closed:
            self.fh.close()
        self.tmp.unlink(missing_ok=True)
        if self.published:
            self.path.unlink(missing_ok=True)


def write_refused(result: ImportResult, path: str | os.PathLike) -> pathlib.Path:
    """Write the refused rows of an import (with row number and reason) to CSV."""
    path = pathlib.Path(path)
    rows = result.refused_rows
    cols = list(dict.fromkeys(k for r in rows for k in r)) or ["row", "reason"]
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=cols)
        w.writeheader()
        for r in rows:
            w.writerow({k: safe_cell(v) for k, v in r.items()})
    return path
