"""CSV / xlsx import and validation of the six import kinds.

A file is read in chunks (so a file of millions of rows needs little memory),
every chunk validated column by column with vectorised checks, and the good
rows written inside one write transaction. By default one bad row refuses the
whole import and nothing is written; with ``skip_bad`` the good rows are
written and the refused ones returned (and written to a CSV by the caller).

Rows are numbered as a spreadsheet shows them: the header is row 1.
"""

from __future__ import annotations

import codecs
import csv
import datetime as dt
import hashlib
import itertools
import json
import os
import pathlib
import re
import unicodedata
import uuid
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from tracker import units
from tracker.design import geometry
from tracker.errors import BadFile, BadRecord, BadRow, cut
from tracker.limits import EARLIEST_DATE, POUR_TEMP_RANGE_C, RANGES, latest_date
from tracker.log import accounts as auth
from tracker.log.store import DEFAULT_PLANT_KEY, KEYS, TABLE_COLUMNS, Store, retrying

KINDS = ("patterns", "zones", "sleeves", "risers", "lots", "inspections")  # dependency order

DEFECTS = ("shrinkage", "gas", "sand", "slag", "misrun", "cold_shut", "hot_tear", "crack",
           "dimensional", "other")
METHODS = ("visual", "xray", "ut", "mt", "pt", "dimensional")
RESULTS = ("accept", "reject", "rework")
XRAY_CATEGORIES = ("A", "B", "CA", "CB", "CC", "CD", "D", "E", "F", "G")
GRADED_CATEGORIES = ("A", "B", "CA", "CB", "CC", "CD")  # graded in severity levels 1-5
NEVER_ACCEPTABLE = ("D", "E")  # cracks and hot tears: not acceptable at any level
SLEEVE_KINDS = ("insulating", "exothermic")
MOULDS = ("green_sand", "rigid")  # tracker.design.rules.MOULDS; empty = green sand

COLUMNS = {  # (required, optional)
    "patterns": (["pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                  "metal_cost_per_kg"], ["processing_cost_per_casting", "mould", "plant"]),
    "zones": (["pattern", "zone", "volume_cm3", "cooling_area_cm2"],
              ["thickness_mm", "length_mm", "required_xray_level", "width_mm"]),
    "sleeves": (["sleeve", "kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                 "feeding_efficiency"], ["unit_cost"]),
    "risers": (["pattern", "revision", "effective_from", "riser", "zone", "placement", "top",
                "diameter_mm", "height_mm"], ["sleeve", "neck_diameter_mm"]),
    "lots": (["lot", "pattern", "poured_on", "heat", "molds"], ["pour_temp_c"]),
    "inspections": (["lot", "inspected_on", "method", "quantity", "result"],
                    ["defect", "zone", "xray_category", "severity", "serial", "inspector", "notes",
                     "record_id"]),
}
# The US customary twin a file may give in place of a metric column (diameter_in for
# diameter_mm, casting_weight_lb, metal_cost_per_lb, pour_temp_f ...): {kind: {us: metric}}.
US_COLUMNS = {kind: units.us_names(required + optional) for kind, (required, optional) in COLUMNS.items()}
# Rows validated and written at a time. On PostgreSQL a chunk's COPY runs while the next
# chunk is read and checked (Store.insert_rows), so several chunks keep both busy.
CHUNK_ROWS = 20_000
PLANT_CODE = r"[A-Za-z0-9][A-Za-z0-9._-]{0,31}"
MAX_PROBLEMS = 1000  # keep the first this many (every one is counted)
H_OVER_D_SANE = (0.25, 4.0)


@dataclass
class ImportResult:
    """What one file's import did."""

    kind: str
    file: str
    rows: int = 0
    added: int = 0
    skipped: int = 0  # already present with the same content
    refused: int = 0  # rows
    problems: list[BadRow] = field(default_factory=list)  # the first MAX_PROBLEMS
    problem_count: int = 0  # all of them
    refused_rows: list[dict] = field(default_factory=list)  # unless streamed to refused_file
    refused_file: str | None = None
    warnings: list[str] = field(default_factory=list)  # written, but worth a look

    def to_dict(self) -> dict:
        return {"kind": self.kind, "file": self.file, "rows": self.rows, "added": self.added,
                "skipped": self.skipped, "refused": self.refused, "problem_count": self.problem_count,
                "problems": [str(p) for p in self.problems], "warnings": list(self.warnings),
                **({"refused_file": self.refused_file} if self.refused_file else {})}

    def refusal(self) -> BadFile:
        return BadFile(self.file, self.problems, rows=self.refused, total=self.problem_count)


# --- reading ----------------------------------------------------------------------

def _read_chunks(path: pathlib.Path, kind: str, chunk_rows: int, shape: dict | None = None,
                 sep: str = ",") -> Iterator[pd.DataFrame]:
    """Chunks of the file as all-string frames with a ``_row`` column (file row
    number). ``shape["last_row"]`` is set to the file's last row number, blank
    rows included."""
    shape = {} if shape is None else shape
    name = path.name
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        yield from _read_xlsx(path, kind, chunk_rows, shape)
        return
    if suffix not in (".csv", ".txt", ""):
        raise BadFile(name, [], f"{name}: unknown file type {suffix!r}; use .csv or .xlsx")
    # The file is streamed (never held whole in memory): a text check, the shape
    # check, then pandas reading it in chunks.
    _check_text(name, path)
    width = _check_shape(name, kind, path, sep)
    try:
        # index_col=False and usecols: extra (blank) cells never shift values into other columns.
        reader = pd.read_csv(path, sep=sep, encoding="utf-8-sig", dtype=str, keep_default_na=False,
                             skip_blank_lines=False, chunksize=chunk_rows, skipinitialspace=False,
                             index_col=False, usecols=range(width) if width else None)
        first = True
        offset = 0
        for chunk in reader:
            if first:
                _check_header(name, kind, list(chunk.columns))
                first = False
            chunk = _normalise(chunk)
            chunk["_row"] = np.arange(offset, offset + len(chunk)) + 2
            offset += len(chunk)
            shape["last_row"] = offset + 1
            blank = (chunk.drop(columns="_row") == "").all(axis=1)
            yield chunk[~blank]
        if first:
            raise BadFile(name, [], f"{name}: no header row found")
    except pd.errors.EmptyDataError:
        raise BadFile(name, [], f"{name}: the file is empty; it needs a header row and data rows") from None
    except pd.errors.ParserError as exc:
        raise BadFile(name, [], f"{name}: not a readable CSV ({exc}); check quotes and separators") from None


_BLOCK_BYTES = 1 << 20


def _check_text(name: str, path: pathlib.Path) -> None:
    """Refuse a blank file, or one that is not UTF-8 text (naming the row of the
    first bad byte), reading it block by block. UTF-16 text (with or without a
    byte-order mark) and lines ending in CR alone are named as such."""
    blank = True
    lines = 0
    pending = b""
    with path.open("rb") as fh:
        head = fh.read(4096)
        _check_encoding(name, head)
        fh.seek(0)
        while True:
            block = fh.read(_BLOCK_BYTES)
            data = pending + block
            try:
                # not final until the last block: a character cut at a block's end waits
                _, used = codecs.utf_8_decode(data, "strict", not block)
            except UnicodeDecodeError as exc:
                line = lines + data[:exc.start].count(b"\n") + 1
                raise BadFile(name, [], f"{name}, row {line}: byte 0x{data[exc.start]:02x} is not UTF-8 "
                                        "text; save the file as UTF-8 (CSV UTF-8 in a spreadsheet "
                                        "program)") from None
            lines += data.count(b"\n", 0, used)
            blank = blank and not data[:used].strip()
            pending = data[used:]
            if not block:
                break
    if blank:
        raise BadFile(name, [], f"{name}: the file is empty; it needs a header row and data rows")


def _check_encoding(name: str, head: bytes) -> None:
    save = "save it as CSV UTF-8 (comma delimited) in the spreadsheet program"
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        raise BadFile(name, [], f"{name}: the file is UTF-16 text (it starts with a UTF-16 byte-order mark), "
                                f"not UTF-8; {save}")
    if len(head) >= 4 and head.count(b"\x00") * 3 >= len(head):
        # Text of Latin letters in UTF-16 has a zero byte beside every letter.
        order = "little-endian" if head[1:2] == b"\x00" else "big-endian"
        raise BadFile(name, [], f"{name}: the file is UTF-16 text ({order}, without a byte-order mark), "
                                f"not UTF-8; {save}")
    if b"\r" in head and b"\n" not in head and head.rstrip(b"\r").count(b"\r") >= 1:
        raise BadFile(name, [], f"{name}: the lines end in a carriage return alone (CR, an old Mac "
                                "format); save the file with Windows (CRLF) or Unix (LF) line ends, "
                                "or as CSV UTF-8 in a spreadsheet program")


SEPARATORS = {",": "','", ";": "';'", "\t": "tabs", "|": "'|'"}
FIELD_LIMIT = 1 << 20  # characters in one cell: past this the file is not a table of records


def _check_shape(name: str, kind: str, path: pathlib.Path, sep: str = ",") -> int:
    """Check the raw header and every record's width; return the header's width.

    pandas renames a repeated column (``alloy.1``) and takes a first row's extra
    cells as an index, shifting every value one column over; so the header is
    checked as written and a row with filled cells beyond the header is refused.
    Extra empty cells (a trailing comma) are ignored. A last line with no line
    end and fewer cells than the header is refused as cut short.
    """
    with path.open("rb") as fh:
        size = fh.seek(0, os.SEEK_END)
        if size:
            fh.seek(size - 1)
        ends_line = size == 0 or fh.read(1) in (b"\n", b"\r")
    csv.field_size_limit(max(csv.field_size_limit(), FIELD_LIMIT))
    # newline="\n": lines split as an in-memory text would split them (csv handles \r\n)
    with path.open(encoding="utf-8-sig", newline="\n") as fh:
        return _check_records(name, kind, csv.reader(fh, delimiter=sep), sep=sep, ends_line=ends_line,
                              path=path)


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


def _check_records(name: str, kind: str, reader, sep: str = ",", ends_line: bool = True,
                   path: pathlib.Path | None = None) -> int:
    n = 1
    header = None
    try:
        header = next(reader, None)
        while header and not header[-1].strip():
            header.pop()  # empty trailing header cells, as spreadsheets export them
        if not header:
            return 0
        try:
            _check_header(name, kind, header)
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
        width = len(header)
        problems = []
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


def _read_xlsx(path: pathlib.Path, kind: str, chunk_rows: int, shape: dict) -> Iterator[pd.DataFrame]:
    name = path.name
    try:
        book = pd.ExcelFile(path, engine="openpyxl")
    except Exception as exc:  # openpyxl raises many kinds for a broken file
        raise BadFile(name, [], f"{name}: not a readable .xlsx workbook ({exc.__class__.__name__})") from None
    sheets = book.sheet_names
    if kind in sheets:
        sheet = kind
    elif len(sheets) == 1:
        sheet = sheets[0]
    else:
        raise BadFile(name, [], f"{name}: the workbook has sheets {', '.join(sheets)}; name the sheet "
                                f"to import '{kind}' or keep only one sheet")
    frame = pd.read_excel(book, sheet_name=sheet, dtype=str, keep_default_na=False, header=0)
    cols = [str(c) for c in frame.columns]
    if any(c.startswith("Unnamed:") for c in cols):
        raise BadFile(name, [], f"{name}: the header row has empty or merged cells ({', '.join(cols)}); "
                                "put one column name in each header cell")
    # The header as written: pandas renames a repeated column ``alloy.1``.
    raw = pd.read_excel(book, sheet_name=sheet, dtype=str, keep_default_na=False, header=None, nrows=1)
    _check_header(name, kind, [str(c) for c in raw.iloc[0]] if len(raw) else cols)
    frame = _normalise(frame)
    if (frame == "").to_numpy().any():
        _check_uncalculated(path, sheet, frame)
    # Date cells arrive as timestamps: keep the date part only.
    frame = frame.apply(lambda s: s.str.replace(r"^(\d{4}-\d{2}-\d{2}) 00:00:00$", r"\1", regex=True))
    frame["_row"] = np.arange(len(frame)) + 2
    shape["last_row"] = len(frame) + 1
    blank = (frame.drop(columns="_row") == "").all(axis=1)
    frame = frame[~blank]
    for i in range(0, max(len(frame), 1), chunk_rows):
        yield frame.iloc[i:i + chunk_rows]


def _check_uncalculated(path: pathlib.Path, sheet: str, frame: pd.DataFrame) -> None:
    """Refuse formula cells whose value was never calculated (a workbook written
    by a program that stores formulas without their results): they read as
    blank, and a blank would be taken for a value left out."""
    import openpyxl

    book = openpyxl.load_workbook(path, read_only=True, data_only=False)
    try:
        problems = []
        cols = list(frame.columns)
        empty = (frame == "").to_numpy()
        for r, values in enumerate(book[sheet].iter_rows(min_row=2, values_only=True)):
            if r >= len(frame):
                break
            for j, v in enumerate(values[:len(cols)]):
                if empty[r, j] and isinstance(v, str) and v.startswith("="):
                    problems.append(BadRow(path.name, r + 2, cols[j],
                                           f"the cell holds the formula {cut(v, 40)} whose value was never "
                                           "calculated; open the file in a spreadsheet program, save it (that "
                                           "calculates every formula) and import it again"))
    finally:
        book.close()
    if problems:
        raise BadFile(path.name, problems)


def _normalise(chunk: pd.DataFrame) -> pd.DataFrame:
    chunk = chunk.rename(columns=lambda c: str(c).strip().lower().lstrip("\ufeff"))
    if not len(chunk):
        return chunk
    return pd.DataFrame({c: (s if isinstance(s.dtype, pd.StringDtype) else s.astype(str)).str.strip()
                         for c, s in chunk.items()},
                        index=chunk.index)


REPORT_COLUMNS = ("row", "reason")  # added by the refused-rows report; ignored on import


def _check_header(name: str, kind: str, columns: list[str]) -> None:
    cols = [str(c).strip().lower().lstrip("\ufeff") for c in columns]
    if all(c in cols for c in REPORT_COLUMNS):
        # A refused-rows report, its rows fixed, is imported as it is.
        cols = [c for c in cols if c not in REPORT_COLUMNS]
    required, optional = COLUMNS[kind]
    us = US_COLUMNS[kind]
    both = [(m, u) for u, m in us.items() if u in cols and m in cols]
    dupes = sorted({c for c in cols if cols.count(c) > 1})
    cols = [us.get(c, c) for c in cols]  # a customary column stands for its metric twin
    missing = [c for c in required if c not in cols]
    unknown = [c for c in cols if c not in required and c not in optional]
    parts = []
    if missing:
        parts.append("missing column(s) " + ", ".join(missing))
    if unknown:
        parts.append("unknown column(s) " + ", ".join(repr(c) for c in unknown))
    if dupes:
        parts.append("repeated column(s) " + ", ".join(dupes))
    if both:
        parts.append("; ".join(f"columns {m} and {u} both give the "
                               f"{m[:-len(units.kind_of(m).metric_suffix)].replace('_', ' ')}; "
                               f"keep one of them (metric {m} or US customary {u})" for m, u in both))
    if parts:
        twins = [f"{u} for {m}" for u, m in us.items()]
        raise BadFile(name, [], f"{name}, row 1 (header): {'; '.join(parts)}. A {kind} file has the "
                                f"columns {', '.join(required)}"
                                + (f" and optionally {', '.join(optional)}" if optional else "")
                                + (f" (in US customary units: {', '.join(twins)})" if twins else ""))


# --- which file a row came from ------------------------------------------------------

DIGEST_CHARS = 32  # of the SHA-256 hex digest: 128 bits


@dataclass
class FileIdentity:
    """A file's content digest and the segments its rows are keyed by.

    ``segments`` is a list of ``[digest, last_row]``: row r takes the digest of
    the first segment whose last_row is at least r (None: no end). A file that
    extends an imported one (the same bytes, then more rows) keeps that file's
    segments for those rows, so re-importing a file that grew adds only the rows
    after them; any other file is a segment of its own.
    """

    digest: str
    size: int
    segments: list

    def keys(self, rows: np.ndarray) -> list[str]:
        out = np.empty(len(rows), dtype=object)
        todo = np.ones(len(rows), dtype=bool)
        for digest, last in self.segments:
            here = todo if last is None else todo & (rows <= last)
            out[here] = [f"f{digest}:{int(r)}" for r in rows[here]]
            todo &= ~here
        return out.tolist()


def file_identity(store: Store, path: pathlib.Path) -> FileIdentity:
    """Read ``path`` once: its digest, and the imported file it extends if any."""
    size = path.stat().st_size
    known = store.imports_up_to(size)
    by_size: dict[int, dict] = {}
    for digest, nbytes, last_row, segments in known:
        by_size.setdefault(nbytes, {})[digest] = (last_row, segments)
    bounds = sorted(b for b in by_size if b > 0)
    h = hashlib.sha256()
    best = None  # (bytes, last_row, segments) of the longest imported file this one starts with
    done = 0
    last_byte = b""
    with path.open("rb") as fh:
        for bound in bounds + [None]:
            while bound is None or done < bound:
                want = _BLOCK_BYTES if bound is None else min(_BLOCK_BYTES, bound - done)
                block = fh.read(want)
                if not block:
                    break
                h.update(block)
                done += len(block)
                last_byte = block[-1:]
            if bound is None or done < bound:
                break
            hit = by_size[bound].get(h.hexdigest()[:DIGEST_CHARS])
            if hit is not None and bound < size and last_byte not in (b"\n", b"\r"):
                # A prefix counts only where a row ends: else its last row went on.
                following = fh.read(1)
                fh.seek(done)
                if following not in (b"\n", b"\r"):
                    hit = None
            if hit is not None:
                best = (bound, *hit)
    digest = h.hexdigest()[:DIGEST_CHARS]
    if best is None:
        return FileIdentity(digest, size, [[digest, None]])
    nbytes, last_row, segments = best
    segments = json.loads(segments)
    if nbytes == size:
        return FileIdentity(digest, size, segments)
    segments[-1][1] = last_row
    return FileIdentity(digest, size, segments + [[digest, None]])


# --- column checks ----------------------------------------------------------------

class _Checks:
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

    def text(self, name: str, required: bool = True, max_len: int = 200) -> pd.Series:
        s = self.col(name)
        if required:
            self.fail(s == "", name, f"{name} is required")
        self.fail(s.str.len() > max_len, name, f"{name} is longer than {max_len} characters")
        # One scan of the whole column (a control or invisible character is rare): only a
        # column holding a character that does not print is checked cell by cell.
        if not _prints(s.tolist()):
            self.fail(s.str.contains(CONTROL, regex=True), name, f"{name} holds control characters")
            hidden = s.str.contains(INVISIBLE, regex=True)
            if hidden.any():
                self.fail(hidden, name, lambda i: _invisible_text(name, s.iloc[i]))
        return s

    def code(self, name: str, allowed, required: bool = True, lower: bool = True) -> pd.Series:
        """A code from a fixed list, matched whatever its case (and for words,
        spaces or hyphens for underscores and the spelling variants in
        ALIASES), returned in the list's own spelling."""
        # Spelled out once per distinct value (a column holds a handful), then spread.
        given, distinct, where = self.distinct(name)
        spelled = np.array([_code_spelling(v, lower) for v in distinct] or [""], dtype=object)
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
            rule += f" {'of at least' if low_inclusive else 'above'} {_show(low)}"
        if high is not None:
            rule += f"{' and' if low is not None else ''} at most {_show(high)}"
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


# Characters that print as nothing or reorder the text around them (Unicode category Cf:
# zero-width spaces and joiners, bidirectional marks and overrides, soft hyphen, word
# joiner, byte-order mark), and line or paragraph separators. A code holding one looks
# like another code but is not equal to it.
_INVISIBLE_CHARS = [chr(c) for c in range(0x110000)
                    if unicodedata.category(chr(c)) in ("Cf", "Zl", "Zp")]
INVISIBLE = "[" + "".join(re.escape(ch) for ch in _INVISIBLE_CHARS) + "]"
_INVISIBLE_RE = re.compile(INVISIBLE)
# Control characters other than tab, line feed and carriage return.
CONTROL = r"[\x00-\x08\x0b\x0c\x0e-\x1f]"


def _prints(values: list) -> bool:
    """Whether every character of ``values`` prints (``str.isprintable``: no control
    character, none of Unicode's categories Cf, Zl, Zp, nor any other that prints as
    nothing); False for a missing value."""
    try:
        return "".join(values).isprintable()
    except TypeError:
        return False


def _code_spelling(value: str, lower: bool) -> str:
    """A code as the fixed lists spell it: lower case, spaces and hyphens as
    underscores, the spelling variants of ALIASES (``lower``); or upper case.
    A missing value (NaN) stays missing."""
    if not isinstance(value, str):
        return value
    if not lower:
        return value.upper()
    value = value.lower().replace(" ", "_").replace("-", "_")
    return ALIASES.get(value, value)


def _invisible_text(name: str, value: str) -> str:
    m = _INVISIBLE_RE.search(value)
    ch = m.group(0)
    label = unicodedata.name(ch, "an unnamed format character")
    return (f"{name} holds an invisible character (U+{ord(ch):04X} {label}) at character {m.start() + 1}; "
            "retype the value without it")


# Spelling variants of the trade, written either way: matched to the log's own spelling.
ALIASES = {"aluminium": "aluminum", "aluminium_bronze": "aluminum_bronze", "grey_iron": "gray_iron",
           "grey_cast_iron": "gray_iron", "gray_cast_iron": "gray_iron", "cast_steel": "steel",
           "nodular_iron": "ductile_iron", "sg_iron": "ductile_iron", "coldshut": "cold_shut",
           "hottear": "hot_tear", "x_ray": "xray", "rt": "xray"}


def _log_spelling(values: pd.Series, patterns: list, known: dict) -> pd.Series:
    """Zone codes as the log spells them: a code that matches a stored zone of
    its pattern only when case is ignored ("Boss" for "boss") takes the stored
    spelling; an exact match always wins."""
    folded: dict = {}

    def stored(p: str, z: str) -> str:
        if not folded:  # built only when a code is not spelled as stored (rare)
            for q, y in known:
                folded.setdefault((q, fold(y)), y)
        return folded.get((p, fold(z)), z)

    out = [z if not z or (p, z) in known else stored(p, z) for p, z in zip(patterns, values.tolist(), strict=False)]
    return pd.Series(out, index=values.index, dtype=object)


def _zones_text(known: dict, pattern: str) -> str:
    zones = sorted(z for p, z in known if p == pattern)
    return f"its zones are {', '.join(zones)}" if zones else "it has no zones yet"


def fold(code: str) -> str:
    """A code as compared for look-alikes: Unicode compatibility form, case folded."""
    return unicodedata.normalize("NFKC", str(code)).casefold()


def _show(x: float) -> str:
    """A limit as people write it: 1,000,000 rather than 1e+06."""
    return f"{int(x):,}" if float(x).is_integer() else f"{x:g}"


def _none(v):
    """Blank cells and NaN become NULL."""
    if v is None or (isinstance(v, float) and np.isnan(v)) or v == "":
        return None
    return v


def _nulls(s: pd.Series) -> list:
    """A text column as a list, blank cells and NaN as None (as :func:`_none`)."""
    a = s.to_numpy(dtype=object, copy=True)  # an object column's array is a read-only view
    a[pd.isna(a) | (a == "")] = None
    return a.tolist()


def _ints(s: pd.Series) -> list:
    """A numeric column as a list of Python ints, NaN as None (as :func:`_int_or_none`)."""
    a = np.asarray(s, dtype=float)
    missing = np.isnan(a)
    out = np.where(missing, 0, a).astype(np.int64).astype(object)
    out[missing] = None
    return out.tolist()


def _running_sum(key: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Inclusive running sum of ``values`` within each ``key``, in the given order."""
    order = np.argsort(key, kind="stable")
    v = values[order]
    total = np.cumsum(v)
    k = key[order]
    start = np.r_[True, k[1:] != k[:-1]]
    before = (total - v)[start]
    out = np.empty_like(total)
    out[order] = total - before[np.cumsum(start) - 1]
    return out


def _int_or_none(v):
    v = _none(v)
    return None if v is None else int(v)


def _float_or_none(v):
    v = _none(v)
    return None if v is None else float(v)


# --- per-kind validation ----------------------------------------------------------

class _Importer:
    """Validates and writes one file of one kind inside an open write transaction."""

    def __init__(self, store: Store, kind: str, file: str, today: dt.date, by: str | None,
                 result: ImportResult, exclude: tuple = (), identity: FileIdentity | None = None):
        self.store = store
        self.exclude = tuple(exclude)  # record ids left out of the lot totals (a correction)
        self.kind = kind
        self.file = file
        self.today = today
        self.by = by
        self.result = result
        self.now = dt.datetime.now(dt.UTC).isoformat(timespec="seconds")
        # inspections: occurrence counting of identical rows across chunks (old keys)
        self._seen_digests = np.zeros(0, dtype=np.uint64)
        self._seen_counts = np.zeros(0, dtype=np.int64)
        self._lot_index: dict[str, int] = {}
        self._lot_tot = np.zeros((0, 1 + len(METHODS)), dtype=np.int64)
        self._lot_castings = np.zeros(0, dtype=np.int64)
        self._revisions_in_file: dict[tuple, dict] = {}
        self.pending_risers: list[tuple] = []  # riser rows, written after their revisions
        self.already_present = np.zeros(0, dtype=bool)  # inspections: rows stored before
        # A log with no inspection record yet (a first bulk load) holds nothing a file's
        # rows could repeat and no earlier totals for their lots: no need to look them up.
        # (Rows written by this file's earlier chunks never collide: keys count occurrences.)
        self._log_was_empty = kind == "inspections" and not store.has_rows("inspections")
        self.identity = identity  # the file's digest and segments (None: a record typed in)
        self.legacy = kind == "inspections" and not self._log_was_empty and store.has_legacy_keys()
        self._ids_in_file: dict[str, tuple] = {}  # record_id -> (row, content) seen in this file
        self.codes_seen: dict[tuple, list] = {}  # folded code -> new codes of this file (look-alikes)
        self._levels: dict | None = None  # inspections: the zones' required levels (read once)
        self._next_lots: tuple[set, dict] | None = None  # the next chunk's lots, looked up ahead

    def prefetch(self, chunk: pd.DataFrame) -> None:
        """Look up the lots of the next chunk of an inspections file now, before this
        chunk's rows are written: on PostgreSQL their COPY then runs while the next
        chunk is checked (see Store.insert_rows) instead of holding up its lookup."""
        if self.kind == "inspections" and "lot" in chunk.columns:
            lots = [x for x in dict.fromkeys(chunk["lot"].tolist()) if x != ""]
            self._next_lots = (set(lots), self.store.lots_info(lots))

    # each returns (rows to insert as tuples, keys) for the good rows of the chunk
    def validate(self, c: _Checks) -> list[tuple]:
        return getattr(self, "_" + self.kind)(c)

    def _patterns(self, c: _Checks) -> list[tuple]:
        from tracker.design.alloys import ALLOYS

        pattern = c.text("pattern", max_len=64)
        desc = c.text("description", required=False, max_len=500)
        alloy = c.code("alloy", sorted(ALLOYS))
        weight = c.measure("casting_weight_kg")
        per_mold = c.number("castings_per_mold", low=0, whole=True, high=10000)
        cost = c.measure("metal_cost_per_kg")
        proc = c.measure("processing_cost_per_casting", required=False)
        mould = c.code("mould", MOULDS, required=False)
        plant = self._plant(c)
        return [(p, d, a, w, int(n) if n == n else n, m, _float_or_none(q), _none(ml), f or None)
                for p, d, a, w, n, m, q, ml, f in zip(pattern, desc, alloy, weight, per_mold, cost, proc, mould,
                                                       plant, strict=False)]

    def _plant(self, c: _Checks) -> pd.Series:
        """The plant column: a short code; empty takes the log's default plant
        (``pourback init --plant``), or none."""
        plant = c.text("plant", required=False, max_len=32)
        c.fail((plant != "") & ~plant.str.fullmatch(PLANT_CODE), "plant",
               "a plant code is letters, digits, '.', '-' or '_' (e.g. NORTH or plant-2)")
        default = self.store.get_meta(DEFAULT_PLANT_KEY) or ""
        return plant.where(plant != "", default)

    def _known_patterns(self, c: _Checks, pattern: pd.Series) -> dict:
        info = self.store.patterns_info()
        c.fail((pattern != "") & ~pattern.isin(list(info)), "pattern",
               "unknown pattern; import it in patterns.csv first or check the code")
        return info

    def _zones(self, c: _Checks) -> list[tuple]:
        pattern = c.text("pattern", max_len=64)
        zone = c.text("zone", max_len=64)
        vol = c.measure("volume_cm3")
        area = c.measure("cooling_area_cm2")
        thick = c.measure("thickness_mm", required=False)
        # A section of thickness T cooling on both faces has a modulus of at most T/2 (a
        # plate). Below a same-volume sphere's area is possible where faces are joined to
        # other metal: `check` notes it, the import takes it.
        m = (vol / area).to_numpy(dtype=float)
        measured = ("cooling_area_cm2", "volume_cm3", "thickness_mm")
        msys = c.system("volume_cm3")  # the modulus is worded in the volume's system
        c.fail(thick.notna().to_numpy() & ~np.isnan(m) & (m > thick.to_numpy(dtype=float) / 20.0 * (1 + 1e-9)),
               "cooling_area_cm2",
               lambda i: f"the modulus V/A = {units.show('length_cm', m[i], msys, 2)} is above half the "
                         f"thickness ({units.show('length_cm', thick.iloc[i] / 20.0, msys, 2)}), more than a "
                         "plate of that thickness cooling on both faces can have; check the units "
                         f"({', '.join(units.symbol(n, c.system(n)) for n in measured)})")
        length = c.measure("length_mm", required=False)
        width = c.measure("width_mm", required=False)
        level = c.number("required_xray_level", required=False, low=1, low_inclusive=True, high=5,
                         whole=True)
        self._known_patterns(c, pattern)
        joined = ~c.bad & ~np.isnan(m) & geometry.exceeds_sphere_modulus(vol.to_numpy(dtype=float),
                                                                          area.to_numpy(dtype=float))
        for i in np.flatnonzero(joined)[:MAX_PROBLEMS]:
            self.result.warnings.append(
                f"{self.file}, row {int(c.rows[i])}, zone {zone.iloc[i]}: "
                + geometry.joined_faces_warning(float(vol.iloc[i]), float(area.iloc[i]), msys))
        return [(p, z, v, a, _float_or_none(t), _float_or_none(ln), _int_or_none(lv), _float_or_none(w))
                for p, z, v, a, t, ln, lv, w in zip(pattern, zone, vol, area, thick, length, level, width, strict=False)]

    def _sleeves(self, c: _Checks) -> list[tuple]:
        sleeve = c.text("sleeve", max_len=64)
        kind = c.code("kind", SLEEVE_KINDS)
        dia = c.measure("inner_diameter_mm")
        h = c.measure("height_mm")
        f = c.number("modulus_factor", low=1.0, low_inclusive=True, high=2.0)
        eps = c.number("feeding_efficiency", low=0, high=1.0, unit="(a fraction, 0.30 = 30 %)")
        cost = c.measure("unit_cost", required=False)
        return [(s, k, d, hh, ff, e, _float_or_none(u))
                for s, k, d, hh, ff, e, u in zip(sleeve, kind, dia, h, f, eps, cost, strict=False)]

    def _risers(self, c: _Checks) -> list[tuple]:
        pattern = c.text("pattern", max_len=64)
        revision = c.text("revision", max_len=64)
        eff = c.date("effective_from", today=self.today)
        riser = c.text("riser", max_len=64)
        zone = c.text("zone", max_len=64)
        placement = c.code("placement", geometry.PLACEMENTS)
        top = c.code("top", geometry.TOPS)
        dia = c.measure("diameter_mm")
        h = c.measure("height_mm")
        sleeve = c.text("sleeve", required=False, max_len=64)
        neck = c.measure("neck_diameter_mm", required=False)
        hd = (h / dia).to_numpy()
        lo, hi = H_OVER_D_SANE
        c.fail(dia.notna().to_numpy() & h.notna().to_numpy() & ~((hd >= lo) & (hd <= hi)),
               "height_mm", f"height over diameter must lie between {lo:g} and {hi:g}")
        c.fail(neck.notna() & dia.notna() & (neck >= dia), "neck_diameter_mm",
               "the neck must be narrower than the riser")
        c.fail(neck.notna() & (placement == "top"), "neck_diameter_mm",
               "a neck is only given for a side riser")
        self._known_patterns(c, pattern)
        zones = self.store.zone_levels()
        keys = list(zip(pattern, zone, strict=False))
        zone = _log_spelling(zone, pattern.tolist(), zones)
        keys = list(zip(pattern, zone, strict=False))
        c.fail(c.ok("pattern", "zone") & np.array([k not in zones for k in keys], dtype=bool), "zone",
               lambda i: f"got {zone.iloc[i]!r}; pattern {pattern.iloc[i]} has no such zone; "
                         f"{_zones_text(zones, pattern.iloc[i])}; import it in zones.csv first")
        sleeves = self.store.table("sleeves").set_index("sleeve") if self.store.count("sleeves") else None
        has_sleeve = (sleeve != "").to_numpy()
        known = np.array([s in sleeves.index if sleeves is not None else False for s in sleeve])
        c.fail(has_sleeve & ~known, "sleeve", "unknown sleeve; import it in sleeves.csv first")
        if sleeves is not None:
            inner = np.array([sleeves.at[s, "inner_diameter_mm"] if k else np.nan
                              for s, k in zip(sleeve, known, strict=False)], dtype=float)
            dsys = c.system("diameter_mm")
            c.fail(has_sleeve & known & (np.abs(dia.to_numpy() - inner) > 1.0), "diameter_mm",
                   lambda i: f"got {units.value_in('diameter_mm', dia.iloc[i], dsys):g}; sleeve {sleeve.iloc[i]} "
                             f"has an inner diameter of {units.value_in('diameter_mm', inner[i], dsys):g} "
                             f"{units.symbol('diameter_mm', dsys)}; the riser diameter is the sleeve's")
        rows = [(p, r, rs, z, pl, t, d, hh, _none(s), _float_or_none(n))
                for p, r, rs, z, pl, t, d, hh, s, n in
                zip(pattern, revision, riser, zone, placement, top, dia, h, sleeve, neck, strict=False)]
        # Revisions: one effective date each, all risers listed once, never changed once stored.
        for i, (p, r, e) in enumerate(zip(pattern, revision, eff, strict=False)):
            if c.bad[i]:
                continue
            rev = self._revisions_in_file.setdefault((p, r), {"effective_from": e, "rows": [],
                                                               "first_row": int(c.rows[i])})
            if rev["effective_from"] != e:
                c.fail(np.arange(len(rows)) == i, "effective_from",
                       f"revision {r} of {p} is dated {rev['effective_from']} on an earlier row; "
                       "all risers of one revision share one date")
                continue
            rev["rows"].append(rows[i])
        return rows

    def finish_risers(self) -> tuple[list[tuple], list[tuple]]:
        """Revision rows to add, checked against the stored revisions as a whole."""
        stored = self.store.revisions_frame()
        stored_rev = {(p, r): e for p, r, e in stored.itertuples(index=False)}
        dates: dict[tuple, str] = {}
        for p, r, e in stored.itertuples(index=False):
            dates[(p, e)] = r
        new_revs, problems = [], []
        for (p, r), rev in self._revisions_in_file.items():
            e = rev["effective_from"]
            other = dates.get((p, e))
            if other is not None and other != r:
                problems.append(BadRow(self.file, rev["first_row"], "effective_from",
                                       f"revision {r} of {p} takes effect on {e}, the same day as "
                                       f"revision {other}; give each revision its own date"))
                continue
            dates[(p, e)] = r
            if (p, r) in stored_rev:
                risers = self.store.risers_frame(pattern=p, revision=r)
                have = {tuple(x) for x in risers[["riser", "zone", "placement", "top", "diameter_mm",
                                                  "height_mm", "sleeve", "neck_diameter_mm"]]
                        .astype(object).where(risers.notna(), None).itertuples(index=False)}
                want = {row[2:] for row in rev["rows"]}
                if stored_rev[(p, r)] != e or have != want:
                    problems.append(BadRow(self.file, rev["first_row"], "revision",
                                           f"revision {r} of {p} is stored already with other content; "
                                           "a stored revision is never changed: give the new design "
                                           "a new revision code and date"))
            else:
                new_revs.append((p, r, e))
        return new_revs, problems

    def _lots(self, c: _Checks) -> list[tuple]:
        lot = c.text("lot", max_len=64)
        pattern = c.text("pattern", max_len=64)
        poured = c.date("poured_on", not_after=self.today, today=self.today)
        heat = c.text("heat", max_len=64)
        molds = c.number("molds", low=0, whole=True, high=100000)
        lo, hi = POUR_TEMP_RANGE_C
        temp = c.number("pour_temp_c", required=False, low=lo, low_inclusive=True, high=hi, unit="°C")
        self._known_patterns(c, pattern)
        return [(lt, p, d, h, int(m) if m == m else m, _float_or_none(t))
                for lt, p, d, h, m, t in zip(lot, pattern, poured, heat, molds, temp, strict=False)]

    def _inspections(self, c: _Checks) -> list[tuple]:
        lot = c.text("lot", max_len=64)
        on = c.date("inspected_on", not_after=self.today, today=self.today)
        method = c.code("method", METHODS)
        qty = c.number("quantity", low=0, whole=True, high=1_000_000)
        result = c.code("result", RESULTS)
        defect = c.code("defect", DEFECTS, required=False)
        zone = c.text("zone", required=False, max_len=64)
        cat = c.code("xray_category", XRAY_CATEGORIES, required=False, lower=False)
        sev = c.number("severity", required=False, low=1, low_inclusive=True, high=5, whole=True)
        serial = c.text("serial", required=False)
        inspector = c.text("inspector", required=False, max_len=100)
        notes = c.text("notes", required=False, max_len=2000)
        rid = c.text("record_id", required=False, max_len=64)
        needs_defect = result.isin(["reject", "rework"]) & (defect == "")
        for res in ("reject", "rework"):
            c.fail(needs_defect & (result == res), "defect",
                   f"a {res} row needs the defect found; use one of {', '.join(DEFECTS)}",
                   form=f"pick one for a {res} ({', '.join(DEFECTS)})")
        c.fail(c.ok("method", "xray_category") & (cat != "") & (method != "xray"), "xray_category",
               lambda i: f"got {cat.iloc[i]!r}; a radiography category goes with method xray, "
                         f"not {method.iloc[i]}")
        c.fail(sev.notna() & (cat == ""), "severity", "a severity level needs its xray_category")
        c.fail(c.ok("xray_category") & sev.notna() & (cat != "") & ~cat.isin(GRADED_CATEGORIES), "severity",
               lambda i: f"category {cat.iloc[i]} is not graded in severity levels; leave severity blank")
        c.fail(cat.isin(NEVER_ACCEPTABLE) & (result == "accept"), "result",
               lambda i: f"got 'accept'; category {cat.iloc[i]} (cracks, hot tears) is not acceptable at "
                         "any level")
        # The lot must exist, inspection on or after the pour.
        wanted = lot[lot != ""].unique().tolist()
        ahead, info = self._next_lots or (set(), None)
        self._next_lots = None
        if info is None or not ahead.issuperset(wanted):
            info = self.store.lots_info(wanted)
        lot_l, zone_l = lot.tolist(), zone.tolist()  # plain lists: iterating a Series is slow
        known = np.array([x in info for x in lot_l], dtype=bool)  # Series.isin is slow on many values
        c.fail((lot != "") & ~known, "lot", "unknown lot; import it in lots.csv first or check the code")
        poured = np.array([info[x]["poured_on"] if k else "" for x, k in zip(lot_l, known, strict=False)], dtype=object)
        c.fail(c.ok("inspected_on") & known & (on != "") & (on.to_numpy() < poured), "inspected_on",
               lambda i: f"got {on.iloc[i]!r}; lot {lot.iloc[i]} was poured on {poured[i]}; "
                         "a casting is inspected after it is poured")
        pattern = np.array([info[x]["pattern"] if k else "" for x, k in zip(lot_l, known, strict=False)], dtype=object)
        if self._levels is None:  # zones are not written while an inspections file is
            self._levels = self.store.zone_levels()
        levels = self._levels
        zone = _log_spelling(zone, pattern.tolist(), levels)
        zone_l = zone.tolist()
        has_zone = (zone != "").to_numpy()
        zone_known = np.array([(p, z) in levels for p, z in zip(pattern, zone_l, strict=False)], dtype=bool)
        c.fail(known & has_zone & ~zone_known, "zone",
               lambda i: f"got {zone.iloc[i]!r}; pattern {pattern[i]} has no such zone; "
                         f"{_zones_text(levels, pattern[i])}",
               form=None)
        level = np.array([levels.get((p, z)) if zk else None for p, z, zk in zip(pattern, zone_l, zone_known, strict=False)],
                         dtype=float)
        sev_a = sev.to_numpy(dtype=float)
        graded = cat.isin(GRADED_CATEGORIES).to_numpy() & ~np.isnan(sev_a) & ~np.isnan(level)
        c.fail(graded & (sev_a > np.nan_to_num(level, nan=9)) & (result == "accept").to_numpy(), "result",
               lambda i: f"got 'accept'; severity {int(sev_a[i])} is above zone {zone.iloc[i]}'s required "
                         f"level {int(level[i])}: write reject or rework")
        c.fail(graded & (sev_a <= np.nan_to_num(level, nan=9)) & (result == "reject").to_numpy(), "result",
               lambda i: f"got 'reject'; severity {int(sev_a[i])} meets zone {zone.iloc[i]}'s required "
                         f"level {int(level[i])}: the casting is acceptable on radiography")
        # Column by column (blank text and NaN as NULL, as _none / _int_or_none give them),
        # then zipped into rows: a Python call per cell is most of an import's time.
        columns = [lot_l, on.tolist(), method.tolist(), _ints(qty), result.tolist(), _nulls(defect),
                   _nulls(zone), _nulls(cat), _ints(sev), _nulls(serial), _nulls(inspector), _nulls(notes)]
        keys, present = self._record_keys(c, rid, columns, [lot, on, method, qty, result, defect, zone, cat,
                                                             sev, serial, inspector, notes])
        new = ~present
        self._check_lot_totals(c, lot, method, result, qty, known, new, info)
        self.already_present = present
        fixed = (self.now, self.by, self.file, None, 0, None)
        return list(zip(*columns, keys, *(itertools.repeat(v, len(keys)) for v in fixed), strict=False))

    def _record_keys(self, c: _Checks, rid: pd.Series, columns: list, canon: list) -> tuple[list, np.ndarray]:
        """Each row's record key and whether it is already present.

        A row with a ``record_id`` is keyed by it: present when stored (or earlier
        in the file) with the same content, refused when with other content. Any
        other row is keyed by its file's digest and its row number (see
        :class:`FileIdentity`), so a second file's identical row is a new record.
        """
        rid_l = rid.tolist()
        has_id = np.array([r != "" for r in rid_l], dtype=bool)
        if self.identity is None:  # a record typed in: its key is given by the caller
            keys = [f"{self.file}:{uuid.uuid4().hex}" for _ in rid_l]
        else:
            keys = self.identity.keys(c.rows)
        for i in np.flatnonzero(has_id):
            keys[i] = f"id:{rid_l[i]}"
        present_keys = set() if self._log_was_empty else self.store.keys_present(
            "inspections", "record_key", sorted(keys))  # sorted: neighbouring keys share index pages
        present = np.array([k in present_keys for k in keys], dtype=bool)
        if has_id.any():
            stored = self.store.records_by_key([keys[i] for i in np.flatnonzero(has_id & present)])
            for i in np.flatnonzero(has_id & ~c.bad):
                content = tuple(col[i] for col in columns)
                earlier = stored.get(keys[i])
                where = "stored already"
                if earlier is None and rid_l[i] in self._ids_in_file:
                    row, earlier = self._ids_in_file[rid_l[i]]
                    where = f"on row {row} of this file"
                    present[i] = True
                elif earlier is None:
                    self._ids_in_file[rid_l[i]] = (int(c.rows[i]), content)
                    continue
                if not _same(earlier, content):
                    cols = TABLE_COLUMNS["inspections"][1:13]
                    diff = [col for col, a, b in zip(cols, earlier, content, strict=False) if not _same_value(a, b)]
                    c.fail(np.arange(len(keys)) == i, "record_id",
                           f"record {rid_l[i]} is {where} with other {', '.join(diff)}; a record is "
                           "imported once: correct the stored one with `pourback correct`")
        if self.legacy and (~has_id & ~present).any():
            legacy = self._legacy_keys(canon)
            found = self.store.legacy_keys_present([legacy[i] for i in np.flatnonzero(~has_id & ~present)],
                                                   self.file)
            present |= ~has_id & np.array([k in found for k in legacy], dtype=bool)
        return keys, present

    def _legacy_keys(self, canon: list) -> list[str]:
        """The keys rows were given before schema version 4: SHA-1 of the row's
        content and how many identical rows came before it in the file."""
        lot, on, method, qty, result, defect, zone, cat, sev, serial, inspector, notes = canon
        canon = [lot, on, method, qty.fillna(0).astype(np.int64).astype(str), result, defect, zone, cat,
                 sev.fillna(0).astype(np.int64).astype(str).replace("0", ""), serial, inspector, notes]
        joined = ["\x1f".join(t) for t in zip(*(col.tolist() for col in canon), strict=False)]
        digests = [hashlib.sha1(s.encode("utf-8")).hexdigest() for s in joined]
        occurrence = self._occurrences(np.array([int(d[:16], 16) for d in digests], dtype=np.uint64))
        return [f"{d}:{n}" for d, n in zip(digests, occurrence, strict=False)]

    def _occurrences(self, d: np.ndarray) -> np.ndarray:
        """For each digest, how many identical rows came before it in this file."""
        if not len(d):
            return np.zeros(0, dtype=np.int64)
        order = np.argsort(d, kind="stable")
        sd = d[order]
        start = np.r_[True, sd[1:] != sd[:-1]]
        grp = np.cumsum(start) - 1
        first = np.flatnonzero(start)
        within = np.arange(len(sd)) - first[grp]
        pos = np.searchsorted(self._seen_digests, sd)
        hit = (pos < len(self._seen_digests)) & (self._seen_digests[np.minimum(pos, len(self._seen_digests) - 1)]
                                                 == sd) if len(self._seen_digests) else np.zeros(len(sd), bool)
        before = np.where(hit, self._seen_counts[np.minimum(pos, max(len(self._seen_counts) - 1, 0))], 0) \
            if len(self._seen_counts) else np.zeros(len(sd), dtype=np.int64)
        occ = np.empty(len(d), dtype=np.int64)
        occ[order] = before + within
        # merge the chunk's digests into the seen set with their new counts
        uniq, counts = sd[start], np.diff(np.r_[first, len(sd)])
        all_d = np.concatenate([self._seen_digests, uniq])
        all_c = np.concatenate([self._seen_counts, counts])
        o = np.argsort(all_d, kind="stable")
        all_d, all_c = all_d[o], all_c[o]
        s2 = np.r_[True, all_d[1:] != all_d[:-1]]
        self._seen_digests = all_d[s2]
        self._seen_counts = np.add.reduceat(all_c, np.flatnonzero(s2))
        return occ

    def _totals_at_once(self, lots, meth, rejected, q) -> bool:
        """Add the rows' quantities to their lots' totals at once, if no row takes a
        total above the castings poured; else change nothing and return False.

        The row-by-row check gives the same totals whenever no row fails, and the
        first row failing here is the first it fails: so it runs only when needed.
        """
        if not len(lots):
            return True
        j = np.fromiter((self._lot_index[x] for x in lots), dtype=np.int64, count=len(lots))
        where = {m: k for k, m in enumerate(METHODS, start=1)}
        mi = np.fromiter((where[m] for m in meth), dtype=np.int64, count=len(meth))
        qr = np.where(rejected, q, 0)
        cap = self._lot_castings[j]
        rej_total = self._lot_tot[j, 0] + _running_sum(j, qr)
        method_total = self._lot_tot[j, mi] + _running_sum(j * (1 + len(METHODS)) + mi, q)
        if (rejected & (rej_total > cap)).any() or (method_total > cap).any():
            return False
        np.add.at(self._lot_tot, (j, 0), qr)
        np.add.at(self._lot_tot, (j, mi), q)
        return True

    def _check_lot_totals(self, c, lot, method, result, qty, known, new, info) -> None:
        """Rejects never above castings poured; no method inspects more castings than poured."""
        lots = lot.to_numpy()
        fresh = [x for x in dict.fromkeys(lots[known]) if x not in self._lot_index]
        if fresh:
            stored = {} if self._log_was_empty else self.store.lot_totals(fresh, exclude=self.exclude)
            base = len(self._lot_index)
            self._lot_index.update(zip(fresh, range(base, base + len(fresh)), strict=False))
            add = np.zeros((len(fresh), 1 + len(METHODS)), dtype=np.int64)
            cast = np.fromiter((info[x]["castings"] for x in fresh), dtype=np.int64, count=len(fresh))
            for x, t in stored.items():
                j = self._lot_index[x] - base
                add[j, 0] = t["rejected"]
                for m, q in t["methods"].items():
                    add[j, 1 + METHODS.index(m)] = q
            need = base + len(fresh)
            if need > len(self._lot_castings):  # grown by doubling: a copy per chunk was quadratic
                size = max(need, 2 * len(self._lot_castings), 1024)
                tot, castings = np.zeros((size, 1 + len(METHODS)), dtype=np.int64), np.zeros(size, dtype=np.int64)
                tot[:base], castings[:base] = self._lot_tot[:base], self._lot_castings[:base]
                self._lot_tot, self._lot_castings = tot, castings
            self._lot_tot[base:need] = add
            self._lot_castings[base:need] = cast
        q = qty.fillna(0).to_numpy(dtype=np.int64)
        res = result.to_numpy()
        meth = method.to_numpy()
        todo = np.flatnonzero(known & new & ~c.bad)
        if self._totals_at_once(lots[todo], meth[todo], res[todo] == "reject", q[todo]):
            return
        for i in todo:
            j = self._lot_index[lots[i]]
            mi = 1 + METHODS.index(meth[i])
            cap = self._lot_castings[j]
            if res[i] == "reject" and self._lot_tot[j, 0] + q[i] > cap:
                c.fail(np.arange(len(lots)) == i, "quantity",
                       f"got {q[i]}; lot {lots[i]} would have {self._lot_tot[j, 0] + q[i]} castings "
                       f"rejected but only {cap} were poured")
                continue
            if self._lot_tot[j, mi] + q[i] > cap:
                c.fail(np.arange(len(lots)) == i, "quantity",
                       f"got {q[i]}; lot {lots[i]} would have {self._lot_tot[j, mi] + q[i]} castings "
                       f"inspected by {meth[i]} but only {cap} were poured")
                continue
            self._lot_tot[j, mi] += q[i]
            if res[i] == "reject":
                self._lot_tot[j, 0] += q[i]


def _compare_existing(store: Store, kind: str, rows: list[tuple], c: _Checks) -> np.ndarray:
    """Mark rows already stored with the same content (skip) and refuse rows
    whose key is stored, or repeated in the file, with other content."""
    cols = TABLE_COLUMNS[kind]
    key_idx = [cols.index(k) for k in KEYS[kind]]
    keys = [tuple(r[i] for i in key_idx) for r in rows]
    stored = store.existing(kind, [k for k, b in zip(keys, c.bad, strict=False) if not b])
    skip = np.zeros(len(rows), dtype=bool)
    for i, (k, r) in enumerate(zip(keys, rows, strict=False)):
        if c.bad[i] or k not in stored:
            continue
        old = stored[k]
        if _same(old, r):
            skip[i] = True
        else:
            diff = [col for col, a, b in zip(cols, old, r, strict=False) if not _same_value(a, b)]
            c.fail(np.arange(len(rows)) == i, KEYS[kind][-1],
                   f"{' / '.join(map(str, k))} is stored already with other {', '.join(diff)}; a key "
                   "is imported once (change the key for a new item)")
    return skip


def _same_value(a, b) -> bool:
    if a is None or b is None:
        return a is None and b is None
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return abs(float(a) - float(b)) <= 1e-9 * max(1.0, abs(float(a)))
    return str(a) == str(b)


def _same(a: tuple, b: tuple) -> bool:
    return len(a) == len(b) and all(_same_value(x, y) for x, y in zip(a, b, strict=False))


# --- public entry points ----------------------------------------------------------

def set_default_plant(store: Store, plant: str) -> None:
    """Name the plant that patterns imported without a plant column belong to."""
    import re

    from tracker.errors import BadInput

    plant = str(plant).strip()
    if not re.fullmatch(PLANT_CODE, plant):
        raise BadInput("plant", plant, "a plant code is 1 to 32 letters, digits, '.', '-' or '_' "
                                       "(e.g. NORTH or plant-2)")
    store.set_meta(DEFAULT_PLANT_KEY, plant)


def import_file(store: Store, kind: str, path: str | os.PathLike, *, skip_bad: bool = False,
                by: str | None = None, today: dt.date | None = None,
                progress: Callable[[int], None] | None = None,
                chunk_rows: int = CHUNK_ROWS, sep: str = ",", decimal: str = ".",
                refused_to: Callable | None = None) -> ImportResult:
    """Validate and import one file of ``kind``; all of it or (by default) nothing.

    Raises BadFile listing every refused row unless ``skip_bad``. ``progress``
    is called with the number of rows just handled.
    """
    return import_files(store, [(kind, path)], skip_bad=skip_bad, by=by, today=today,
                        progress=progress, chunk_rows=chunk_rows, sep=sep, decimal=decimal,
                        refused_to=refused_to)[0]


@retrying
def import_files(store: Store, items: list[tuple[str, str | os.PathLike]], *, skip_bad: bool = False,
                 by: str | None = None, today: dt.date | None = None,
                 progress: Callable[[int], None] | None = None,
                 chunk_rows: int = CHUNK_ROWS, sep: str = ",", decimal: str = ".",
                 refused_to: Callable | None = None) -> list[ImportResult]:
    """Import several files in one transaction, in the order given.

    ``sep`` (``,`` ``;`` ``|`` or ``tab``) and ``decimal`` (``.`` or ``,``) say
    how the CSV files are written. With ``skip_bad``, ``refused_to(path)``
    names the file each import's refused rows are written to (streamed as they
    are found, and complete before the good rows are committed); without it
    they are kept in ``ImportResult.refused_rows``.
    """
    from tracker.errors import BadInput

    today = today or dt.date.today()
    sep = "\t" if sep in ("tab", "\\t") else sep
    if sep not in SEPARATORS:
        raise BadInput("sep", sep, "the separator is one of , ; | or tab")
    if decimal not in (".", ","):
        raise BadInput("decimal", decimal, "the decimal mark is '.' or ','")
    if sep == decimal:
        raise BadInput("decimal", decimal, f"the decimal mark cannot be the separator {sep!r} too")
    by = auth.author(store, [auth.TABLE_ACTION.get(k, "design") for k, _ in items], by)
    reports: list[_RefusedReport] = []
    try:
        with store.write():
            results = []
            for kind, path in items:
                if kind not in KINDS:
                    raise BadInput("kind", kind, "must be one of " + ", ".join(KINDS))
                path = pathlib.Path(path)
                if not path.is_file():
                    raise BadFile(path.name, [], f"{path}: no such file")
                report = _RefusedReport(pathlib.Path(refused_to(path))) if skip_bad and refused_to else None
                if report is not None:
                    reports.append(report)
                result = _import_one(store, kind, path, skip_bad=skip_bad, by=by, today=today,
                                     progress=progress, chunk_rows=chunk_rows, sep=sep, decimal=decimal,
                                     report=report)
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


class _RefusedReport:
    """The refused rows of one import, streamed to a CSV as they are found: a
    temporary file beside ``path``, renamed to ``path`` when complete."""

    def __init__(self, path: pathlib.Path):
        self.path = path
        self.tmp = path.with_name(f".{path.name}.{os.getpid()}.part")
        self.fh = None
        self.writer = None
        self.published = False

    def write(self, row: dict, columns: list[str]) -> None:
        from tracker.csvsafe import safe_cell

        if self.writer is None:
            self.fh = self.tmp.open("w", newline="", encoding="utf-8")
            fields = ["row", *[c for c in columns if c != "_row"], "reason"]
            self.writer = csv.DictWriter(self.fh, fieldnames=fields, restval="", extrasaction="ignore")
            self.writer.writeheader()
        self.writer.writerow({k: safe_cell(v) for k, v in row.items()})

    def publish(self) -> str | None:
        if self.fh is None:
            return None
        self.fh.flush()
        os.fsync(self.fh.fileno())
        self.fh.close()
        os.replace(self.tmp, self.path)
        self.published = True
        return str(self.path)

    def discard(self) -> None:
        if self.fh is not None and not self.fh.closed:
            self.fh.close()
        self.tmp.unlink(missing_ok=True)
        if self.published:
            self.path.unlink(missing_ok=True)


def _ahead(chunks: Iterator[pd.DataFrame]) -> Iterator[tuple[pd.DataFrame, pd.DataFrame | None]]:
    """Each chunk with the one after it (None after the last): the file is read a chunk ahead."""
    before = None
    for chunk in chunks:
        if before is not None:
            yield before, chunk
        before = chunk
    if before is not None:
        yield before, None


def _import_one(store: Store, kind: str, path: pathlib.Path, *, skip_bad, by, today, progress,
                chunk_rows, sep=",", decimal=".", report: _RefusedReport | None = None) -> ImportResult:
    """Validate one file chunk by chunk inside the open transaction and write
    its good rows (none once a row is refused, unless ``skip_bad``)."""
    result = ImportResult(kind=kind, file=path.name)
    identity = file_identity(store, path) if kind == "inspections" else None
    imp = _Importer(store, kind, path.name, today, by, result, identity=identity)
    shape: dict = {}
    columns: list[str] = []

    def refuse_row(row: dict) -> None:
        if report is not None:
            report.write(row, columns)
        else:
            result.refused_rows.append(row)

    for chunk, following in _ahead(_read_chunks(path, kind, chunk_rows, shape, sep=sep)):
        if not len(chunk):
            continue
        columns = list(chunk.columns)
        c = _Checks(path.name, chunk, result, decimal=decimal)
        rows = imp.validate(c)
        result.rows += len(rows)
        if kind == "inspections":
            skip = imp.already_present & ~c.bad
        else:
            skip = _compare_existing(store, kind, rows, c) & ~c.bad
            _repeated_keys(kind, rows, c, skip)
        c.finish()
        good = [r for r, b, sk in zip(rows, c.bad, skip, strict=False) if not b and not sk]
        if kind in LOOKALIKE_CODES:
            _warn_lookalikes(store, kind, rows, c, skip, result, imp.codes_seen)
        result.skipped += int((skip & ~c.bad).sum())
        result.refused += int(c.bad.sum())
        for i in np.flatnonzero(c.bad):
            row = chunk.iloc[i].to_dict()
            refuse_row({"row": row.pop("_row"), **row, "reason": c.reasons.get(i, "")})
        if not (result.refused and not skip_bad):
            if kind == "risers":
                imp.pending_risers.extend(good)  # written after their revisions, at the end
            else:
                if following is not None:
                    imp.prefetch(following)
                result.added += store.insert_rows(kind, good)
        if progress:
            progress(len(chunk))
    if kind == "risers":
        new_revs, problems = imp.finish_risers()
        for p in problems:
            result.problems.append(p)
            result.problem_count += 1
            result.refused += 1
            refuse_row({"row": p.row, "reason": str(p)})
        if not (result.refused and not skip_bad):
            # With skip_bad the revisions without problems are written; the rows of a
            # refused revision (the only pending rows outside new_revs) go with it.
            store.insert_rows("revisions", new_revs)
            stored_revs = {(p, r) for p, r, _ in new_revs}
            rows_new = [r for r in imp.pending_risers if (r[0], r[1]) in stored_revs]
            result.added += store.insert_rows("risers", rows_new)
    if identity is not None and result.added and not (result.refused and not skip_bad):
        store.record_import(identity.digest, path.name, identity.size, shape.get("last_row", 1),
                            json.dumps(identity.segments), by)
    return result


LOOKALIKE_CODES = {"patterns": "pattern", "sleeves": "sleeve", "lots": "lot", "zones": "zone"}


def _warn_lookalikes(store: Store, kind: str, rows: list[tuple], c: _Checks, skip: np.ndarray,
                     result: ImportResult, seen: dict) -> None:
    """Warn where a new code differs from a stored one (or one earlier in the
    file) only by case or Unicode compatibility form ("l26-0412" beside "L26-0412")."""
    column = LOOKALIKE_CODES[kind]
    at = TABLE_COLUMNS[kind].index(column)
    new = [(i, r) for i, r in enumerate(rows) if not c.bad[i] and not skip[i]]
    if not new:
        return
    if kind == "zones":
        stored = {}
        for p, z in store.zone_levels():
            stored.setdefault((p, fold(z)), []).append(z)
        key = lambda r: (r[0], fold(r[at]))  # noqa: E731
    else:
        stored = {(k,): v for k, v in store.codes_alike(kind, [r[at] for _, r in new]).items()}
        key = lambda r: (r[at].lower(),)  # noqa: E731
    for i, r in new:
        k = key(r)
        others = [o for o in stored.get(k, []) + seen.get(k, []) if o != r[at]]
        if others:
            where = f" of pattern {r[0]}" if kind == "zones" else ""
            result.warnings.append(
                f"row {int(c.rows[i])}, column {column}: {r[at]!r} is new but differs from the {column}{where} "
                f"{others[0]!r} only by case or character form; check that it is not the same {column}")
        seen.setdefault(k, []).append(r[at])


def _repeated_keys(kind: str, rows: list[tuple], c: _Checks, skip: np.ndarray) -> None:
    """A key repeated within a chunk: the same content is one row (skip the
    repeat), other content is refused."""
    key_idx = [TABLE_COLUMNS[kind].index(k) for k in KEYS[kind]]
    seen: dict = {}
    for i, r in enumerate(rows):
        if c.bad[i] or skip[i]:
            continue
        k = tuple(r[j] for j in key_idx)
        if k not in seen:
            seen[k] = r
        elif _same(seen[k], r):
            skip[i] = True
        else:
            c.fail(np.arange(len(rows)) == i, KEYS[kind][-1],
                   f"{' / '.join(map(str, k))} appears twice in the file with different content")


def import_dir(store: Store, folder: str | os.PathLike, **kwargs) -> list[ImportResult]:
    """Import every known file of a folder (patterns.csv, zones.csv, ...) in
    dependency order, all in one transaction."""
    folder = pathlib.Path(folder)
    if not folder.is_dir():
        raise BadFile(str(folder), [], f"{folder}: no such folder")
    items = []
    for kind in KINDS:
        for ext in (".csv", ".xlsx"):
            p = folder / f"{kind}{ext}"
            if p.is_file():
                items.append((kind, p))
                break
    if not items:
        raise BadFile(str(folder), [], f"{folder}: holds none of " + ", ".join(f"{k}.csv" for k in KINDS))
    return import_files(store, items, **kwargs)


def write_refused(result: ImportResult, path: str | os.PathLike) -> pathlib.Path:
    """Write the refused rows of an import (with row number and reason) to CSV."""
    from tracker.csvsafe import safe_cell

    path = pathlib.Path(path)
    rows = result.refused_rows
    cols = list(dict.fromkeys(k for r in rows for k in r)) or ["row", "reason"]
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=cols)
        w.writeheader()
        for r in rows:
            w.writerow({k: safe_cell(v) for k, v in r.items()})
    return path


@retrying
def log_inspection(store: Store, record: dict, *, by: str | None = None,
                   today: dt.date | None = None, source: str = "form") -> int:
    """Validate one inspection result as the import would and store it.

    ``record`` has the inspection columns; returns the new record id.
    Each call is a new record (it is never taken as a duplicate). While served
    with sign-in the record carries the signed-in user, whatever ``by`` says.
    """
    by = auth.author(store, "log", by)
    return _one_record(store, record, by=by, today=today, source=source)


def _one_record(store: Store, record: dict, *, by, today, source, supersedes: int | None = None,
                reason: str | None = None, void: bool = False, exclude: tuple = ()) -> int:
    today = today or dt.date.today()
    required, optional = COLUMNS["inspections"]
    frame = pd.DataFrame([{k: "" if record.get(k) is None else str(record.get(k)).strip()
                           for k in required + optional}], dtype=object)
    frame["_row"] = [1]
    result = ImportResult(kind="inspections", file=source)

    def refuse_if_bad(c: _Checks) -> None:
        c.finish()
        if c.bad.any():
            raise BadRecord([(p.column, _form_text(p)) for p in c.result.problems],
                            record.get(c.result.problems[0].column))

    # The record's own checks run before the write lock: they are the slow part, and
    # the lots, patterns and zones they read never change once stored. Holding the
    # lock through them made concurrent writers queue for ~20 ms a record.
    imp = _Importer(store, "inspections", source, today, by, result, exclude=exclude)
    c = _Checks(source, frame, result)
    rows = imp.validate(c)
    refuse_if_bad(c)
    row = list(rows[0])
    row[12] = f"{source}:{uuid.uuid4().hex}"  # each record typed in is new
    row[16] = supersedes
    row[17] = 1 if void else 0
    row[18] = reason
    with store.write():
        # Inside the lock, the lot's totals again (other writers change them), always
        # checked: a record typed in is new even when an imported row has its content.
        result = ImportResult(kind="inspections", file=source)
        imp = _Importer(store, "inspections", source, today, by, result, exclude=exclude)
        c = _Checks(source, frame, result)
        one = lambda v: pd.Series([v], index=frame.index)  # noqa: E731
        imp._check_lot_totals(c, one(row[0]), one(row[2]), one(row[4]), one(row[3]),
                              np.array([True]), np.array([True]), store.lots_info([row[0]]))
        refuse_if_bad(c)
        store.insert_rows("inspections", [tuple(row)])
        return store.last_insert_id()


FORM_LABELS = {"lot": "Lot", "inspected_on": "Inspected on", "method": "Method", "quantity": "Quantity",
               "result": "Result", "defect": "Defect", "zone": "Zone", "xray_category": "Radiography category",
               "severity": "Severity", "serial": "Serial", "inspector": "Inspector", "notes": "Notes"}


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


@retrying
def correct_inspection(store: Store, record_id: int, changes: dict, *, by: str, reason: str,
                       today: dt.date | None = None) -> int:
    """Supersede record ``record_id`` by a corrected copy; the old one stays in the history.

    ``changes`` holds the columns that differ. With ``changes={"void": True}``
    the record is withdrawn (a void record supersedes it).
    """
    from tracker.errors import BadInput

    by = auth.author(store, "log", by)
    if not str(by or "").strip():
        raise BadInput("by", by, "name who makes the correction")
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
        return _one_record(store, rec, by=by, today=today, source="correction",
                           supersedes=record_id, reason=reason, void=void, exclude=(record_id,))
