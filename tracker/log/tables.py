"""Whole tables: reads by name, keys present, counts, row batches for copy-log,
checksums, and the bulk insert of import rows."""

from __future__ import annotations

import hashlib
from collections.abc import Iterable, Iterator

import pandas as pd

from tracker.errors import NotFound
from tracker.log import accounts as auth
from tracker.log import dialect as dialects
from tracker.log.core import StoreCore, _batches
from tracker.log.schema import COPY_ORDER, KEYS, RECORD, TABLE_COLUMNS


def _canonical(value) -> str:
    """One stored value as text, the same from SQLite and PostgreSQL."""
    if value is None:
        return "\\N"
    if isinstance(value, bool):
        return str(int(value))
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, (bytes, bytearray, memoryview)):
        return bytes(value).hex()
    return str(value)


class Tables(StoreCore):
    """Any of the log's tables by name: what imports and copy-log read and write."""

    def table(self, name: str) -> pd.DataFrame:
        """All rows of one of the log's tables, in key order."""
        if name not in TABLE_COLUMNS and name != "alloys":
            raise NotFound("table", name)
        order = ", ".join(KEYS.get(name, ["alloy"])) if name != "inspections" else "id"
        return self._frame(f'SELECT * FROM "{name}" ORDER BY {order}')

    def count(self, name: str) -> int:
        """The rows of table ``name`` (one of the log's own tables)."""
        return self.dialect.count(self._known(name))

    def has_rows(self, name: str) -> bool:
        """Whether table ``name`` (one of the import kinds) holds any row."""
        if name not in TABLE_COLUMNS:
            raise NotFound("table", name)
        return bool(self.conn.execute(f'SELECT EXISTS (SELECT 1 FROM "{name}")').fetchone()[0])

    def counts(self) -> dict[str, int]:
        return {t: self.count(t) for t in ("patterns", "zones", "sleeves", "revisions", "risers",
                                           "lots", "inspections")}

    def quick_counts(self) -> dict[str, int]:
        """Row counts, without scanning millions of rows where the dialect can
        (SQLite: the largest rowid)."""
        return {t: self.dialect.quick_count(t)
                for t in ("patterns", "zones", "sleeves", "revisions", "risers", "lots", "inspections")}

    def snapshot(self) -> dict[str, list[str]]:
        """Every row of every table, each as its repr, sorted (for checks that nothing changed)."""
        names = self.dialect.table_names()
        return {n: sorted(map(repr, self.conn.execute(f'SELECT * FROM "{n}"').fetchall()))
                for n in names}

    def existing(self, name: str, keys: list[tuple]) -> dict[tuple, tuple]:
        """The stored rows (as tuples in TABLE_COLUMNS order) of the given keys."""
        cols = TABLE_COLUMNS[name]
        key_cols = KEYS[name]
        out: dict[tuple, tuple] = {}
        keys = list(dict.fromkeys(keys))
        sel = ", ".join(f'"{c}"' for c in cols)
        if len(key_cols) == 1:
            wheres = self.dialect.in_list(f'"{key_cols[0]}"', [k[0] for k in keys])
        else:
            step = max(1, dialects.IN_LIST_MAX // len(key_cols))
            one = "(" + " AND ".join(f'"{c}" = ?' for c in key_cols) + ")"
            wheres = ((" OR ".join([one] * len(chunk)), [v for k in chunk for v in k])
                      for chunk in (keys[i:i + step] for i in range(0, len(keys), step)))
        for where, params in wheres:
            for row in self.conn.execute(f'SELECT {sel} FROM "{name}" WHERE {where}', params).fetchall():
                out[tuple(row[cols.index(c)] for c in key_cols)] = tuple(row)
        return out

    def keys_present(self, name: str, column: str, values: Iterable) -> set:
        """Which of ``values`` are present in ``name.column``."""
        found: set = set()
        for where, params in self.dialect.in_list(f'"{column}"', list(dict.fromkeys(values))):
            q = f'SELECT "{column}" FROM "{name}" WHERE {where}'
            found.update(r[0] for r in self.conn.execute(q, params).fetchall())
        return found

    def iter_rows(self, name: str, size: int = 100_000) -> Iterator[list[tuple]]:
        """Every row of ``name`` as :meth:`insert_rows` takes them (TABLE_COLUMNS
        order, without ``id`` for inspections), in key order, ``size`` at a time."""
        cols = [c for c in TABLE_COLUMNS[name] if c != "id"]
        order = ", ".join(KEYS[name]) if name != "inspections" else "id"
        sel = ", ".join(f'"{c}"' for c in cols)
        yield from _batches(self.conn.execute(f'SELECT {sel} FROM "{name}" ORDER BY {order}'), size)

    def log_tables(self) -> list[str]:
        """Every table of the log, in an order that inserts parents before children."""
        names = self.dialect.table_names()
        first = [t for t in COPY_ORDER if t in names]
        return first + sorted(t for t in names if t not in COPY_ORDER)

    def table_columns(self, name: str) -> list[str]:
        """The columns of table ``name``, in their order."""
        return self.dialect.columns(self._known(name))

    def iter_table(self, name: str, columns: list[str], size: int = 50_000) -> Iterator[list[tuple]]:
        """Every row of ``name`` (the given columns), ``size`` at a time, in no set order."""
        sel = ", ".join(f'"{c}"' for c in columns)
        yield from _batches(self.conn.execute(f'SELECT {sel} FROM "{self._known(name)}"'), size)

    def replace_table(self, name: str, columns: list[str], batches: Iterable[list[tuple]]) -> int:
        """Empty ``name`` and fill it with ``batches`` (ids included); call inside :meth:`write`."""
        self.conn.execute(f'DELETE FROM "{self._known(name)}"')
        n = 0
        for batch in batches:
            self.dialect.insert_many(name, columns, batch)
            n += len(batch)
        if "id" in columns:
            self.dialect.after_explicit_ids(name, "id")
        return n

    def table_checksum(self, name: str, columns: list[str]) -> str:
        """A checksum of every row of ``name`` (the given columns) that does not
        depend on row order or backend: the sum, modulo 2**64, of each row's
        SHA-256 over its values written out the same way on both backends."""
        total = 0
        for batch in self.iter_table(name, columns):
            for row in batch:
                digest = hashlib.sha256("\x1f".join(map(_canonical, row)).encode("utf-8")).digest()
                total = (total + int.from_bytes(digest[:8], "big")) % 2**64
        return f"{total:016x}"

    def _known(self, name: str) -> str:
        # A table name cannot be a parameter: take only the log's own tables.
        if name not in self.dialect.table_names():
            raise NotFound("table", name)
        return name

    def insert_rows(self, name: str, rows: list[tuple]) -> int:
        """Insert rows (tuples in TABLE_COLUMNS order, without ``id`` for inspections)."""
        if not rows:
            return 0
        auth.require(self, auth.TABLE_ACTION[name])
        cols = [c for c in TABLE_COLUMNS[name] if c != "id"]
        if name == "inspections":
            if self._records_above is None:
                self._records_above = self.conn.execute(
                    "SELECT COALESCE(MAX(id), 0) FROM inspections").fetchone()[0]
            sup, void = RECORD["supersedes"], RECORD["void"]
            self._records_plain = self._records_plain and all(r[sup] is None and not r[void] for r in rows)
        # PostgreSQL: the COPY goes on in a thread while the caller validates its next rows.
        self.dialect.insert_many(name, cols, rows, wait=False)
        if name == "lots":
            touched = self._touched
            for _, pattern, poured_on, *_ in rows:
                if poured_on < touched.get(pattern, "9999-12-31"):
                    touched[pattern] = poured_on
        if not self._writing:
            self._bring_totals_up_to_date()
        return len(rows)

    def insert_rows_alone(self, name: str, rows: list[tuple]) -> int:
        """Insert rows like :meth:`insert_rows` but leave ``day_totals`` and
        ``zone_totals`` behind: only for the scale benchmark's floor (the bare insert),
        on a throwaway copy of a log."""
        self.dialect.insert_many(name, [c for c in TABLE_COLUMNS[name] if c != "id"], rows)
        return len(rows)
