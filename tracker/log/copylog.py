"""Copy a whole log from one backend to the other (SQLite <-> PostgreSQL) and prove the copy.

``copy_log(source, dest)`` writes every table of ``source`` into ``dest`` (an
empty log, created when missing) in one transaction, then, before committing,
checks it: the row count and an order-free checksum of every table, and
whatever ``check(src, dst)`` compares (the review layer passes the latest
week's review), must be the same on both. Any difference rolls the copy back
and raises :class:`CopyMismatch`; nothing half-copied stays.
"""

from __future__ import annotations

from collections.abc import Callable

from tracker.errors import CopyMismatch, PourbackError
from tracker.log.store import Store, display_name

# Tables whose rows a fresh log already holds (seeded by the migrations).
SEEDED = {"alloys"}


def copy_tables(source: str, dest: str, *, progress=None,
                check: Callable[[Store, Store], tuple[str | None, bool]] | None = None) -> dict:
    """Copy the log at ``source`` into ``dest`` and verify it.

    ``dest`` must hold no rows yet (other than the tables a new log is seeded
    with). ``progress(table, rows)`` is called after each table. Returns
    ``check(src, dst)`` returns ``(week, same)`` for a further comparison
    made inside the transaction (None: none). Returns
    ``source``, ``dest`` (passwords masked), ``tables`` (per table: rows in the
    source and in the copy, the two checksums, ``same``), ``review_week`` and
    ``review_same``.
    """
    if str(source) == str(dest):
        raise PourbackError(f"copy-log: FROM and TO are the same log ({display_name(source)}); "
                            "give two different logs")
    with Store(source, create=False) as src, Store(dest) as dst:
        busy = [t for t in dst.log_tables() if t not in SEEDED and dst.count(t) > 0]
        if busy:
            raise PourbackError(f"copy-log: {dst.name} already holds rows in {', '.join(busy)}; "
                                "copy into a new, empty log (pourback init --db ...) so nothing is mixed")
        missing = [t for t in src.log_tables() if t not in dst.log_tables()]
        if missing:
            raise PourbackError(f"copy-log: {dst.name} has no table {', '.join(missing)}; "
                                "upgrade pourback where the copy is written")
        tables = {}
        with dst.write():
            for name in src.log_tables():
                cols = src.table_columns(name)
                dst.replace_table(name, cols, src.iter_table(name, cols))
                if progress:
                    progress(name, src.count(name))
            for name in src.log_tables():
                cols = src.table_columns(name)
                row = {"rows_from": src.count(name), "rows_to": dst.count(name),
                       "checksum_from": src.table_checksum(name, cols),
                       "checksum_to": dst.table_checksum(name, cols)}
                row["same"] = (row["rows_from"] == row["rows_to"]
                               and row["checksum_from"] == row["checksum_to"])
                tables[name] = row
            week, review_same = check(src, dst) if check else (None, True)
            bad = [n for n, r in tables.items() if not r["same"]]
            if bad or not review_same:
                what = (f"tables {', '.join(bad)} differ" if bad else
                        f"the review of {week} differs")
                raise CopyMismatch(f"copy-log: {what} between {src.name} and {dst.name}; nothing was "
                                   "written. Report this with both logs' pourback versions")
        return {"source": src.name, "dest": dst.name, "tables": tables, "review_week": week,
                "review_same": review_same}
