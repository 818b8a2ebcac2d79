"""Reading an Excel workbook (.xlsx, .xlsm): the sheet to import and its uncalculated formulas."""

from __future__ import annotations

import pathlib
from collections.abc import Iterator

import numpy as np
import pandas as pd

from tracker.errors import BadFile, BadRow, cut
from tracker.log.ingest.reading.header import check_header, normalise


def read_xlsx(path: pathlib.Path, kind: str, chunk_rows: int, shape: dict) -> Iterator[pd.DataFrame]:
    """The sheet named ``kind`` (or the only sheet) as chunks of all-string frames, as
    :func:`~tracker.log.ingest.reading.chunks.read_chunks` gives them."""
    name = path.name
    try:
        book = pd.ExcelFile(path, engine="openpyxl")
    except Exception as exc:  # openpyxl raises many kinds for a broken file
        raise BadFile(name, [], f"{name}: not a readable .xlsx workbook ({exc.__class__.__name__})") from None
    sheets = [str(s) for s in book.sheet_names]
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
    check_header(name, kind, [str(c) for c in raw.iloc[0]] if len(raw) else cols)
    frame = normalise(frame)
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
    import openpyxl  # loaded only for a workbook with blank cells: most imports are CSV

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
