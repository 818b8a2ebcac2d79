"""The log: schema, migrations and every SQL statement of the project.

Nothing outside this module writes SQL. The log lives in an SQLite file (the
embedded default) or on a PostgreSQL server (a ``postgresql://`` URL). The SQL
here is written once for both; what differs between the two (connection,
placeholders, DDL types, schema version, row ids, COPY, the writers' lock,
retries, query plans) lives in :mod:`tracker.log.dialect`, used from here only.

Reads return pandas DataFrames or plain dicts; writes run in transactions that
let one writer in at a time (SQLite's ``BEGIN IMMEDIATE``, PostgreSQL's
advisory lock), so that an import is all-or-nothing and concurrent writers
wait for each other instead of failing.

Inspection records are never overwritten: a correction is a new record whose
``supersedes`` names the old one; the *current* records are those no other
record supersedes.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import functools
import hashlib
import os
import pathlib
import sqlite3
from collections.abc import Callable, Iterable, Iterator

import pandas as pd

from tracker.design.alloys import ALLOYS
from tracker.errors import DiskFull, LogError, LogLocked, LogNotFound, LogReadOnly, NotALog, NotFound, PourbackError  # noqa: F401
from tracker.log import accounts as auth
from tracker.log import dialect as dialects
from tracker.log.dialect import (  # noqa: F401 (re-exported: callers use store.py only)
    BUSY_TIMEOUT_MS,
    data_version,
    display_name,
    drop_schema,
    is_url,
    log_error,
    new_schema,
    with_schema,
)

DEFAULT_DB = "pourback.db"
ENV_DB = "POURBACK_DB"
SCHEMA_VERSION = 9
DEFAULT_PLANT_KEY = "default_plant"  # meta key set by `pourback init --plant`

# Column order of each import kind's table, as stored.
TABLE_COLUMNS = {
    "patterns": ["pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                 "metal_cost_per_kg", "processing_cost_per_casting", "mould", "plant"],
    "zones": ["pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm",
              "required_xray_level", "width_mm"],
    "sleeves": ["sleeve", "kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                "feeding_efficiency", "unit_cost"],
    "revisions": ["pattern", "revision", "effective_from"],
    "risers": ["pattern", "revision", "riser", "zone", "placement", "top", "diameter_mm",
               "height_mm", "sleeve", "neck_diameter_mm"],
    "lots": ["lot", "pattern", "poured_on", "heat", "molds", "pour_temp_c"],
    "inspections": ["id", "lot", "inspected_on", "method", "quantity", "result", "defect", "zone",
                    "xray_category", "severity", "serial", "inspector", "notes", "record_key",
                    "recorded_at", "recorded_by", "source", "supersedes", "void",
                    "correction_reason"],
}
# Where each column sits in a record's row as written (TABLE_COLUMNS without ``id``).
_RECORD = {c: i for i, c in enumerate(c for c in TABLE_COLUMNS["inspections"] if c != "id")}
KEYS = {
    "patterns": ["pattern"],
    "zones": ["pattern", "zone"],
    "sleeves": ["sleeve"],
    "revisions": ["pattern", "revision"],
    "risers": ["pattern", "revision", "riser"],
    "lots": ["lot"],
    "inspections": ["record_key"],
}


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


# --- migrations -------------------------------------------------------------------
# Each migration is plain SQL in the subset both dialects share, run through
# ``db.execute`` (a :class:`_Schema`), which maps the column types to the
# dialect's (INTEGER PRIMARY KEY, REAL, BLOB, TEXT) and ``?`` to its placeholder.

def _migration_1(db: _Schema) -> None:
    db.execute("""
        CREATE TABLE alloys (
            alloy TEXT PRIMARY KEY NOT NULL, name TEXT, shrinkage REAL NOT NULL,
            density_kg_dm3 REAL NOT NULL, bare_efficiency REAL NOT NULL,
            caine_a REAL, caine_b REAL, caine_c REAL, source TEXT
        )""")
    db.execute("""
        CREATE TABLE patterns (
            pattern TEXT PRIMARY KEY, description TEXT,
            alloy TEXT NOT NULL REFERENCES alloys(alloy),
            casting_weight_kg REAL NOT NULL, castings_per_mold INTEGER NOT NULL,
            metal_cost_per_kg REAL NOT NULL, processing_cost_per_casting REAL
        )""")
    db.execute("""
        CREATE TABLE zones (
            pattern TEXT REFERENCES patterns(pattern), zone TEXT,
            volume_cm3 REAL NOT NULL, cooling_area_cm2 REAL NOT NULL,
            thickness_mm REAL, length_mm REAL, required_xray_level INTEGER,
            PRIMARY KEY (pattern, zone)
        )""")
    db.execute("""
        CREATE TABLE sleeves (
            sleeve TEXT PRIMARY KEY, kind TEXT NOT NULL, inner_diameter_mm REAL NOT NULL,
            height_mm REAL NOT NULL, modulus_factor REAL NOT NULL,
            feeding_efficiency REAL NOT NULL, unit_cost REAL
        )""")
    db.execute("""
        CREATE TABLE revisions (
            pattern TEXT REFERENCES patterns(pattern), revision TEXT,
            effective_from TEXT NOT NULL, PRIMARY KEY (pattern, revision)
        )""")
    db.execute("""
        CREATE TABLE risers (
            pattern TEXT NOT NULL, revision TEXT NOT NULL, riser TEXT NOT NULL,
            zone TEXT NOT NULL, placement TEXT NOT NULL, top TEXT NOT NULL,
            diameter_mm REAL NOT NULL, height_mm REAL NOT NULL,
            sleeve TEXT REFERENCES sleeves(sleeve), neck_diameter_mm REAL,
            PRIMARY KEY (pattern, revision, riser),
            FOREIGN KEY (pattern, revision) REFERENCES revisions(pattern, revision),
            FOREIGN KEY (pattern, zone) REFERENCES zones(pattern, zone)
        )""")
    db.execute("""
        CREATE TABLE lots (
            lot TEXT PRIMARY KEY, pattern TEXT NOT NULL REFERENCES patterns(pattern),
            poured_on TEXT NOT NULL, heat TEXT, molds INTEGER NOT NULL, pour_temp_c REAL
        )""")
    db.execute("""
        CREATE TABLE inspections (
            id INTEGER PRIMARY KEY,
            lot TEXT NOT NULL REFERENCES lots(lot),
            inspected_on TEXT NOT NULL, method TEXT NOT NULL,
            quantity INTEGER NOT NULL CHECK (quantity > 0),
            result TEXT NOT NULL, defect TEXT, zone TEXT, xray_category TEXT,
            severity INTEGER CHECK (severity BETWEEN 1 AND 5),
            serial TEXT, inspector TEXT, notes TEXT,
            record_key TEXT NOT NULL UNIQUE,
            recorded_at TEXT NOT NULL, recorded_by TEXT, source TEXT,
            supersedes INTEGER REFERENCES inspections(id),
            void INTEGER NOT NULL DEFAULT 0,
            correction_reason TEXT
        )""")
    db.execute("CREATE TABLE models (id INTEGER PRIMARY KEY, fitted_at TEXT NOT NULL, "
               "rows INTEGER, castings INTEGER, data_until TEXT, blob BLOB NOT NULL)")
    db.execute("CREATE INDEX lots_poured_on ON lots(poured_on)")
    db.execute("CREATE INDEX lots_pattern_poured_on ON lots(pattern, poured_on)")
    db.execute("CREATE INDEX inspections_lot ON inspections(lot)")
    db.execute("CREATE UNIQUE INDEX inspections_supersedes ON inspections(supersedes) "
               "WHERE supersedes IS NOT NULL")
    db.execute("CREATE INDEX risers_zone ON risers(pattern, zone)")
    for a in ALLOYS.values():
        c = a.caine
        db.execute("INSERT INTO alloys (alloy, name, shrinkage, density_kg_dm3, bare_efficiency, "
                   "caine_a, caine_b, caine_c, source) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                   (a.key, a.name, a.shrinkage, a.density_kg_dm3, a.bare_efficiency,
                    c.a if c else None, c.b if c else None, c.c if c else None, a.source))


def _migration_2(db: _Schema) -> None:
    db.execute("CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT)")


def _migration_3(db: _Schema) -> None:
    # Indexes for the review's queries on a large log (checked with EXPLAIN QUERY PLAN
    # by ``python -m benchmarks.scale``). Lots by pour date carry pattern, lot and molds, so
    # a window's lots are read from the index alone (and come grouped by day and pattern).
    # A lot's records carry result and void, so "has the lot a current record" is answered
    # from the index. Each replaces a narrower index it starts with.
    db.execute("CREATE INDEX lots_poured_on_pattern ON lots(poured_on, pattern, lot, molds)")
    db.execute("DROP INDEX lots_poured_on")
    db.execute("CREATE INDEX inspections_lot_result ON inspections(lot, result, void)")
    db.execute("DROP INDEX inspections_lot")


# An imported row's key before schema version 4: 40 hex digits (its content's SHA-1), ':'
# and its occurrence in the file. Keys given since never have ':' at place 41.
_LEGACY_KEY = "substr(record_key, 41, 1) = ':'"


def _migration_4(db: _Schema) -> None:
    # Inspection rows were keyed by their content and its occurrence in the file, so an
    # identical row in a second file was taken as "already present" and lost. From now on
    # a row is keyed by the file it came from (its content digest) and its row number, or
    # by the source system's record_id. Every stored record keeps its key: none is lost or
    # merged. Files imported before carry no digest; a row of one is still matched by the
    # old key (content and occurrence), but only against records from a file of the same
    # name (``legacy_keys`` in meta says such records exist).
    db.execute("""
        CREATE TABLE imports (
            digest TEXT PRIMARY KEY,
            file TEXT NOT NULL,
            bytes INTEGER NOT NULL,
            last_row INTEGER NOT NULL,
            segments TEXT NOT NULL,
            imported_at TEXT NOT NULL,
            imported_by TEXT
        )""")
    db.execute("CREATE INDEX imports_bytes ON imports(bytes)")
    if db.execute(f"SELECT EXISTS (SELECT 1 FROM inspections WHERE {_LEGACY_KEY})").fetchone()[0]:
        db.execute("INSERT INTO meta (key, value) VALUES ('legacy_keys', '1')")


def _migration_5(db: _Schema) -> None:
    # Accounts, dashboard sessions and the audit of who did what (tracker/auth.py).
    # A password is kept only as its Argon2id hash; a session only as the SHA-256
    # of its token.
    db.execute("""
        CREATE TABLE users (
            name TEXT PRIMARY KEY COLLATE NOCASE,
            role TEXT NOT NULL,
            password_hash TEXT NOT NULL,
            enabled INTEGER NOT NULL DEFAULT 1,
            failed_sign_ins INTEGER NOT NULL DEFAULT 0,
            locked_until TEXT,
            created_at TEXT NOT NULL, created_by TEXT,
            password_set_at TEXT NOT NULL,
            last_sign_in TEXT
        )""")
    db.execute("""
        CREATE TABLE sessions (
            token_sha256 TEXT PRIMARY KEY,
            user TEXT NOT NULL REFERENCES users(name),
            started_at TEXT NOT NULL, last_seen TEXT NOT NULL,
            ended_at TEXT, end_reason TEXT
        )""")
    db.execute("""
        CREATE TABLE audit (
            id INTEGER PRIMARY KEY,
            at TEXT NOT NULL, event TEXT NOT NULL,
            user TEXT, subject TEXT, detail TEXT, via TEXT
        )""")
    db.execute("CREATE INDEX audit_at ON audit(at)")
    db.execute("CREATE INDEX sessions_user ON sessions(user)")


def _migration_6(db: _Schema) -> None:
    # The mould a pattern is moulded in (green_sand or rigid; empty = green sand): ductile
    # iron's pressure-control rules depend on it. A zone's width, for the feeding-distance
    # rules of bars and plates (width over thickness).
    db.execute("ALTER TABLE patterns ADD COLUMN mould TEXT")
    db.execute("ALTER TABLE zones ADD COLUMN width_mm REAL")


def _migration_7(db: _Schema) -> None:
    # A new lot code that differs from a stored one only by case ("l26-0412" beside
    # "L26-0412") is imported with a warning: found through this index, not a scan.
    db.execute("CREATE INDEX lots_lot_lower ON lots(lower(lot))")


def _migration_8(db: _Schema) -> None:
    # Plants: a pattern belongs to one plant of a group (None: the log's only plant).
    db.execute("ALTER TABLE patterns ADD COLUMN plant TEXT")
    db.execute("CREATE INDEX patterns_plant ON patterns(plant, pattern)")


# --- running totals per pattern and pour day -----------------------------------------
# What judging a riser revision reads: the lots, castings, castings inspected, rejects and
# shrinkage rejects of one pattern over a span of pour days, which for a revision still
# without a verdict runs back years. ``day_totals`` holds, per pattern and pour day, the
# totals of the pattern's lots poured up to and including that day (a span is the
# difference of two rows); ``zone_totals`` the same for shrinkage rejects per zone named
# on the record. Both are derived from lots and current inspection records only, and are
# brought up to date in the transaction of every write of lots or records (see
# ``Store.write``): the days from the earliest one a write touched are recomputed from the
# lots and records, so corrections, voids and late records count as the review counts
# them. Counting rules as in ``pours_by_day`` and ``rejects_by_day``: a lot is inspected
# when it holds a current record; rejects are current records with result "reject".
# Castings are molds x the pattern's castings per mold, which never changes once stored
# (an import refuses other content for a stored key).

_CURRENT = "i.void = 0 AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
EARLIEST_DAY = "0001-01-01"
TOTALS_ONE_BY_ONE = 200  # more patterns touched: all are recomputed at once
TOTALS_AT_ONCE_COST = 3  # a lot read by pour date costs about a third of one read by pattern


def _day_totals_sql(one_pattern: bool) -> str:
    """The statement recomputing ``day_totals`` from a day on (its rows from that day
    deleted beforehand): of one pattern (parameters: pattern, day, pattern, day, day,
    pattern) or of every pattern (day, day, day).

    A day's sums are cast to INTEGER (the type of the running totals, so they fit):
    on PostgreSQL the running SUM of a BIGINT, as they would be, is computed in
    NUMERIC, several times slower than one of an INTEGER (which gives a BIGINT).
    """
    lots = "l.pattern = ? AND l.poured_on >= ?" if one_pattern else "l.poured_on >= ?"
    base = "p.pattern = ?" if one_pattern else "1 = 1"
    return f"""
        WITH d AS (
            SELECT pattern, poured_on, CAST(SUM(lots) AS INTEGER) AS lots, CAST(SUM(molds) AS INTEGER) AS molds,
                CAST(SUM(inspected_molds) AS INTEGER) AS inspected_molds,
                CAST(SUM(rejected) AS INTEGER) AS rejected, CAST(SUM(shrinkage) AS INTEGER) AS shrinkage,
                CAST(SUM(zoned_shrinkage) AS INTEGER) AS zoned_shrinkage
            FROM (
                SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds,
                    SUM(CASE WHEN EXISTS (SELECT 1 FROM inspections i WHERE i.lot = l.lot AND {_CURRENT})
                        THEN l.molds ELSE 0 END) AS inspected_molds,
                    0 AS rejected, 0 AS shrinkage, 0 AS zoned_shrinkage
                FROM lots l WHERE {lots} GROUP BY l.pattern, l.poured_on
                UNION ALL
                SELECT l.pattern, l.poured_on, 0, 0, 0, SUM(i.quantity),
                    SUM(CASE WHEN i.defect = 'shrinkage' THEN i.quantity ELSE 0 END),
                    SUM(CASE WHEN i.defect = 'shrinkage' AND i.zone IS NOT NULL THEN i.quantity ELSE 0 END)
                FROM lots l JOIN inspections i ON i.lot = l.lot
                WHERE {lots} AND i.result = 'reject' AND {_CURRENT}
                GROUP BY l.pattern, l.poured_on
            ) u GROUP BY pattern, poured_on
        ), base_day AS MATERIALIZED (
            SELECT p.pattern, (SELECT MAX(x.poured_on) FROM day_totals x
                               WHERE x.pattern = p.pattern AND x.poured_on < ?) AS poured_on
            FROM patterns p WHERE {base}
        ), b AS (
            SELECT t.* FROM base_day JOIN day_totals t
            ON t.pattern = base_day.pattern AND t.poured_on = base_day.poured_on
        )
        INSERT INTO day_totals (pattern, poured_on, lots, castings, inspected_castings, rejected, shrinkage,
                                zoned_shrinkage)
        SELECT d.pattern, d.poured_on, COALESCE(b.lots, 0) + SUM(d.lots) OVER w,
            COALESCE(b.castings, 0) + p.castings_per_mold * SUM(d.molds) OVER w,
            COALESCE(b.inspected_castings, 0) + p.castings_per_mold * SUM(d.inspected_molds) OVER w,
            COALESCE(b.rejected, 0) + SUM(d.rejected) OVER w,
            COALESCE(b.shrinkage, 0) + SUM(d.shrinkage) OVER w,
            COALESCE(b.zoned_shrinkage, 0) + SUM(d.zoned_shrinkage) OVER w
        FROM d JOIN patterns p ON p.pattern = d.pattern LEFT JOIN b ON b.pattern = d.pattern
        WINDOW w AS (PARTITION BY d.pattern ORDER BY d.poured_on)"""


def _zone_totals_sql(one_pattern: bool) -> str:
    """As :func:`_day_totals_sql`, for ``zone_totals`` (parameters: pattern, day, day;
    or day, day). Each row's base, the zone's running total before the day, is one
    lookup by the table's key, so the plan stays linear whatever the planner's
    estimates (a join there became a nested loop over every pair after a bulk load)."""
    lots = "l.pattern = ? AND l.poured_on >= ?" if one_pattern else "l.poured_on >= ?"
    return f"""
        WITH z AS (
            SELECT l.pattern, i.zone, l.poured_on, CAST(SUM(i.quantity) AS INTEGER) AS shrinkage
            FROM lots l JOIN inspections i ON i.lot = l.lot
            WHERE {lots} AND i.result = 'reject' AND i.defect = 'shrinkage' AND i.zone IS NOT NULL
            AND {_CURRENT} GROUP BY l.pattern, i.zone, l.poured_on
        )
        INSERT INTO zone_totals (pattern, zone, poured_on, shrinkage)
        SELECT z.pattern, z.zone, z.poured_on,
            COALESCE((SELECT x.shrinkage FROM zone_totals x WHERE x.pattern = z.pattern AND x.zone = z.zone
                      AND x.poured_on < ? ORDER BY x.poured_on DESC LIMIT 1), 0)
            + SUM(z.shrinkage) OVER (PARTITION BY z.pattern, z.zone ORDER BY z.poured_on)
        FROM z"""


TOTALS_TABLES = ("day_totals", "zone_totals")


def _totals_from(execute, day: str, tables: tuple[str, ...] = TOTALS_TABLES) -> None:
    """Recompute ``tables`` (``day_totals``, ``zone_totals``) of every pattern from ``day`` (ISO date) on."""
    for table, sql, params in (("day_totals", _day_totals_sql(False), (day, day, day)),
                               ("zone_totals", _zone_totals_sql(False), (day, day))):
        if table in tables:
            execute(f"DELETE FROM {table} WHERE poured_on >= ?", (day,))
            execute(sql, params)


def _refresh_totals(execute, since: dict[str, str], tables: tuple[str, ...] = TOTALS_TABLES) -> None:
    """Recompute ``tables`` (``day_totals``, ``zone_totals``) of each pattern of ``since``
    from its day (ISO date) on. ``execute(sql, params)`` runs one statement in the
    open write transaction.

    Pattern by pattern (lots by pattern, a few lookups each), or every pattern from
    the earliest of the days at once (lots by pour date, read in order): the latter
    when more than ``TOTALS_ONE_BY_ONE`` patterns were touched or when it reads
    fewer than ``TOTALS_AT_ONCE_COST`` times the lots of the former (a large import).
    """
    if not since:
        return
    day = min(since.values())
    if len(since) > TOTALS_ONE_BY_ONE:
        _totals_from(execute, day, tables)
        return
    mine = sum(execute("SELECT COUNT(*) FROM lots WHERE pattern = ? AND poured_on >= ?", item).fetchone()[0]
               for item in since.items())
    if execute("SELECT COUNT(*) FROM lots WHERE poured_on >= ?", (day,)).fetchone()[0] < TOTALS_AT_ONCE_COST * mine:
        _totals_from(execute, day, tables)
        return
    day_sql, zone_sql = _day_totals_sql(True), _zone_totals_sql(True)
    for pattern, day in sorted(since.items()):
        for table, sql, params in (("day_totals", day_sql, (pattern, day, pattern, day, day, pattern)),
                                   ("zone_totals", zone_sql, (pattern, day, day))):
            if table in tables:
                execute(f"DELETE FROM {table} WHERE pattern = ? AND poured_on >= ?", (pattern, day))
                execute(sql, params)


def _migration_9(db: _Schema) -> None:
    # The running totals the riser revisions' before/after are read from (see above).
    db.execute("""
        CREATE TABLE day_totals (
            pattern TEXT NOT NULL, poured_on TEXT NOT NULL,
            lots INTEGER NOT NULL, castings INTEGER NOT NULL, inspected_castings INTEGER NOT NULL,
            rejected INTEGER NOT NULL, shrinkage INTEGER NOT NULL, zoned_shrinkage INTEGER NOT NULL,
            PRIMARY KEY (pattern, poured_on)
        )""")
    db.execute("""
        CREATE TABLE zone_totals (
            pattern TEXT NOT NULL, zone TEXT NOT NULL, poured_on TEXT NOT NULL,
            shrinkage INTEGER NOT NULL,
            PRIMARY KEY (pattern, zone, poured_on)
        )""")
    _totals_from(db.execute, EARLIEST_DAY)


MIGRATIONS = [_migration_1, _migration_2, _migration_3, _migration_4, _migration_5, _migration_6,
              _migration_7, _migration_8, _migration_9]  # index i brings the schema from version i to i + 1


# Tables in an order that inserts parents before children (copy-log); a table not
# named here is copied after these, in name order.
COPY_ORDER = ["alloys", "meta", "patterns", "zones", "sleeves", "revisions", "risers", "lots",
              "inspections", "models", "imports", "users", "sessions", "audit"]


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


def _batches(cur, size: int) -> Iterator[list[tuple]]:
    """A cursor's rows, ``size`` at a time."""
    while True:
        batch = cur.fetchmany(size)
        if not batch:
            return
        yield batch


class _Schema:
    """What a migration writes through: DDL and seed rows in the shared subset,
    mapped to the dialect (see the note above the migrations)."""

    def __init__(self, dialect):
        self.dialect = dialect

    def execute(self, sql: str, params: Iterable = ()):
        return self.dialect.execute(self.dialect.ddl(sql), params)


def retrying(fn):
    """Decorate a write ``fn(store, ...)`` so that a transient conflict reported
    by the database (PostgreSQL: a serialization failure or a deadlock; SQLite: a
    locked log) runs the whole of it again, after a short pause, instead of
    reaching the user; the transaction it wrote in was rolled back, so nothing is
    doubled. Only the outermost call retries (a nested one is inside a
    transaction that must fail as a whole). Gives up with :class:`LogLocked`."""
    @functools.wraps(fn)
    def wrapper(store: Store, *args, **kwargs):
        if store.dialect.in_transaction:
            return fn(store, *args, **kwargs)
        return store.dialect.retry(lambda: fn(store, *args, **kwargs))
    return wrapper


# --- the store --------------------------------------------------------------------

class Store:
    """One open connection to the log.

    ``Store(target)`` opens (creating and migrating when needed) the log in an
    SQLite file or, for a ``postgresql://`` URL, on a PostgreSQL server; use it
    as a context manager so the connection is closed. ``path`` is the target
    as given (a URL keeps its password: print ``name``, which masks it).
    """

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

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def _retry(self, fn, attempts: int = 8):
        return self.dialect.retry(fn, attempts)

    @contextlib.contextmanager
    def write(self) -> Iterator[Store]:
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

    # --- plants -------------------------------------------------------------------
    @contextlib.contextmanager
    def plant_scope(self, plant: str | None) -> Iterator[Store]:
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
    def every_plant(self) -> Iterator[Store]:
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
                MIGRATIONS[version](_Schema(self.dialect))
                version += 1
                self.dialect.set_schema_version(version)

    # --- generic reads -----------------------------------------------------------
    def _frame(self, sql: str, params: Iterable = ()) -> pd.DataFrame:
        cur = self.conn.execute(sql, tuple(params))
        cols = [d[0] for d in cur.description]
        return pd.DataFrame.from_records(cur.fetchall(), columns=cols)

    def _columns(self, sql: str, params: Iterable = ()) -> dict[str, tuple]:
        """A query's result column by column ({name: tuple of values}), no DataFrame:
        for the review, where building frames costs more than the query."""
        cur = self.conn.execute(sql, tuple(params))
        cols = [d[0] for d in cur.description]
        rows = cur.fetchall()
        return dict(zip(cols, zip(*rows, strict=False), strict=False)) if rows else {c: () for c in cols}

    def table(self, name: str) -> pd.DataFrame:
        """All rows of one of the log's tables, in key order."""
        if name not in TABLE_COLUMNS and name != "alloys":
            raise NotFound("table", name)
        order = ", ".join(KEYS.get(name, ["alloy"])) if name != "inspections" else "id"
        return self._frame(f'SELECT * FROM "{name}" ORDER BY {order}')

    def count(self, name: str) -> int:
        # A table name cannot be a parameter: take only the log's own tables.
        if name not in self.dialect.table_names():
            raise NotFound("table", name)
        return self.conn.execute(f'SELECT COUNT(*) FROM "{name}"').fetchone()[0]

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

    def snapshot(self) -> dict[str, list[tuple]]:
        """Every row of every table (for checks that nothing changed)."""
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
        found = set()
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

    # --- whole tables (copy-log) --------------------------------------------------
    def log_tables(self) -> list[str]:
        """Every table of the log, in an order that inserts parents before children."""
        names = self.dialect.table_names()
        first = [t for t in COPY_ORDER if t in names]
        return first + sorted(t for t in names if t not in COPY_ORDER)

    def table_columns(self, name: str) -> list[str]:
        if name not in self.dialect.table_names():
            raise NotFound("table", name)
        cur = self.conn.execute(f'SELECT * FROM "{name}" WHERE 1 = 0')
        return [d[0] for d in cur.description]

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

    # --- writes -------------------------------------------------------------------
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
            sup, void = _RECORD["supersedes"], _RECORD["void"]
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

    # --- running totals per pattern and pour day ------------------------------------
    def _forget_touched(self) -> None:
        self._touched = {}
        self._records_above = None
        self._records_plain = True

    def _bring_totals_up_to_date(self) -> None:
        """Recompute ``day_totals`` and ``zone_totals`` from the earliest pour day of
        each pattern that the lots and records written since the last time touched
        (the lots of new records and of the records they supersede); when only plain
        new records were written, add them to ``day_totals`` instead."""
        if (not self._touched and self._records_above is not None and self._records_plain
                and self._add_records_to_totals()):
            self._forget_touched()
            return
        touched = self._touched
        if self._records_above is not None:
            q = ("SELECT l.pattern, MIN(l.poured_on) FROM inspections i JOIN lots l ON l.lot = i.lot "
                 "WHERE i.id > ? GROUP BY l.pattern "
                 "UNION ALL SELECT l.pattern, MIN(l.poured_on) FROM inspections n "
                 "JOIN inspections i ON i.id = n.supersedes JOIN lots l ON l.lot = i.lot "
                 "WHERE n.id > ? GROUP BY l.pattern")
            for pattern, day in self.conn.execute(q, (self._records_above, self._records_above)):
                if day < touched.get(pattern, "9999-12-31"):
                    touched[pattern] = day
        self._forget_touched()
        for sql in self.dialect.totals_settings if touched else ():
            self.conn.execute(sql)
        _refresh_totals(self.conn.execute, touched)

    def _add_records_to_totals(self) -> bool:
        """Bring ``day_totals`` up to date after a write of new records only (no lot,
        no correction or void), on the server: each pattern's rows from the earliest
        pour day of the records' lots on grow by what the records add on and before
        their day (a lot becomes inspected with its first current record; rejects add
        their quantities), which is what recomputing them from every lot gives.
        ``zone_totals`` is recomputed from those days (it holds shrinkage rejects only,
        a far smaller read). Returns False, having changed nothing, when a record's
        pour day has no row yet (the caller then recomputes)."""
        if not self.dialect.update_from:
            return False
        above = self._records_above
        execute = self.conn.execute
        for sql in self.dialect.totals_settings:
            execute(sql)
        # An older current record of the lot: none when the log held no record before.
        older = ("" if not above else
                 "AND NOT EXISTS (SELECT 1 FROM inspections i WHERE i.lot = r.lot AND i.id <= ? "
                 f"AND {_CURRENT}) ")
        execute(f"DROP TABLE IF EXISTS {self.dialect.temp_schema}.pourback_day_adds")
        execute(f"""
            CREATE TEMP TABLE pourback_day_adds AS
            SELECT l.pattern, l.poured_on,
                CAST(SUM(CASE WHEN r.lot IS NOT NULL {older}THEN l.molds ELSE 0 END) AS INTEGER)
                    AS inspected_molds,
                CAST(SUM(r.rejected) AS INTEGER) AS rejected, CAST(SUM(r.shrinkage) AS INTEGER) AS shrinkage,
                CAST(SUM(r.zoned_shrinkage) AS INTEGER) AS zoned_shrinkage
            FROM (SELECT i.lot, SUM(CASE WHEN i.result = 'reject' THEN i.quantity ELSE 0 END) AS rejected,
                      SUM(CASE WHEN i.result = 'reject' AND i.defect = 'shrinkage' THEN i.quantity ELSE 0 END)
                          AS shrinkage,
                      SUM(CASE WHEN i.result = 'reject' AND i.defect = 'shrinkage' AND i.zone IS NOT NULL
                          THEN i.quantity ELSE 0 END) AS zoned_shrinkage
                  FROM inspections i WHERE i.id > ? GROUP BY i.lot) r
            JOIN lots l ON l.lot = r.lot GROUP BY l.pattern, l.poured_on""",
                (above, above) if above else (above,))
        try:
            missing = execute("SELECT COUNT(*) FROM pourback_day_adds a WHERE NOT EXISTS (SELECT 1 FROM day_totals t "
                              "WHERE t.pattern = a.pattern AND t.poured_on = a.poured_on)").fetchone()[0]
            if missing:
                return False
            first = dict(execute("SELECT pattern, MIN(poured_on) FROM pourback_day_adds GROUP BY pattern").fetchall())
            execute("""
                UPDATE day_totals SET inspected_castings = day_totals.inspected_castings + c.inspected_castings,
                    rejected = day_totals.rejected + c.rejected, shrinkage = day_totals.shrinkage + c.shrinkage,
                    zoned_shrinkage = day_totals.zoned_shrinkage + c.zoned_shrinkage
                FROM (
                    SELECT t.pattern, t.poured_on,
                        p.castings_per_mold * SUM(COALESCE(a.inspected_molds, 0)) OVER w AS inspected_castings,
                        SUM(COALESCE(a.rejected, 0)) OVER w AS rejected,
                        SUM(COALESCE(a.shrinkage, 0)) OVER w AS shrinkage,
                        SUM(COALESCE(a.zoned_shrinkage, 0)) OVER w AS zoned_shrinkage
                    FROM (SELECT pattern, MIN(poured_on) AS poured_on FROM pourback_day_adds GROUP BY pattern) f
                    JOIN day_totals t ON t.pattern = f.pattern AND t.poured_on >= f.poured_on
                    JOIN patterns p ON p.pattern = t.pattern
                    LEFT JOIN pourback_day_adds a ON a.pattern = t.pattern AND a.poured_on = t.poured_on
                    WINDOW w AS (PARTITION BY t.pattern ORDER BY t.poured_on)
                ) c
                WHERE day_totals.pattern = c.pattern AND day_totals.poured_on = c.poured_on""")
        finally:
            execute("DROP TABLE pourback_day_adds")
        _refresh_totals(execute, first, tables=("zone_totals",))
        return True

    # --- lookups used by validation ---------------------------------------------
    def patterns_info(self, codes: Iterable[str] | None = None) -> dict[str, dict]:
        sql = ("SELECT p.pattern, p.alloy, p.castings_per_mold, p.casting_weight_kg "
               "FROM patterns p")
        rows = self.conn.execute(sql).fetchall() if codes is None else [
            r for r in self.conn.execute(sql) if r[0] in set(codes)]
        return {r[0]: {"alloy": r[1], "castings_per_mold": r[2], "casting_weight_kg": r[3]}
                for r in rows}

    def zone_levels(self, pattern: str | None = None) -> dict[tuple[str, str], int | None]:
        q = "SELECT pattern, zone, required_xray_level FROM zones"
        params: tuple = ()
        if pattern is not None:
            q += " WHERE pattern = ?"
            params = (pattern,)
        return {(r[0], r[1]): r[2] for r in self.conn.execute(q, params)}

    def lots_info(self, lots: Iterable[str]) -> dict[str, dict]:
        """pattern, poured_on and castings poured of each of ``lots`` that exists."""
        out = {}
        for where, params in self.dialect.in_list("l.lot", list(dict.fromkeys(lots))):
            q = ("SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
                 f"FROM lots l JOIN patterns p ON p.pattern = l.pattern WHERE {where}")
            for r in self.conn.execute(q, params).fetchall():
                out[r[0]] = {"pattern": r[1], "poured_on": r[2], "castings": r[3]}
        return out

    def lot_totals(self, lots: Iterable[str], exclude: tuple = ()) -> dict[str, dict]:
        """Per lot, the current records' rejected total and quantity per method.

        ``exclude``: record ids to leave out (the record a correction replaces).
        """
        exclude = [int(x) for x in exclude]
        skip = f" AND i.id NOT IN ({', '.join('?' * len(exclude))})" if exclude else ""
        out: dict[str, dict] = {}
        for where, params in self.dialect.in_list("i.lot", list(dict.fromkeys(lots))):
            q = ("SELECT i.lot, i.method, i.result, SUM(i.quantity) FROM inspections i "
                 f"WHERE {where} AND i.void = 0 "
                 "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
                 + skip + " GROUP BY i.lot, i.method, i.result")
            for lot, method, result, qty in self.conn.execute(q, params + exclude).fetchall():
                d = out.setdefault(lot, {"rejected": 0, "methods": {}})
                d["methods"][method] = d["methods"].get(method, 0) + qty
                if result == "reject":
                    d["rejected"] += qty
        return out

    def codes_alike(self, name: str, codes: Iterable[str]) -> dict[str, list[str]]:
        """Stored codes of ``name`` (patterns, sleeves, lots) equal to one of
        ``codes`` when ASCII case is ignored, by lower-cased code."""
        column = {"patterns": "pattern", "sleeves": "sleeve", "lots": "lot"}[name]
        low = list(dict.fromkeys(c.lower() for c in codes))
        out: dict[str, list[str]] = {}
        for where, params in self.dialect.in_list(f'lower("{column}")', low):
            q = f'SELECT "{column}" FROM "{name}" WHERE {where}'
            for (code,) in self.conn.execute(q, params).fetchall():
                out.setdefault(code.lower(), []).append(code)
        return out

    # --- imported files -------------------------------------------------------------
    def imports_up_to(self, size: int) -> list[tuple[str, int, int, str]]:
        """(digest, bytes, last_row, segments) of the imported files of at most
        ``size`` bytes, shortest first: the files a new file may extend."""
        return self.conn.execute("SELECT digest, bytes, last_row, segments FROM imports WHERE bytes <= ? "
                                 "ORDER BY bytes, digest", (int(size),)).fetchall()

    def record_import(self, digest: str, file: str, size: int, last_row: int, segments: str,
                      by: str | None) -> None:
        """Remember an imported file (the first import of a content only)."""
        self.conn.execute("INSERT INTO imports (digest, file, bytes, last_row, segments, "
                          "imported_at, imported_by) VALUES (?, ?, ?, ?, ?, ?, ?) "
                          "ON CONFLICT (digest) DO NOTHING",
                          (digest, file, int(size), int(last_row), segments,
                           dt.datetime.now(dt.UTC).isoformat(timespec="seconds"), by))

    def has_legacy_keys(self) -> bool:
        """Whether the log holds records imported before files were keyed by digest."""
        return self.get_meta("legacy_keys") == "1"

    def legacy_keys_present(self, keys: Iterable[str], file: str) -> set:
        """Which of ``keys`` (old content-and-occurrence keys) a record imported
        from a file named ``file`` holds."""
        found = set()
        for where, params in self.dialect.in_list("record_key", list(dict.fromkeys(keys))):
            q = f"SELECT record_key FROM inspections WHERE {where} AND source = ?"
            found.update(r[0] for r in self.conn.execute(q, [*params, file]).fetchall())
        return found

    def records_by_key(self, keys: Iterable[str]) -> dict[str, tuple]:
        """The stored content (lot .. notes, as TABLE_COLUMNS orders them) of the
        records with the given keys."""
        cols = TABLE_COLUMNS["inspections"][1:13]
        out = {}
        for where, params in self.dialect.in_list("record_key", list(dict.fromkeys(keys))):
            q = f"SELECT record_key, {', '.join(cols)} FROM inspections WHERE {where}"
            out.update((r[0], tuple(r[1:])) for r in self.conn.execute(q, params).fetchall())
        return out

    # --- inspections --------------------------------------------------------------
    def inspection(self, record_id: int) -> dict:
        cur = self.conn.execute("SELECT * FROM inspections WHERE id = ?", (record_id,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("inspection record", record_id, "see `pourback history` for record ids")
        return dict(zip([d[0] for d in cur.description], row, strict=False))

    def superseded_by(self, record_id: int) -> int | None:
        r = self.conn.execute("SELECT id FROM inspections WHERE supersedes = ?", (record_id,)).fetchone()
        return r[0] if r else None

    def last_insert_id(self) -> int:
        return self.dialect.last_insert_id()

    def inspections_history(self, lot: str | None = None, limit: int | None = None) -> pd.DataFrame:
        """Every record, superseded ones included, with who superseded them."""
        q = ("SELECT i.*, n.id AS superseded_by, n.recorded_by AS corrected_by, "
             "n.recorded_at AS corrected_at, n.correction_reason AS correction_why "
             "FROM inspections i LEFT JOIN inspections n ON n.supersedes = i.id")
        params: list = []
        if lot is not None:
            q += " WHERE i.lot = ?"
            params.append(lot)
        q += " ORDER BY i.id DESC"
        if limit:
            q += " LIMIT ?"
            params.append(int(limit))
        return self._frame(q, params)

    def current_inspections(self, start: str | None = None, end: str | None = None,
                            pattern: str | None = None, lot: str | None = None) -> pd.DataFrame:
        """Current (not superseded, not void) records, with the lot's pattern and pour date.

        ``start``/``end`` bound the lot's pour date (ISO strings, inclusive).
        """
        where, params = self._lot_filter(start, end, pattern)
        if lot is not None:
            where.append("l.lot = ?")
            params.append(lot)
        q = ("SELECT i.id, i.lot, l.pattern, l.poured_on, i.inspected_on, i.method, i.quantity, "
             "i.result, i.defect, i.zone, i.xray_category, i.severity, i.serial, i.inspector, "
             "i.notes, i.recorded_at, i.recorded_by, i.source, i.supersedes "
             "FROM inspections i JOIN lots l ON l.lot = i.lot "
             "WHERE i.void = 0 AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
             + "".join(" AND " + w for w in where) + " ORDER BY i.id")
        return self._frame(q, params)

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

    def lots_frame(self, start: str | None = None, end: str | None = None,
                   pattern=None) -> pd.DataFrame:
        """Lots with their pattern's alloy, weights and costs and castings poured."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT l.lot, l.pattern, l.poured_on, l.heat, l.molds, l.pour_temp_c, "
             "l.molds * p.castings_per_mold AS castings, p.alloy, p.casting_weight_kg, "
             "p.metal_cost_per_kg, p.processing_cost_per_casting "
             "FROM lots l JOIN patterns p ON p.pattern = l.pattern"
             + (" WHERE " + " AND ".join(where) if where else "") + " ORDER BY l.poured_on, l.lot")
        return self._frame(q, params)

    def rejects_by_day(self, start: str | None = None, end: str | None = None,
                       pattern=None, *, columns: bool = False) -> pd.DataFrame | dict[str, tuple]:
        """Current reject and rework quantities per pattern, pour date, result,
        defect and zone (aggregated in SQL). ``columns``: a dict of column
        tuples instead of a DataFrame."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT l.pattern, l.poured_on, i.result, i.defect, i.zone, SUM(i.quantity) AS quantity "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             "WHERE i.result != 'accept' AND i.void = 0 "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
             + "".join(" AND " + w for w in where)
             + " GROUP BY l.pattern, l.poured_on, i.result, i.defect, i.zone")
        return self._columns(q, params) if columns else self._frame(q, params)

    def lot_batches(self, size: int = 100_000) -> Iterator[list[tuple]]:
        """(lot, pattern, poured_on, castings, pour_temp_c) of every lot, in no set
        order, ``size`` rows at a time: ten years of lots read for the model
        without holding them all as Python rows."""
        where, params = self._lot_filter(None, None, None)
        yield from _batches(self.conn.execute(
            "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold, l.pour_temp_c "
            "FROM lots l JOIN patterns p ON p.pattern = l.pattern"
            + (" WHERE " + " AND ".join(where) if where else ""), tuple(params)), size)

    def rejects_by_lot(self, start: str | None = None, end: str | None = None,
                       pattern=None) -> pd.DataFrame:
        """Current reject and rework quantities per lot, result, defect and zone."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT i.lot, i.result, i.defect, i.zone, SUM(i.quantity) AS quantity "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             "WHERE i.result != 'accept' AND i.void = 0 "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
             + "".join(" AND " + w for w in where)
             + " GROUP BY i.lot, i.result, i.defect, i.zone")
        return self._frame(q, params)

    def pours_by_day(self, start: str | None = None, end: str | None = None,
                     pattern=None, *, columns: bool = False) -> pd.DataFrame | dict[str, tuple]:
        """Lots and castings poured per pattern and pour date, and how many of
        them have been inspected (aggregated in SQL).

        A lot counts as inspected when it holds at least one current (not
        superseded, not void) inspection record; ``inspected_castings`` is the
        castings poured in such lots, the denominator of the review's reject
        rates. ``start``/``end`` bound the pour date (ISO strings, inclusive);
        ``pattern`` is one code or a list of codes. ``columns``: a dict of
        column tuples instead of a DataFrame.
        """
        where, params = self._lot_filter(start, end, pattern)
        cond = " AND ".join(where) or "1 = 1"
        # All lots per pattern and day, less the few with no current record yet (a NOT
        # EXISTS that stops at a lot's first record): half the work of joining every
        # record to its lot. Castings per mold are applied per group, not per lot.
        q = ("SELECT a.pattern, a.poured_on, a.lots, a.molds * p.castings_per_mold AS castings, "
             "a.lots - COALESCE(u.lots, 0) AS inspected_lots, "
             "(a.molds - COALESCE(u.molds, 0)) * p.castings_per_mold AS inspected_castings FROM ("
             f"SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds FROM lots l WHERE {cond} "
             "GROUP BY l.pattern, l.poured_on) a LEFT JOIN ("
             f"SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds FROM lots l WHERE {cond} "
             "AND NOT EXISTS (SELECT 1 FROM inspections i WHERE i.lot = l.lot AND i.void = 0 "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)) "
             "GROUP BY l.pattern, l.poured_on) u ON u.pattern = a.pattern AND u.poured_on = a.poured_on "
             "JOIN patterns p ON p.pattern = a.pattern")
        return self._columns(q, [*params, *params]) if columns else self._frame(q, [*params, *params])

    def review_days(self, start: str, end: str) -> tuple[dict[str, tuple], dict[str, tuple], dict[str, tuple]]:
        """What the weekly review reads of lots poured from ``start`` to ``end``
        (ISO strings, inclusive), each a dict of column tuples: :meth:`pours_by_day`,
        :meth:`rejects_by_day` and the :meth:`pattern_costs` of the patterns poured.
        The reject rows come in the order of their group (pattern, poured_on,
        result, defect, zone; None first), so sums over them add up in the same
        order on either backend.

        Where the dialect asks for it (``review_in_one_pass``: PostgreSQL, where
        each statement costs planning and a round trip) all three come from one
        statement that reads the window's current records once; else from the
        two aggregates and the patterns."""
        if not self.dialect.review_in_one_pass:
            pours = self.pours_by_day(start, end, columns=True)
            return pours, self.rejects_by_day(start, end, columns=True), self.pattern_costs(pours["pattern"])
        where, params = self._lot_filter(start, end, None)
        cond = " AND ".join(where) or "1 = 1"
        # A lot counts as inspected when it holds a current record: the lots of the
        # window joined to the distinct lots of its current records (r, read once).
        # Three parts, told apart by the first column, padded with NULL: the pours
        # (a), the rejects and the patterns poured (description and alloy in text columns).
        q = ("WITH r AS (SELECT l.pattern, l.poured_on, i.lot, i.result, i.defect, i.zone, i.quantity "
             f"FROM lots l JOIN inspections i ON i.lot = l.lot WHERE {cond} AND i.void = 0 "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)), "
             "a AS (SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds, "
             "COUNT(s.lot) AS inspected_lots, SUM(CASE WHEN s.lot IS NULL THEN 0 ELSE l.molds END) AS inspected_molds "
             f"FROM lots l LEFT JOIN (SELECT DISTINCT lot FROM r) s ON s.lot = l.lot WHERE {cond} "
             "GROUP BY l.pattern, l.poured_on) "
             "SELECT 0 AS part, a.pattern, a.poured_on, a.lots, a.molds * p.castings_per_mold AS castings, "
             "a.inspected_lots, a.inspected_molds * p.castings_per_mold AS inspected_castings, "
             "NULL AS result, NULL AS defect, NULL AS zone, NULL AS quantity, "
             "CAST(NULL AS DOUBLE PRECISION) AS casting_weight_kg, "
             "CAST(NULL AS DOUBLE PRECISION) AS metal_cost_per_kg, "
             "CAST(NULL AS DOUBLE PRECISION) AS processing_cost_per_casting "
             "FROM a JOIN patterns p ON p.pattern = a.pattern "
             "UNION ALL SELECT 1, pattern, poured_on, NULL, NULL, NULL, NULL, result, defect, zone, SUM(quantity), "
             "NULL, NULL, NULL FROM r WHERE result != 'accept' GROUP BY pattern, poured_on, result, defect, zone "
             "UNION ALL SELECT 2, pattern, description, NULL, NULL, NULL, NULL, alloy, NULL, NULL, NULL, "
             "casting_weight_kg, metal_cost_per_kg, processing_cost_per_casting FROM patterns "
             "WHERE pattern IN (SELECT pattern FROM a) "
             "ORDER BY 1, 2, 3, 8 NULLS FIRST, 9 NULLS FIRST, 10 NULLS FIRST")
        rows = self.conn.execute(q, [*params, *params]).fetchall()
        ends = [next((k for k, r in enumerate(rows) if r[0] >= part), len(rows)) for part in (1, 2)]
        p, r, c = (list(zip(*chunk, strict=False)) or [()] * 14
                   for chunk in (rows[:ends[0]], rows[ends[0]:ends[1]], rows[ends[1]:]))
        pours = dict(zip(("pattern", "poured_on", "lots", "castings", "inspected_lots", "inspected_castings"),
                         p[1:7], strict=False))
        rejects = dict(zip(("pattern", "poured_on", "result", "defect", "zone", "quantity"), [r[1], r[2], *r[7:11]], strict=False))
        costs = dict(zip(("pattern", "description", "alloy", "casting_weight_kg", "metal_cost_per_kg",
                          "processing_cost_per_casting"), [c[1], c[2], c[7], *c[11:]], strict=False))
        return pours, rejects, costs

    def revision_steps(self, start: str, end: str, *, columns: bool = False) -> pd.DataFrame | dict[str, list]:
        """Revisions taking effect from ``start`` to ``end`` (ISO strings, inclusive),
        each with the revision before it (``previous``, ``previous_from``) and the
        date the next one takes effect (``next_from``); None where there is none.
        ``columns``: a dict of column lists instead of a DataFrame."""
        # The whole table in order, neighbours by position: a pattern's revisions are
        # ordered by (effective_from, revision), sorted here as text (byte order, as
        # SQLite and the C collation compare). A few thousand short rows: a plain read costs less than a
        # search per revision (and far less than a window function).
        where, params = self._plant_filter("pattern")
        rows = [(p, r, e) for p, e, r in sorted(self.conn.execute(
            "SELECT pattern, effective_from, revision FROM revisions"
            + "".join((" AND " if i else " WHERE ") + w for i, w in enumerate(where)), params).fetchall())]
        names = ("pattern", "revision", "effective_from", "previous", "previous_from", "next_from")
        start, end = str(start), str(end)
        none = (None, None, None)
        before = [none, *rows[:-1]]
        after = [*rows[1:], none]
        steps = [(p, r, e, b[1] if b[0] == p else None, b[2] if b[0] == p else None, a[2] if a[0] == p else None)
                 for (p, r, e), b, a in zip(rows, before, after, strict=False) if start <= e <= end]
        out = {k: list(v) for k, v in zip(names, zip(*steps, strict=False), strict=False)} if steps else {k: [] for k in names}
        return out if columns else pd.DataFrame(out, columns=list(names))

    def pattern_costs(self, codes: Iterable[str]) -> dict[str, tuple]:
        """Description, alloy, casting weight and costs of the patterns ``codes``,
        column by column ({name: tuple}), in code order."""
        codes = sorted(set(codes))
        cols = ("pattern", "description", "alloy", "casting_weight_kg", "metal_cost_per_kg",
                "processing_cost_per_casting")
        rows = []
        for chunk in (codes[i:i + 900] for i in range(0, len(codes), 900)):
            rows += self.conn.execute(f"SELECT {', '.join(cols)} FROM patterns WHERE pattern IN "
                                      f"({', '.join('?' * len(chunk))})", chunk).fetchall()
        rows.sort()
        return dict(zip(cols, zip(*rows, strict=False), strict=False)) if rows else {c: () for c in cols}

    def riser_designs(self, patterns: Iterable[str]) -> list[tuple]:
        """The stored risers (every revision) of ``patterns``, without joins, as rows
        (pattern, revision, riser, zone, placement, top, diameter_mm, height_mm, sleeve,
        neck_diameter_mm) in that order."""
        codes = list(dict.fromkeys(patterns))
        rows: list[tuple] = []
        for chunk in (codes[i:i + 900] for i in range(0, len(codes), 900)):
            rows += self.conn.execute(
                "SELECT pattern, revision, riser, zone, placement, top, diameter_mm, height_mm, sleeve, "
                f"neck_diameter_mm FROM risers WHERE pattern IN ({', '.join('?' * len(chunk))}) "
                "ORDER BY pattern, revision, riser", chunk).fetchall()
        return rows

    def reject_notes(self, start: str | None = None, end: str | None = None, pattern=None,
                     per_pattern: int = 5, *, rows: bool = False) -> pd.DataFrame | list[dict]:
        """The newest non-empty notes of current reject and rework records, at
        most ``per_pattern`` per pattern, for lots poured from ``start`` to
        ``end`` (ISO strings, inclusive). ``rows``: a list of dicts (one per
        note, plain Python values) instead of a DataFrame."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT pattern, lot, poured_on, result, defect, zone, quantity, notes FROM ("
             "SELECT l.pattern, l.lot, l.poured_on, i.result, i.defect, i.zone, i.quantity, "
             "i.notes, ROW_NUMBER() OVER (PARTITION BY l.pattern "
             "ORDER BY l.poured_on DESC, i.id DESC) AS k "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             "WHERE i.result != 'accept' AND i.void = 0 AND TRIM(COALESCE(i.notes, '')) != '' "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
             + "".join(" AND " + w for w in where)
             + ") ranked WHERE k <= ? ORDER BY pattern, k")
        if rows:
            cur = self.conn.execute(q, (*params, int(per_pattern)))
            names = [d[0] for d in cur.description]
            return [dict(zip(names, r, strict=False)) for r in cur.fetchall()]
        return self._frame(q, [*params, int(per_pattern)])

    def pour_span(self) -> tuple[str | None, str | None]:
        # Two subqueries: SQLite answers a lone MIN() or MAX() from the index,
        # but scans every lot for both in one SELECT.
        where, params = self._plant_filter("pattern")
        cond = " WHERE " + where[0] if where else ""
        r = self.conn.execute(f"SELECT (SELECT MIN(poured_on) FROM lots{cond}), "
                              f"(SELECT MAX(poured_on) FROM lots{cond})", [*params, *params]).fetchone()
        return r[0], r[1]

    def last_pour_before(self, day: str) -> str | None:
        """The newest pour date before ``day`` (ISO string), or None (from the pour-date index)."""
        where, params = self._plant_filter("pattern")
        return self.conn.execute("SELECT MAX(poured_on) FROM lots WHERE poured_on < ?"
                                 + "".join(" AND " + w for w in where), (str(day), *params)).fetchone()[0]

    def rejects_by_pattern(self, start: str, end: str) -> pd.DataFrame:
        """Castings rejected (current records) per pattern in lots poured from
        ``start`` to ``end`` (ISO strings, inclusive): one plain aggregate, the
        floor the scale benchmark holds the weekly review against."""
        # The lots of the week (by the pour-date index) drive: left to itself, SQLite
        # without statistics scans every record (taking result = 'reject' as selective)
        # or every lot (in pattern order, to save the GROUP BY sort).
        q = ("SELECT l.pattern, SUM(i.quantity) AS rejected "
             f"FROM lots l {self.dialect.lots_by_date_hint} {self.dialect.forced_join} inspections i ON i.lot = l.lot "
             "WHERE l.poured_on >= ? AND l.poured_on <= ? AND i.result = 'reject' AND i.void = 0 "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id) "
             "GROUP BY l.pattern")
        return self._frame(q, (str(start), str(end)))

    def review_floor(self, start: str, end: str) -> dict[str, list[tuple]]:
        """The rows a review of lots poured from ``start`` to ``end`` (ISO strings,
        inclusive) reads, fetched as plain tuples with no computation: the floor
        the scale benchmark holds the review against.

        ``lots``: (lot, pattern, poured_on, castings); ``records``: the current
        (not superseded, not void) inspection records of those lots (lot, result,
        defect, zone, quantity); ``risers``: the riser revisions in force in the
        span for the patterns poured in it, one row per riser (pattern, revision,
        effective_from, riser, zone, placement, top, diameter_mm, height_mm,
        sleeve, neck_diameter_mm). Besides these the review reads, to judge the
        riser revisions still under judgement, the running totals at the edges of
        their spans (:meth:`totals_before`, :meth:`zone_shrinkage_before`): not in
        the floor, which is the issue's definition; the benchmark times them beside it.
        """
        span = (str(start), str(end))
        hint, join = self.dialect.lots_by_date_hint, self.dialect.forced_join
        lots = self.conn.execute(
            "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
            f"FROM lots l {hint} {join} patterns p ON p.pattern = l.pattern "
            "WHERE l.poured_on >= ? AND l.poured_on <= ?", span).fetchall()
        records = self.conn.execute(
            "SELECT i.lot, i.result, i.defect, i.zone, i.quantity "
            f"FROM lots l {hint} {join} inspections i ON i.lot = l.lot "
            "WHERE l.poured_on >= ? AND l.poured_on <= ? AND i.void = 0 "
            "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)", span).fetchall()
        risers = self.conn.execute(
            "SELECT r.pattern, r.revision, r.effective_from, x.riser, x.zone, x.placement, x.top, "
            "x.diameter_mm, x.height_mm, x.sleeve, x.neck_diameter_mm "
            "FROM revisions r JOIN risers x ON x.pattern = r.pattern AND x.revision = r.revision "
            "WHERE r.effective_from <= ? "
            "AND r.pattern IN (SELECT pattern FROM lots WHERE poured_on >= ? AND poured_on <= ?) "
            "AND NOT EXISTS (SELECT 1 FROM revisions s WHERE s.pattern = r.pattern "
            "AND s.effective_from > r.effective_from AND s.effective_from <= ?)",
            (span[1], span[0], span[1], span[0])).fetchall()
        return {"lots": lots, "records": records, "risers": risers}

    TOTALS = ("lots", "castings", "inspected_castings", "rejected", "shrinkage", "zoned_shrinkage")

    # What totals_before and zone_shrinkage_before read per probe: (probe columns,
    # value columns, FROM clause), {q} standing for the probes' VALUES.
    _DAY_TOTALS_AT = (
        ("pattern", "day"),
        ("t.lots", "t.castings", "t.inspected_castings", "t.rejected", "t.shrinkage", "t.zoned_shrinkage"),
        "{q} LEFT JOIN day_totals t ON t.pattern = {q}.pattern AND t.poured_on = ("
        "SELECT MAX(x.poured_on) FROM day_totals x WHERE x.pattern = {q}.pattern AND x.poured_on < {q}.day)")
    _ZONE_TOTALS_AT = (
        ("pattern", "zone", "day"), ("t.shrinkage",),
        "{q} LEFT JOIN zone_totals t ON t.pattern = {q}.pattern AND t.zone = {q}.zone "
        "AND t.poured_on = (SELECT MAX(x.poured_on) FROM zone_totals x WHERE x.pattern = {q}.pattern "
        "AND x.zone = {q}.zone AND x.poured_on < {q}.day)")

    def totals_before(self, probes: Iterable[tuple[str, str]]) -> dict[tuple[str, str], tuple[int, ...]]:
        """Per (pattern, day) of ``probes`` (day an ISO date), the totals of the
        pattern's lots poured before that day (from ``day_totals``), in ``TOTALS``
        order: lots, castings poured, castings inspected (in lots holding a current
        record), castings rejected, shrinkage rejects, shrinkage rejects naming a zone.
        The totals over pour days a..b are ``totals_before(b + 1 day) - totals_before(a)``."""
        return self._at_probes((self._DAY_TOTALS_AT, probes))[0]

    def zone_shrinkage_before(self, probes: Iterable[tuple[str, str, str]]) -> dict[tuple[str, str, str], int]:
        """Per (pattern, zone, day) of ``probes``, the shrinkage rejects naming that
        zone on current records of the pattern's lots poured before that day (from
        ``zone_totals``)."""
        return {k: v[0] for k, v in self._at_probes((self._ZONE_TOTALS_AT, probes))[0].items()}

    def totals_and_zones_before(self, probes: Iterable[tuple[str, str]],
                                zone_probes: Iterable[tuple[str, str, str]]) -> tuple[dict, dict]:
        """:meth:`totals_before` of ``probes`` and :meth:`zone_shrinkage_before` of
        ``zone_probes``, read together (one statement per hundred probes of each)."""
        totals, zones = self._at_probes((self._DAY_TOTALS_AT, probes), (self._ZONE_TOTALS_AT, zone_probes))
        return totals, {k: v[0] for k, v in zones.items()}

    def _at_probes(self, *parts: tuple[tuple, Iterable[tuple]]) -> list[dict[tuple, tuple[int, ...]]]:
        """Per part ((names, columns, source), probes): ``WITH q (names) AS (VALUES
        probes) SELECT q.names, columns FROM source``, per probe its whole numbers
        (None and a probe without a row as 0). The parts are read side by side, a
        hundred probes of each a statement (one UNION ALL, columns padded with NULL)."""
        lists = [list(dict.fromkeys(probes)) for _, probes in parts]
        keys = max(len(names) for (names, _, _), _ in parts)
        values = max(len(cols) for (_, cols, _), _ in parts)
        outs: list[dict] = [{} for _ in parts]
        step = 100  # SQLite's cost per probe grows with a longer VALUES list beyond ~150
        for i in range(0, max(map(len, lists)), step):
            ctes, selects, params = [], [], []
            for k, (((names, cols, source), _), probes) in enumerate(zip(parts, lists, strict=False)):
                chunk = probes[i:i + step]
                if not chunk:
                    continue
                q = f"q{k}"
                row = "(" + ", ".join("?" * len(names)) + ")"
                ctes.append(f"{q} ({', '.join(names)}) AS (VALUES {', '.join([row] * len(chunk))})")
                params += [v for probe in chunk for v in probe]
                picked = [f"{q}.{n}" for n in names] + ["NULL"] * (keys - len(names)) + list(cols) \
                    + ["NULL"] * (values - len(cols))
                selects.append(f"SELECT {k}, {', '.join(picked)} FROM {source.replace('{q}', q)}")
            for r in self.conn.execute(f"WITH {', '.join(ctes)} {' UNION ALL '.join(selects)}", params):
                (names, cols, _), _ = parts[r[0]]
                got = r[1 + keys:1 + keys + len(cols)]
                if got[-1] is not None:  # else no row before the day: zeros
                    outs[r[0]][r[1:1 + len(names)]] = got
        return [{probe: out.get(probe, (0,) * len(cols)) for probe in probes}
                for out, probes, ((_, cols, _), _) in zip(outs, lists, parts, strict=False)]

    def query_plan(self, sql: str, params: Iterable = ()) -> list[str]:
        """The database's plan for one statement, one line per step (SQLite's
        EXPLAIN QUERY PLAN indented by depth; PostgreSQL's EXPLAIN)."""
        return self.dialect.query_plan(sql, params)

    # --- design -------------------------------------------------------------------
    def risers_frame(self, pattern: str | None = None, revision: str | None = None) -> pd.DataFrame:
        """Every riser of every revision joined with its zone, sleeve, pattern and alloy."""
        where, params = [], []
        if pattern is not None:
            where.append("r.pattern = ?")
            params.append(pattern)
        if revision is not None:
            where.append("r.revision = ?")
            params.append(revision)
        q = ("SELECT r.pattern, r.revision, v.effective_from, r.riser, r.zone, r.placement, r.top, "
             "r.diameter_mm, r.height_mm, r.sleeve, r.neck_diameter_mm, "
             "s.kind AS sleeve_kind, s.modulus_factor AS sleeve_factor, "
             "s.feeding_efficiency AS sleeve_efficiency, s.unit_cost AS sleeve_unit_cost, "
             "z.volume_cm3, z.cooling_area_cm2, z.thickness_mm, z.length_mm, z.required_xray_level, "
             "z.width_mm, p.mould, p.alloy, p.casting_weight_kg, p.castings_per_mold, a.shrinkage, a.bare_efficiency, "
             "a.density_kg_dm3, a.caine_a, a.caine_b, a.caine_c, "
             "(SELECT COUNT(*) FROM risers r2 WHERE r2.pattern = r.pattern "
             " AND r2.revision = r.revision AND r2.zone = r.zone) AS risers_on_zone "
             "FROM risers r JOIN revisions v ON v.pattern = r.pattern AND v.revision = r.revision "
             "JOIN zones z ON z.pattern = r.pattern AND z.zone = r.zone "
             "JOIN patterns p ON p.pattern = r.pattern JOIN alloys a ON a.alloy = p.alloy "
             "LEFT JOIN sleeves s ON s.sleeve = r.sleeve"
             + (" WHERE " + " AND ".join(where) if where else "")
             + " ORDER BY r.pattern, v.effective_from, r.revision, r.riser")
        return self._frame(q, params)

    def revisions_frame(self, pattern: str | None = None) -> pd.DataFrame:
        q = "SELECT pattern, revision, effective_from FROM revisions"
        params: tuple = ()
        if pattern is not None:
            q += " WHERE pattern = ?"
            params = (pattern,)
        return self._frame(q + " ORDER BY pattern, effective_from, revision", params)

    def pattern(self, code: str) -> dict:
        cur = self.conn.execute("SELECT * FROM patterns WHERE pattern = ?", (code,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("pattern", code, "see `pourback patterns` for the patterns in the log")
        return dict(zip([d[0] for d in cur.description], row, strict=False))

    def zone(self, pattern: str, zone: str) -> dict:
        """One zone with its pattern's alloy and mould (raises NotFound naming the zones)."""
        self.pattern(pattern)
        cur = self.conn.execute("SELECT z.*, p.alloy, p.mould FROM zones z JOIN patterns p "
                                "ON p.pattern = z.pattern WHERE z.pattern = ? AND z.zone = ?", (pattern, zone))
        row = cur.fetchone()
        if row is None:
            names = [r[0] for r in self.conn.execute(
                "SELECT zone FROM zones WHERE pattern = ? ORDER BY zone", (pattern,))]
            raise NotFound("zone", zone, f"pattern {pattern} has the zones {', '.join(names) or '(none)'}")
        return dict(zip([d[0] for d in cur.description], row, strict=False))

    def mean_pour_temp(self, pattern: str) -> float | None:
        """Mean pour temperature of the pattern's lots that give one, °C (None if none do)."""
        r = self.conn.execute("SELECT AVG(pour_temp_c) FROM lots WHERE pattern = ? AND pour_temp_c IS NOT NULL",
                              (pattern,)).fetchone()
        return None if r is None or r[0] is None else float(r[0])

    def zones_frame(self, pattern: str) -> pd.DataFrame:
        """The zones of one pattern, as stored, by zone code."""
        return self._frame("SELECT zone, volume_cm3, cooling_area_cm2, thickness_mm, width_mm, length_mm, "
                           "required_xray_level FROM zones WHERE pattern = ? ORDER BY zone", (pattern,))

    def sleeve(self, code: str) -> dict:
        """One sleeve of the catalogue (raises NotFound naming the catalogue)."""
        cur = self.conn.execute("SELECT * FROM sleeves WHERE sleeve = ?", (code,))
        row = cur.fetchone()
        if row is None:
            names = [r[0] for r in self.conn.execute("SELECT sleeve FROM sleeves ORDER BY sleeve")]
            raise NotFound("sleeve", code, "the log's catalogue holds " + (", ".join(names) or "no sleeve; "
                                                                            "import sleeves.csv"))
        return dict(zip([d[0] for d in cur.description], row, strict=False))

    def lot(self, code: str) -> dict:
        cur = self.conn.execute("SELECT l.*, l.molds * p.castings_per_mold AS castings "
                                "FROM lots l JOIN patterns p ON p.pattern = l.pattern WHERE l.lot = ?",
                                (code,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("lot", code, "import or log the lot first")
        return dict(zip([d[0] for d in cur.description], row, strict=False))

    def latest_pour_temps(self, patterns: Iterable[str]) -> dict[str, float]:
        """Pouring temperature (°C) of each pattern's most recent lot that records one."""
        out = {}
        for p in dict.fromkeys(patterns):
            row = self.conn.execute(
                "SELECT pour_temp_c FROM lots WHERE pattern = ? AND pour_temp_c IS NOT NULL "
                "ORDER BY poured_on DESC, lot DESC LIMIT 1", (p,)).fetchone()
            if row is not None:
                out[p] = float(row[0])
        return out

    def lot_codes(self, limit: int = 500) -> list[str]:
        return [r[0] for r in self.conn.execute(
            "SELECT lot FROM lots ORDER BY poured_on DESC, lot DESC LIMIT ?", (limit,))]

    # --- meta ---------------------------------------------------------------------
    def get_meta(self, key: str, default: str | None = None) -> str | None:
        row = self.conn.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return default if row is None else row[0]

    def set_meta(self, key: str, value: str) -> None:
        auth.require(self, "settings")
        with self.write():
            self.conn.execute("INSERT INTO meta (key, value) VALUES (?, ?) "
                              "ON CONFLICT(key) DO UPDATE SET value = excluded.value", (key, value))

    # --- model --------------------------------------------------------------------
    def save_model(self, blob: bytes, rows: int, castings: int, data_until: str | None) -> int:
        auth.require(self, "fit_model")
        with self.write():
            self.conn.execute("INSERT INTO models (fitted_at, rows, castings, data_until, blob) "
                              "VALUES (?, ?, ?, ?, ?)",
                              (dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
                               rows, castings, data_until, blob))
            return self.last_insert_id()

    def latest_model(self) -> dict | None:
        cur = self.conn.execute("SELECT id, fitted_at, rows, castings, data_until, blob FROM models "
                                "ORDER BY id DESC LIMIT 1")
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row, strict=False))

    # --- accounts, sessions and the audit (tracker/auth.py) -------------------------
    USER_COLUMNS = ("name", "role", "enabled", "failed_sign_ins", "locked_until", "created_at",
                    "created_by", "password_set_at", "last_sign_in")

    def users_frame(self) -> pd.DataFrame:
        """Every account without its password hash, by name."""
        return self._frame(f"SELECT {', '.join(self.USER_COLUMNS)} FROM users ORDER BY name COLLATE NOCASE")

    def user_account(self, name: str) -> dict | None:
        """One account (name matched without case) WITH its password hash, for
        ``tracker.log.accounts`` to verify a password; never shown or exported."""
        cur = self.conn.execute(f"SELECT {', '.join(self.USER_COLUMNS)}, password_hash FROM users "
                                "WHERE name = ?", (name,))
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row, strict=False))

    def insert_user(self, name: str, role: str, password_hash: str, at: str, by: str | None) -> None:
        self.conn.execute("INSERT INTO users (name, role, password_hash, enabled, failed_sign_ins, "
                          "created_at, created_by, password_set_at) VALUES (?, ?, ?, 1, 0, ?, ?, ?)",
                          (name, role, password_hash, at, by, at))

    _USER_UPDATABLE = {"role", "password_hash", "enabled", "failed_sign_ins", "locked_until",
                       "password_set_at", "last_sign_in"}

    def update_user(self, name: str, **fields) -> None:
        unknown = set(fields) - self._USER_UPDATABLE
        if unknown:
            raise ValueError(f"not a user column: {', '.join(sorted(unknown))}")
        sets = ", ".join(f'"{k}" = ?' for k in fields)
        self.conn.execute(f"UPDATE users SET {sets} WHERE name = ?", (*fields.values(), name))

    def enabled_users(self, role: str | None = None) -> int:
        """How many enabled accounts the log holds (of ``role`` only, if given)."""
        q = "SELECT COUNT(*) FROM users WHERE enabled = 1" + (" AND role = ?" if role else "")
        return self.conn.execute(q, (role,) if role else ()).fetchone()[0]

    def insert_session(self, token_sha256: str, user: str, at: str) -> None:
        self.conn.execute('INSERT INTO sessions (token_sha256, "user", started_at, last_seen) VALUES (?, ?, ?, ?)',
                          (token_sha256, user, at, at))

    def session_row(self, token_sha256: str) -> dict | None:
        cur = self.conn.execute('SELECT token_sha256, "user", started_at, last_seen, ended_at, end_reason '
                                "FROM sessions WHERE token_sha256 = ?", (token_sha256,))
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row, strict=False))

    def touch_session(self, token_sha256: str, at: str) -> None:
        self.conn.execute("UPDATE sessions SET last_seen = ? WHERE token_sha256 = ? AND ended_at IS NULL",
                          (at, token_sha256))

    def prune_sessions(self, seen_before: str) -> int:
        """Forget the sessions last active before ``seen_before`` (ISO time): none of
        them can be alive any more; the audit keeps their sign-ins and sign-outs."""
        return self.conn.execute("DELETE FROM sessions WHERE last_seen < ?", (seen_before,)).rowcount

    def end_sessions(self, at: str, reason: str, *, token_sha256: str | None = None,
                     user: str | None = None) -> int:
        """End one session (by token hash) or every open session of ``user``."""
        if token_sha256 is not None:
            cur = self.conn.execute("UPDATE sessions SET ended_at = ?, end_reason = ? "
                                    "WHERE token_sha256 = ? AND ended_at IS NULL", (at, reason, token_sha256))
        else:
            cur = self.conn.execute("UPDATE sessions SET ended_at = ?, end_reason = ? "
                                    'WHERE "user" = ? AND ended_at IS NULL', (at, reason, user))
        return cur.rowcount

    def insert_audit(self, at: str, event: str, user: str | None, subject: str | None,
                     detail: str | None, via: str | None) -> None:
        self.conn.execute('INSERT INTO audit (at, event, "user", subject, detail, via) VALUES (?, ?, ?, ?, ?, ?)',
                          (at, event, user, subject, detail, via))

    def audit_frame(self, since: str | None = None) -> pd.DataFrame:
        """The audit, oldest first; ``since`` (an ISO date or time) keeps entries at or after it."""
        q = 'SELECT id, at, event, "user", subject, detail, via FROM audit'
        params: tuple = ()
        if since is not None:
            q += " WHERE at >= ?"
            params = (str(since),)
        return self._frame(q + " ORDER BY id", params)

    # --- maintenance --------------------------------------------------------------
    def backup(self, dest: str | os.PathLike) -> dict:
        """Back the log up to ``dest``, which must not exist.

        SQLite: the online backup API (safe while others write). PostgreSQL:
        ``pg_dump --format=custom`` when it is installed; the server's own backups
        stay the plan of record. Returns ``ran`` (whether a backup was written),
        ``command`` (the pg_dump command, password masked; None on SQLite) and
        ``note`` (what to know about it).
        """
        auth.require(self, "backup")
        dest = pathlib.Path(dest)
        if dest.exists():
            raise PourbackError(f"backup file {dest} exists already; choose a new name")
        return self.dialect.backup(dest)

    def integrity_check(self) -> str:
        return self.dialect.integrity_check()


def restore(backup_file: str | os.PathLike, dest: str | os.PathLike) -> None:
    """Restore a backup into ``dest`` (which must not exist), checking it first."""
    if pathlib.Path(dest).exists():
        raise PourbackError(f"{dest} exists already; restore into a new file")
    backup_file = pathlib.Path(backup_file)
    if backup_file.name.endswith(".partial") and backup_file.name.startswith("."):
        raise PourbackError(f"backup {backup_file} is a partial backup, left by a backup that was stopped "
                            "part-way; it is not complete: use another backup (and delete this file)")
    for side in ("-journal", "-wal"):
        if pathlib.Path(f"{backup_file}{side}").exists():
            raise PourbackError(f"backup {backup_file} is incomplete: {backup_file}{side} lies beside it, left "
                                "by a copy that was stopped part-way; use another backup (a file written by "
                                "`pourback backup` has no such file beside it)")
    # Read-only: checking a backup must never change it.
    src = sqlite3.connect(backup_file.resolve().as_uri() + "?mode=ro", uri=True)
    try:
        try:
            ok = src.execute("PRAGMA integrity_check").fetchone()[0]
            tables = {r[0] for r in src.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
            version = src.execute("PRAGMA user_version").fetchone()[0]
        except sqlite3.DatabaseError as exc:
            raise PourbackError(f"backup {backup_file} is not a readable SQLite database ({exc}); "
                                "give a file written by `pourback backup`") from None
        if ok != "ok":
            raise PourbackError(f"backup {backup_file} fails its integrity check: {ok}")
        if version < 1 or "inspections" not in tables:
            raise PourbackError(f"backup {backup_file} is an SQLite database but not a pourback log; "
                                "give a file written by `pourback backup`")
        try:
            target = sqlite3.connect(str(dest))
            try:
                src.backup(target)
            finally:
                target.close()
        except sqlite3.Error as exc:
            pathlib.Path(dest).unlink(missing_ok=True)
            raise PourbackError(f"could not write {dest} ({exc}); check that its folder exists "
                                "and has room") from None
    finally:
        src.close()
