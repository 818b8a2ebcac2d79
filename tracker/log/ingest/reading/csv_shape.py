"""The shape of a CSV file before pandas reads it: its separator, its header as
written, and every record's width (pandas would shift a row's values over)."""

from __future__ import annotations

import csv
import os
import pathlib
import re

from tracker.errors import BadFile, BadRow, cut
from tracker.log.ingest.columns import COLUMNS, US_COLUMNS
from tracker.log.ingest.reading.header import check_header
from tracker.log.ingest.result import MAX_PROBLEMS

SEPARATORS = {",": "','", ";": "';'", "\t": "tabs", "|": "'|'"}
FIELD_LIMIT = 1 << 20  # characters in one cell: past this the file is not a table of records


def check_shape(name: str, kind: str, path: pathlib.Path, sep: str = ",") -> int:
    """Check the raw header and every record's width; return the header's width.

    pandas renames a repeated column (``alloy.1``) and takes a first row's extra
    cells as an index, shifting every value one column over; so the header is
    checked as written and a row with filled cells beyond the header is refused.
    Extra empty cells (a trailing comma) are ignored. A last line with no line
    end and fewer cells than the header is refused as cut short, and so is one
    that ends in a digit (a number may have lost its last digits).
    """
    with path.open("rb") as fh:
        size = fh.seek(0, os.SEEK_END)
        if size:
            fh.seek(size - 1)
        last = fh.read(1) if size else b""
        ends_line = size == 0 or last in (b"\n", b"\r")
    csv.field_size_limit(max(csv.field_size_limit(), FIELD_LIMIT))
    # newline="\n": lines split as an in-memory text would split them (csv handles \r\n)
    with path.open(encoding="utf-8-sig", newline="\n") as fh:
        return _check_records(name, kind, csv.reader(fh, delimiter=sep), sep=sep, ends_line=ends_line,
                              path=path, ends_digit=last.isdigit())


def _sniff(path: pathlib.Path, kind: str) -> str | None:
    """The separator a file with an unknown header is written with, if another."""
    with path.open(encoding="utf-8-sig", errors="replace", newline="") as fh:
        head = [fh.readline() for _ in range(20)]
    required = COLUMNS[kind][0]
    for sep in (";", "\t", "|"):
        cols = [c.strip().strip('"').lower() for c in head[0].split(sep)]
        cols = [US_COLUMNS[kind].get(c, c) for c in cols]
        if len(cols) > 1 and sum(c in cols for c in required) >= len(required) // 2 + 1:
            decimal = any(re.search(r"(^|" + re.escape(sep) + r')"?-?\d+,\d+"?(' + re.escape(sep) + "|$)",
                                    line.strip()) for line in head[1:])
            return sep + ("," if decimal else "")
    return None


def _check_raw_header(name: str, kind: str, header: list[str], sep: str, path: pathlib.Path | None) -> None:
    """The header as written; one that reads as another separator's names that separator."""
    try:
        check_header(name, kind, header)
    except BadFile:
        found = _sniff(path, kind) if path is not None and sep == "," else None
        if found:
            other, decimal = found[0], found[1:] == ","
            shown = SEPARATORS[other]
            opt = "tab" if other == "\t" else other
            raise BadFile(name, [], f"{name}: this file is separated by {shown}"
                          + (" with decimal commas" if decimal else "")
                          + "; save it as comma-separated with decimal points, or import it with "
                          f"`--sep '{opt}'" + (" --decimal ','" if decimal else "") + "`") from None
        raise


def _check_records(name: str, kind: str, reader, sep: str = ",", ends_line: bool = True,
                   path: pathlib.Path | None = None, ends_digit: bool = False) -> int:
    """Check the header and each record's width as the csv module reads them (see check_shape)."""
    n = 1
    header = None
    try:
        header = next(reader, None)
        while header and not header[-1].strip():
            header.pop()  # empty trailing header cells, as spreadsheets export them
        if not header:
            return 0
        _check_raw_header(name, kind, header, sep, path)
        width = len(header)
        problems: list[BadRow] = []
        bad_rows = 0
        cells = header
        for n, cells in enumerate(reader, start=2):
            if len(cells) > width and any(c.strip() for c in cells[width:]):
                extra = next(j for j in range(width, len(cells)) if cells[j].strip())
                bad_rows += 1
                if len(problems) < MAX_PROBLEMS:
                    problems.append(BadRow(name, n, f"{extra + 1} (no header)",
                                           f"got {cut(cells[extra])}; the row has {len(cells)} cells but the "
                                           f"header names {width} columns; quote a value that holds a "
                                           f"{'comma' if sep == ',' else 'separator'}, or remove the extra "
                                           "cells"))
    except csv.Error as exc:
        if "field larger than field limit" in str(exc):
            row = 1 if header is None else n + 1  # the header itself, or the record after the last read
            column = _long_cell_column(path, sep, row, header or [])
            where = f"row {row}" + (f", column {column}" if column else "")
            raise BadFile(name, [], f"{name}, {where}: a cell is longer than {FIELD_LIMIT:,} characters "
                                    "(the limit of one cell); a quote that is never closed takes in the rest "
                                    "of the file: check the quotes on that row") from None
        raise BadFile(name, [], f"{name}: not a readable CSV ({exc}); check quotes and separators") from None
    if problems:
        raise BadFile(name, problems, rows=bad_rows, total=bad_rows)
    if not ends_line and n > 1 and 0 < len(cells) < width and any(c.strip() for c in cells):
        raise BadFile(name, [], f"{name}, row {n}: the last line is cut short: it has {len(cells)} of the "
                                f"header's {width} cells and no line end; the file was probably cut off "
                                "while being copied or saved: export it again")
    if ends_digit and n > 1 and cells and len(cells) <= width:
        column = header[len(cells) - 1]
        raise BadFile(name, [], f"{name}, row {n}: the last line has no line end and ends in a number "
                                f"({column} {cells[-1]!r}); the file may have been cut off while being copied "
                                "or saved, and the number with it (50 cut to 5): export it again, or, if the "
                                "row is whole, end the file with a line end")
    return width


LONG_CELL_SCAN_BYTES = 64 << 20  # a file up to this size is read again to name a too-long cell's column


def _long_cell_column(path: pathlib.Path | None, sep: str, row: int, header: list[str]) -> str | None:
    """The column of the first cell over FIELD_LIMIT characters in record ``row``
    (1 = the header), read again without the limit; None where the file is
    larger than LONG_CELL_SCAN_BYTES or the record cannot be read."""
    if path is None or path.stat().st_size > LONG_CELL_SCAN_BYTES:
        return None
    limit = csv.field_size_limit()
    csv.field_size_limit(LONG_CELL_SCAN_BYTES)
    try:
        with path.open(encoding="utf-8-sig", newline="\n") as fh:
            for i, cells in enumerate(csv.reader(fh, delimiter=sep), start=1):
                if i == row:
                    j = next((k for k, c in enumerate(cells) if len(c) > FIELD_LIMIT), None)
                    if j is None:
                        return None
                    return header[j] if j < len(header) and header[j].strip() else f"{j + 1} (no header)"
    except (csv.Error, UnicodeDecodeError, OSError):
        return None
    finally:
        csv.field_size_limit(limit)
    return None
