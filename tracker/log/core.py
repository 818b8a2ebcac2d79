"""The core of the store: open and close the log, the write transaction, retries,
migrations, the plant scope and the reads every family shares (a statement into
a DataFrame or into columns).

:class:`StoreCore` holds the state the table families share (the connection,
the dialect, the plant in scope, who writes, what a write touched); each family
of tables is a class in its own module that derives from it, and
:class:`tracker.log.store.Store` puts them together.
"""

from __future__ import annotations

import contextlib
import functools
import os
import sqlite3
from collections.abc import Callable, Iterable, Iterator
from typing import Self

import pandas as pd

from tracker.errors import NotFound, PourbackError
from tracker.log import dialect as dialects
from tracker.log.dialect import display_name, is_url, log_error
from tracker.log.migrations import MIGRATIONS, SCHEMA_VERSION, Schema

DEFAULT_DB = "pourback.db"
ENV_DB = "POURBACK_DB"


def resolve_path(path: str | os.PathLike | None = None) -> str:
    """The log: the argument, else $POURBACK_DB, else ./pourback.db (a file path
    or a ``postgresql://`` URL)."""
    if path:
        return str(path)
    return os.environ.get(ENV_DB) or DEFAULT_DB


def _database_errors() -> tuple:
    try:
        import psycopg
    except ImportError:  # pragma: no cover - psycopg is a dependency
        return (sqlite3.Error,)
    return (sqlite3.Error, psycopg.Error)


# What a database may raise that is no fault of the input (the CLI shows it in one line).
DATABASE_ERRORS = _database_errors()


def absolute_target(path: str | os.PathLike | None = None) -> str:
    """:func:`resolve_path`, with a file path made absolute (a URL stays as it is)."""
    target = resolve_path(path)
    return target if is_url(target) or target == ":memory:" else os.path.abspath(target)


def _batches(cur, size: int) -> Iterator[list[tuple]]:
    """A cursor's rows, ``size`` at a time."""
    while True:
        batch = cur.fetchmany(size)
        if not batch:
            return
        yield batch


def retrying(fn):
    """Decorate a write ``fn(store, ...)`` so that a transient conflict reported
    by the database (PostgreSQL: a serialization failure or a deadlock; SQLite: a
    locked log) runs the whole of it again, after a short pause, instead of
    reaching the user; the transaction it wrote in was rolled back, so nothing is
    doubled. Only the outermost call retries (a nested one is inside a
    transaction that must fail as a whole). Gives up with :class:`LogLocked`."""
    @functools.wraps(fn)
    def wrapper(store: StoreCore, *args, **kwargs):
        if store.dialect.in_transaction:
            return fn(store, *args, **kwargs)
        return store.dialect.retry(lambda: fn(store, *args, **kwargs))
    return wrapper


class StoreCore:
    """One open connection to the log: what every table family of
    :class:`tracker.log.store.Store` stands on."""

    def __init__(self, path: str | os.PathLike | None = None, *, create: bool = True, actor=None,
                 on_wait: Callable[[str], None] | None = None):
        self.path = resolve_path(path)
        self.name = display_name(self.path)
        # Called with a message when a write has waited a second for another writer
        # and goes on waiting.
        self.on_wait = on_wait
        self.dialect = dialects.for_target(self.path, create, on_wait=on_wait)
        self.backend = self.dialect.name
        self.conn = self.dialect  # execute(sql, params) in the shared SQL
        self.plant: str | None = None  # set by plant_scope: reads see that plant's patterns only
        # Who writes through this connection: None for the local desk (the command
        # line, a dashboard on loopback without sign-in), else a signed-in
        # ``tracker.log.accounts.Session`` whose role every write is checked against.
        self.actor = actor
        # Writes of lots and records not yet in day_totals / zone_totals: per pattern the
        # earliest pour day touched, and the largest record id before the first record
        # written (every record above it is new). Brought up to date as the outermost
        # write() commits (or at once, for an insert outside write()).
        self._touched: dict[str, str] = {}
        self._records_above: int | None = None
        # Whether every record written since is a plain new record (none corrects or
        # voids another): then the totals only grow by what they add
        # (see _add_records_to_totals).
        self._records_plain = True
        self._writing = 0
        try:
            self.migrate()
        except DATABASE_ERRORS as exc:
            self.close()
            raise log_error(exc, self.path) from None
        except BaseException:
            self.close()
            raise

    # connection handling
    def close(self) -> None:
        self.dialect.close()

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def _retry(self, fn, attempts: int = 8):
        return self.dialect.retry(fn, attempts)

    @contextlib.contextmanager
    def write(self) -> Iterator[Self]:
        """A write transaction: everything inside commits together or not at all.

        A failure of the database (read-only file, full disk, a lock held too
        long, a server that went away) rolls it back and becomes one
        :class:`LogError`; a conflict worth running again (see :func:`retrying`)
        is passed on as it is."""
        nested = self.dialect.in_transaction
        self._writing += 1
        try:
            with self.dialect.write():
                yield self
                if self._writing == 1:  # the outermost write: the totals, then commit
                    self._bring_totals_up_to_date()
        except DATABASE_ERRORS as exc:
            if nested or self.dialect.transient(exc):
                raise
            raise log_error(exc, self.path) from None
        finally:
            self._writing -= 1
            if not self._writing:
                self._forget_touched()

    def schema_version(self) -> int:
        return self.dialect.schema_version()

    def server_version(self) -> str:
        """The database engine and its version, e.g. "SQLite 3.40.1" or "PostgreSQL 15.18"."""
        return self.dialect.version()

    def migrate(self) -> None:
        version = self.schema_version()
        if version > SCHEMA_VERSION:
            raise PourbackError(f"database {self.name} has schema version {version}, newer than this "
                                f"program's {SCHEMA_VERSION}; upgrade pourback")
        while version < SCHEMA_VERSION:
            with self.write():
                # Re-read inside the lock: another process may have migrated.
                version = self.schema_version()
                if version >= SCHEMA_VERSION:
                    break
                MIGRATIONS[version](Schema(self.dialect))
                version += 1
                self.dialect.set_schema_version(version)

    @contextlib.contextmanager
    def plant_scope(self, plant: str | None) -> Iterator[Self]:
        """Inside, the reads by pour date (lots, records, pours, rejects, notes,
        poured patterns, revisions, the pour span) see only ``plant``'s patterns.
        ``None`` keeps the scope as it is (every plant, unless an outer scope
        chose one); :meth:`every_plant` lifts it."""
        if plant is None:
            yield self
            return
        if plant not in self.plants():
            known = ", ".join(self.plants()) or "none yet"
            raise NotFound("plant", plant, f"the plants in the log are: {known} (the patterns "
                                           "import's plant column, or `pourback init --plant`)")
        before, self.plant = self.plant, plant
        try:
            yield self
        finally:
            self.plant = before

    @contextlib.contextmanager
    def every_plant(self) -> Iterator[Self]:
        """Inside, reads see every plant whatever scope is around."""
        before, self.plant = self.plant, None
        try:
            yield self
        finally:
            self.plant = before

    def plants(self) -> list[str]:
        """The plant codes the log's patterns name, in order."""
        return [r[0] for r in self.conn.execute(
            "SELECT DISTINCT plant FROM patterns WHERE plant IS NOT NULL ORDER BY plant")]

    def _plant_filter(self, column: str = "l.pattern") -> tuple[list[str], list]:
        if self.plant is None:
            return [], []
        return [f"{column} IN (SELECT pattern FROM patterns WHERE plant = ?)"], [self.plant]

    def _lot_filter(self, start, end, pattern, alias: str = "l"):
        where, params = self._plant_filter(f"{alias}.pattern")
        if start is not None:
            where.append(f"{alias}.poured_on >= ?")
            params.append(str(start))
        if end is not None:
            where.append(f"{alias}.poured_on <= ?")
            params.append(str(end))
        if pattern is not None:
            if isinstance(pattern, (list, tuple, set)):
                pattern = list(pattern)
                where.append(f"{alias}.pattern IN ({', '.join('?' * len(pattern))})")
                params.extend(pattern)
            else:
                where.append(f"{alias}.pattern = ?")
                params.append(pattern)
        return where, params

    def _frame(self, sql: str, params: Iterable = ()) -> pd.DataFrame:
        cur = self.conn.execute(sql, tuple(params))
        cols = [d[0] for d in cur.description]
        return pd.DataFrame.from_records(cur.fetchall(), columns=cols)

    def _row(self, sql: str, params: Iterable = ()) -> dict | None:
        """A query's first row as {column: value}; None where it returns none."""
        cur = self.conn.execute(sql, tuple(params))
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row, strict=True))

    def _columns(self, sql: str, params: Iterable = ()) -> dict[str, tuple]:
        """A query's result column by column ({name: tuple of values}), no DataFrame:
        for the review, where building frames costs more than the query."""
        cur = self.conn.execute(sql, tuple(params))
        cols = [d[0] for d in cur.description]
        rows = cur.fetchall()
        return dict(zip(cols, zip(*rows, strict=False), strict=False)) if rows else {c: () for c in cols}

    def query_plan(self, sql: str, params: Iterable = ()) -> list[str]:
        """The database's plan for one statement, one line per step (SQLite's
        EXPLAIN QUERY PLAN indented by depth; PostgreSQL's EXPLAIN)."""
        return self.dialect.query_plan(sql, params)

    def last_insert_id(self) -> int:
        return self.dialect.last_insert_id()

    # The running totals (tracker.log.totals.RunningTotals) fill these in.
    def _bring_totals_up_to_date(self) -> None:
        raise NotImplementedError

    def _forget_touched(self) -> None:
        raise NotImplementedError
