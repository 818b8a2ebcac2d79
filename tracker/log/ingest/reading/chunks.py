"""A file as chunks of all-string frames, whatever its type: the driver's one way in."""

from __future__ import annotations

import pathlib
from collections.abc import Iterator

import numpy as np
import pandas as pd

from tracker.errors import BadFile
from tracker.log.ingest.reading.csv_shape import check_shape
from tracker.log.ingest.reading.encoding import check_text
from tracker.log.ingest.reading.header import check_header, normalise
from tracker.log.ingest.reading.workbook import read_xlsx


def read_chunks(path: pathlib.Path, kind: str, chunk_rows: int, shape: dict | None = None,
                sep: str = ",", name: str | None = None) -> Iterator[pd.DataFrame]:
    """Chunks of the file as all-string frames with a ``_row`` column (file row
    number). ``shape["last_row"]`` is set to the file's last row number, blank
    rows included. ``name``: the file's name in messages (default its own)."""
    shape = {} if shape is None else shape
    name = name or path.name
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        yield from read_xlsx(path, kind, chunk_rows, shape)
        return
    if suffix not in (".csv", ".txt", ""):
        raise BadFile(name, [], f"{name}: unknown file type {suffix!r}; use .csv or .xlsx")
    # The file is streamed (never held whole in memory): a text check, the shape
    # check, then pandas reading it in chunks.
    check_text(name, path)
    width = check_shape(name, kind, path, sep)
    try:
        # index_col=False and usecols: extra (blank) cells never shift values into other columns.
        reader = pd.read_csv(path, sep=sep, encoding="utf-8-sig", dtype=str, keep_default_na=False,
                             skip_blank_lines=False, chunksize=chunk_rows, skipinitialspace=False,
                             index_col=False, usecols=range(width) if width else None)
        first = True
        offset = 0
        for chunk in reader:
            if first:
                check_header(name, kind, list(chunk.columns))
                first = False
            chunk = normalise(chunk)
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


def ahead(chunks: Iterator[pd.DataFrame]) -> Iterator[tuple[pd.DataFrame, pd.DataFrame | None]]:
    """Each chunk with the one after it (None after the last): the file is read a chunk ahead."""
    before = None
    for chunk in chunks:
        if before is not None:
            yield before, chunk
        before = chunk
    if before is not None:
        yield before, None
