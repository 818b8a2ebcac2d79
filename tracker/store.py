"""The SQLite log: schema, migrations and every SQL statement of the project.

Nothing outside this module writes SQL. Reads return pandas DataFrames or
plain dicts; writes run in ``BEGIN IMMEDIATE`` transactions so that an import
is all-or-nothing and concurrent writers wait for each other (WAL mode and a
busy timeout) instead of failing.

Inspection records are never overwritten: a correction is a new record whose
``supersedes`` names the old one; the *current* records are those no other
record supersedes.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import pathlib
import sqlite3
import time
from typing import Callable, Iterable, Iterator

import pandas as pd
import sqlite_utils

from tracker import auth
from tracker.alloys import ALLOYS
from tracker.errors import (DiskFull, LogError, LogLocked, LogNotFound, LogReadOnly, NotALog,  # noqa: F401
                            NotFound, PourbackError)

DEFAULT_DB = "pourback.db"
ENV_DB = "POURBACK_DB"
SCHEMA_VERSION = 7
BUSY_TIMEOUT_MS = 30_000
NOTICE_AFTER_MS = 1_000  # say that a write waits for another writer after this long

# Column order of each import kind's table, as stored.
TABLE_COLUMNS = {
    "patterns": ["pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                 "metal_cost_per_kg", "processing_cost_per_casting", "mould"],
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
    """The database path: the argument, else $POURBACK_DB, else ./pourback.db."""
    if path:
        return str(path)
    return os.environ.get(ENV_DB) or DEFAULT_DB


# --- migrations -------------------------------------------------------------------

def _migration_1(db: sqlite_utils.Database) -> None:
    db["alloys"].create({
        "alloy": str, "name": str, "shrinkage": float, "density_kg_dm3": float,
        "bare_efficiency": float, "caine_a": float, "caine_b": float, "caine_c": float,
        "source": str,
    }, pk="alloy", not_null={"alloy", "shrinkage", "density_kg_dm3", "bare_efficiency"})
    db["patterns"].create({
        "pattern": str, "description": str, "alloy": str, "casting_weight_kg": float,
        "castings_per_mold": int, "metal_cost_per_kg": float,
        "processing_cost_per_casting": float,
    }, pk="pattern", foreign_keys=[("alloy", "alloys", "alloy")],
        not_null={"alloy", "casting_weight_kg", "castings_per_mold", "metal_cost_per_kg"})
    db["zones"].create({
        "pattern": str, "zone": str, "volume_cm3": float, "cooling_area_cm2": float,
        "thickness_mm": float, "length_mm": float, "required_xray_level": int,
    }, pk=("pattern", "zone"), foreign_keys=[("pattern", "patterns", "pattern")],
        not_null={"volume_cm3", "cooling_area_cm2"})
    db["sleeves"].create({
        "sleeve": str, "kind": str, "inner_diameter_mm": float, "height_mm": float,
        "modulus_factor": float, "feeding_efficiency": float, "unit_cost": float,
    }, pk="sleeve", not_null={"kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                              "feeding_efficiency"})
    db["revisions"].create({"pattern": str, "revision": str, "effective_from": str},
                           pk=("pattern", "revision"),
                           foreign_keys=[("pattern", "patterns", "pattern")],
                           not_null={"effective_from"})
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
    db["lots"].create({
        "lot": str, "pattern": str, "poured_on": str, "heat": str, "molds": int,
        "pour_temp_c": float,
    }, pk="lot", foreign_keys=[("pattern", "patterns", "pattern")],
        not_null={"pattern", "poured_on", "molds"})
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
        db["alloys"].insert({
            "alloy": a.key, "name": a.name, "shrinkage": a.shrinkage,
            "density_kg_dm3": a.density_kg_dm3, "bare_efficiency": a.bare_efficiency,
            "caine_a": c.a if c else None, "caine_b": c.b if c else None,
            "caine_c": c.c if c else None, "source": a.source,
        })


def _migration_2(db: sqlite_utils.Database) -> None:
    db["meta"].create({"key": str, "value": str}, pk="key")


def _migration_3(db: sqlite_utils.Database) -> None:
    # Indexes for the review's queries on a large log (checked with EXPLAIN QUERY PLAN
    # by ``python -m tracker.bench``). Lots by pour date carry pattern, lot and molds, so
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


def _migration_4(db: sqlite_utils.Database) -> None:
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


def _migration_5(db: sqlite_utils.Database) -> None:
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


def _migration_6(db: sqlite_utils.Database) -> None:
    # The mould a pattern is moulded in (green_sand or rigid; empty = green sand): ductile
    # iron's pressure-control rules depend on it. A zone's width, for the feeding-distance
    # rules of bars and plates (width over thickness).
    db.execute("ALTER TABLE patterns ADD COLUMN mould TEXT")
    db.execute("ALTER TABLE zones ADD COLUMN width_mm REAL")


def _migration_7(db: sqlite_utils.Database) -> None:
    # A new lot code that differs from a stored one only by case ("l26-0412" beside
    # "L26-0412") is imported with a warning: found through this index, not a scan.
    db.execute("CREATE INDEX lots_lot_lower ON lots(lower(lot))")


MIGRATIONS = [_migration_1, _migration_2, _migration_3, _migration_4, _migration_5, _migration_6,
              _migration_7]  # index i brings the schema from version i to i + 1


# --- the store --------------------------------------------------------------------

def log_error(exc: sqlite3.Error, path: str) -> PourbackError:
    """The one-line error a user sees for an SQLite failure on the log at ``path``."""
    msg = str(exc)
    low = msg.lower()
    if "readonly" in low or "read-only" in low:
        return LogReadOnly(path)
    if "disk is full" in low or "database or disk is full" in low:
        return DiskFull(path)
    if "not a database" in low or "malformed" in low:
        return NotALog(path, f"SQLite says: {msg}")
    if "unable to open" in low:
        parent = pathlib.Path(path).parent
        if not parent.is_dir():
            return LogError(path, f"cannot open the log {path}: the folder {parent} does not exist; check "
                                  "the path given with --db (or $POURBACK_DB)")
        if pathlib.Path(path).is_dir():
            return LogError(path, f"cannot open the log {path}: it is a folder; give the log's file with --db")
        return LogError(path, f"cannot open the log {path} ({msg}); check that the file and its folder can "
                              "be read and written")
    return LogError(path, f"the log {path} could not be used ({msg}); nothing was written")


class Store:
    """One open connection to the log.

    ``Store(path)`` opens (creating and migrating when needed) the database;
    use it as a context manager so the connection is closed. With
    ``create=False`` a missing file is an error (only ``pourback init`` and
    ``demo`` create a log). ``on_wait`` is called with a message when a write
    has waited a second for another writer and goes on waiting.
    """

    def __init__(self, path: str | os.PathLike | None = None, *, create: bool = True, actor=None,
                 on_wait: Callable[[str], None] | None = None):
        self.path = resolve_path(path)
        # Who writes through this connection: None for the local desk (the command
        # line, a dashboard on loopback without sign-in), else a signed-in
        # ``tracker.auth.Session`` whose role every write is checked against.
        self.actor = actor
        self.on_wait = on_wait
        self.conn = None
        memory = self.path == ":memory:"
        if not memory and not create and not pathlib.Path(self.path).exists():
            raise LogNotFound(self.path)
        if not memory and pathlib.Path(self.path).is_dir():
            raise LogError(self.path, f"cannot open the log {self.path}: it is a folder; give the log's "
                                      "file with --db")
        try:
            if not memory and not create and pathlib.Path(self.path).stat().st_size == 0:
                raise NotALog(self.path, "the file is empty")
            conn = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_MS / 1000, check_same_thread=False)
            self.conn = conn
            self.db = sqlite_utils.Database(conn)
            conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            conn.execute("PRAGMA foreign_keys = ON")
            self._check_foreign()
            if not memory:
                self._retry(lambda: conn.execute("PRAGMA journal_mode = WAL"))
                conn.execute("PRAGMA synchronous = NORMAL")
            self.migrate()
        except sqlite3.Error as exc:
            self.close()
            raise log_error(exc, self.path) from None
        except BaseException:
            self.close()
            raise

    def _check_foreign(self) -> None:
        """Refuse an SQLite database of another program (its tables, no schema version)."""
        if self.schema_version() != 0:
            return
        tables = [r[0] for r in self.conn.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name LIMIT 4")]
        if tables:
            raise NotALog(self.path, "an SQLite database of another program, with the tables "
                                     + ", ".join(tables[:3]) + (" ..." if len(tables) > 3 else ""))

    # connection handling
    def close(self) -> None:
        if self.conn is not None:
            self.conn.close()

    def __enter__(self) -> "Store":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def _retry(self, fn, attempts: int = 8):
        delay = 0.05
        for i in range(attempts):
            try:
                return fn()
            except sqlite3.OperationalError as exc:
                if "locked" not in str(exc) and "busy" not in str(exc):
                    raise
                if i == attempts - 1:
                    raise LogLocked(self.path, BUSY_TIMEOUT_MS / 1000) from None
                time.sleep(delay)
                delay = min(delay * 2, 1.0)

    def _begin(self) -> None:
        """BEGIN IMMEDIATE: wait a second for another writer, say so, then wait the rest."""
        first = min(NOTICE_AFTER_MS, BUSY_TIMEOUT_MS)
        self.conn.execute(f"PRAGMA busy_timeout = {first}")
        try:
            try:
                self.conn.execute("BEGIN IMMEDIATE")
                return
            except sqlite3.OperationalError as exc:
                if "locked" not in str(exc) and "busy" not in str(exc):
                    raise
            if self.on_wait is not None:
                self.on_wait(f"The log {self.path} is locked by another writer; waiting up to "
                             f"{(BUSY_TIMEOUT_MS - first) / 1000:g} s more ...")
            self.conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS - first}")
            self._retry(lambda: self.conn.execute("BEGIN IMMEDIATE"))
        finally:
            self.conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")

    @contextlib.contextmanager
    def write(self) -> Iterator["Store"]:
        """A write transaction: everything inside commits together or not at all.

        An SQLite failure (read-only file, full disk, a lock held too long)
        rolls it back and becomes one :class:`LogError`."""
        if self.conn.in_transaction:
            with self.db.atomic():
                yield self
            return
        try:
            self._begin()
        except sqlite3.Error as exc:
            raise log_error(exc, self.path) from None
        try:
            yield self
            self._retry(lambda: self.conn.execute("COMMIT"))
        except BaseException as exc:
            if self.conn.in_transaction:
                with contextlib.suppress(sqlite3.Error):
                    self.conn.execute("ROLLBACK")
            if isinstance(exc, sqlite3.Error):
                raise log_error(exc, self.path) from None
            raise

    def schema_version(self) -> int:
        return self.conn.execute("PRAGMA user_version").fetchone()[0]

    def migrate(self) -> None:
        version = self.schema_version()
        if version > SCHEMA_VERSION:
            raise PourbackError(f"database {self.path} has schema version {version}, newer than this "
                                f"program's {SCHEMA_VERSION}; upgrade pourback")
        while version < SCHEMA_VERSION:
            with self.write():
                # Re-read inside the lock: another process may have migrated.
                version = self.schema_version()
                if version >= SCHEMA_VERSION:
                    break
                MIGRATIONS[version](self.db)
                version += 1
                self.conn.execute(f"PRAGMA user_version = {version}")

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
        return dict(zip(cols, zip(*rows))) if rows else {c: () for c in cols}

    def table(self, name: str) -> pd.DataFrame:
        """All rows of one of the log's tables, in key order."""
        if name not in TABLE_COLUMNS and name != "alloys":
            raise NotFound("table", name)
        order = ", ".join(KEYS.get(name, ["alloy"])) if name != "inspections" else "id"
        return self._frame(f"SELECT * FROM [{name}] ORDER BY {order}")

    def count(self, name: str) -> int:
        # A table name cannot be a parameter: take only the log's own tables.
        known = {r[0] for r in self.conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        if name not in known:
            raise NotFound("table", name)
        return self.conn.execute(f"SELECT COUNT(*) FROM [{name}]").fetchone()[0]

    def has_rows(self, name: str) -> bool:
        """Whether table ``name`` (one of the import kinds) holds any row."""
        if name not in TABLE_COLUMNS:
            raise NotFound("table", name)
        return self.conn.execute(f"SELECT EXISTS (SELECT 1 FROM [{name}])").fetchone()[0] == 1

    def counts(self) -> dict[str, int]:
        return {t: self.count(t) for t in ("patterns", "zones", "sleeves", "revisions", "risers",
                                           "lots", "inspections")}

    def quick_counts(self) -> dict[str, int]:
        """Row counts from the largest rowid: the log never deletes a row (a
        correction is a new record; a rolled-back import frees its rowids), so
        it equals COUNT(*) without scanning millions of rows."""
        return {t: self.conn.execute(f"SELECT COALESCE(MAX(rowid), 0) FROM [{t}]").fetchone()[0]
                for t in ("patterns", "zones", "sleeves", "revisions", "risers", "lots", "inspections")}

    def snapshot(self) -> dict[str, list[tuple]]:
        """Every row of every table (for checks that nothing changed)."""
        names = [r[0] for r in self.conn.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name")]
        return {n: sorted(map(repr, self.conn.execute(f"SELECT * FROM [{n}]").fetchall()))
                for n in names}

    def existing(self, name: str, keys: list[tuple]) -> dict[tuple, tuple]:
        """The stored rows (as tuples in TABLE_COLUMNS order) of the given keys."""
        cols = TABLE_COLUMNS[name]
        key_cols = KEYS[name]
        out: dict[tuple, tuple] = {}
        keys = list(dict.fromkeys(keys))
        step = max(1, 900 // len(key_cols))
        for i in range(0, len(keys), step):
            chunk = keys[i:i + step]
            if len(key_cols) == 1:
                where = f"[{key_cols[0]}] IN ({', '.join('?' * len(chunk))})"
                params = [k[0] for k in chunk]
            else:
                one = "(" + " AND ".join(f"[{c}] = ?" for c in key_cols) + ")"
                where = " OR ".join([one] * len(chunk))
                params = [v for k in chunk for v in k]
            sel = ", ".join(f"[{c}]" for c in cols)
            for row in self.conn.execute(f"SELECT {sel} FROM [{name}] WHERE {where}", params):
                out[tuple(row[cols.index(c)] for c in key_cols)] = tuple(row)
        return out

    def keys_present(self, name: str, column: str, values: Iterable) -> set:
        """Which of ``values`` are present in ``name.column``."""
        values = list(dict.fromkeys(values))
        found = set()
        for i in range(0, len(values), 900):
            chunk = values[i:i + 900]
            q = f"SELECT [{column}] FROM [{name}] WHERE [{column}] IN ({', '.join('?' * len(chunk))})"
            found.update(r[0] for r in self.conn.execute(q, chunk))
        return found

    def iter_rows(self, name: str, size: int = 100_000) -> Iterator[list[tuple]]:
        """Every row of ``name`` as :meth:`insert_rows` takes them (TABLE_COLUMNS
        order, without ``id`` for inspections), in key order, ``size`` at a time."""
        cols = [c for c in TABLE_COLUMNS[name] if c != "id"]
        order = ", ".join(KEYS[name]) if name != "inspections" else "id"
        cur = self.conn.execute(f"SELECT {', '.join(f'[{c}]' for c in cols)} FROM [{name}] ORDER BY {order}")
        while True:
            batch = cur.fetchmany(size)
            if not batch:
                return
            yield batch

    # --- writes -------------------------------------------------------------------
    def insert_rows(self, name: str, rows: list[tuple]) -> int:
        """Insert rows (tuples in TABLE_COLUMNS order, without ``id`` for inspections)."""
        if not rows:
            return 0
        auth.require(self, auth.TABLE_ACTION[name])
        cols = [c for c in TABLE_COLUMNS[name] if c != "id"]
        sql = (f"INSERT INTO [{name}] ({', '.join(f'[{c}]' for c in cols)}) "
               f"VALUES ({', '.join('?' * len(cols))})")
        self.conn.executemany(sql, rows)
        return len(rows)

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
        lots = list(dict.fromkeys(lots))
        out = {}
        for i in range(0, len(lots), 900):
            chunk = lots[i:i + 900]
            q = ("SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
                 "FROM lots l JOIN patterns p ON p.pattern = l.pattern "
                 f"WHERE l.lot IN ({', '.join('?' * len(chunk))})")
            for r in self.conn.execute(q, chunk):
                out[r[0]] = {"pattern": r[1], "poured_on": r[2], "castings": r[3]}
        return out

    def lot_totals(self, lots: Iterable[str], exclude: tuple = ()) -> dict[str, dict]:
        """Per lot, the current records' rejected total and quantity per method.

        ``exclude``: record ids to leave out (the record a correction replaces).
        """
        lots = list(dict.fromkeys(lots))
        exclude = [int(x) for x in exclude]
        skip = f" AND i.id NOT IN ({', '.join('?' * len(exclude))})" if exclude else ""
        out: dict[str, dict] = {}
        for i in range(0, len(lots), 900):
            chunk = lots[i:i + 900]
            q = ("SELECT i.lot, i.method, i.result, SUM(i.quantity) FROM inspections i "
                 f"WHERE i.lot IN ({', '.join('?' * len(chunk))}) AND i.void = 0 "
                 "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
                 + skip + " GROUP BY i.lot, i.method, i.result")
            for lot, method, result, qty in self.conn.execute(q, chunk + exclude):
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
        for i in range(0, len(low), 900):
            chunk = low[i:i + 900]
            q = (f"SELECT [{column}] FROM [{name}] WHERE lower([{column}]) IN ({', '.join('?' * len(chunk))})")
            for (code,) in self.conn.execute(q, chunk):
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
        self.conn.execute("INSERT OR IGNORE INTO imports (digest, file, bytes, last_row, segments, "
                          "imported_at, imported_by) VALUES (?, ?, ?, ?, ?, ?, ?)",
                          (digest, file, int(size), int(last_row), segments,
                           dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"), by))

    def has_legacy_keys(self) -> bool:
        """Whether the log holds records imported before files were keyed by digest."""
        return self.get_meta("legacy_keys") == "1"

    def legacy_keys_present(self, keys: Iterable[str], file: str) -> set:
        """Which of ``keys`` (old content-and-occurrence keys) a record imported
        from a file named ``file`` holds."""
        keys = list(dict.fromkeys(keys))
        found = set()
        for i in range(0, len(keys), 900):
            chunk = keys[i:i + 900]
            q = (f"SELECT record_key FROM inspections WHERE record_key IN ({', '.join('?' * len(chunk))}) "
                 "AND source = ?")
            found.update(r[0] for r in self.conn.execute(q, [*chunk, file]))
        return found

    def records_by_key(self, keys: Iterable[str]) -> dict[str, tuple]:
        """The stored content (lot .. notes, as TABLE_COLUMNS orders them) of the
        records with the given keys."""
        keys = list(dict.fromkeys(keys))
        cols = TABLE_COLUMNS["inspections"][1:13]
        out = {}
        for i in range(0, len(keys), 900):
            chunk = keys[i:i + 900]
            q = (f"SELECT record_key, {', '.join(cols)} FROM inspections "
                 f"WHERE record_key IN ({', '.join('?' * len(chunk))})")
            out.update((r[0], tuple(r[1:])) for r in self.conn.execute(q, chunk))
        return out

    # --- inspections --------------------------------------------------------------
    def inspection(self, record_id: int) -> dict:
        cur = self.conn.execute("SELECT * FROM inspections WHERE id = ?", (record_id,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("inspection record", record_id, "see `pourback history` for record ids")
        return dict(zip([d[0] for d in cur.description], row))

    def superseded_by(self, record_id: int) -> int | None:
        r = self.conn.execute("SELECT id FROM inspections WHERE supersedes = ?", (record_id,)).fetchone()
        return r[0] if r else None

    def last_insert_id(self) -> int:
        return self.conn.execute("SELECT last_insert_rowid()").fetchone()[0]

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

    @staticmethod
    def _lot_filter(start, end, pattern, alias: str = "l"):
        where, params = [], []
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
        cur = self.conn.execute(
            "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold, l.pour_temp_c "
            "FROM lots l JOIN patterns p ON p.pattern = l.pattern"
            + (" WHERE " + " AND ".join(where) if where else ""), tuple(params))
        while True:
            batch = cur.fetchmany(size)
            if not batch:
                return
            yield batch

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
        cond = " AND ".join(where) or "1"
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

    def revision_steps(self, start: str, end: str) -> pd.DataFrame:
        """Revisions taking effect from ``start`` to ``end`` (ISO strings, inclusive),
        each with the revision before it (``previous``, ``previous_from``) and the
        date the next one takes effect (``next_from``); None where there is none."""
        # Neighbours by a search per revision in range (a pattern has a few revisions):
        # a window function over the whole table cost 35 ms at 3,000 patterns, this 0.5 ms.
        q = ("SELECT r.pattern, r.revision, r.effective_from, b.revision AS previous, "
             "b.effective_from AS previous_from, "
             "(SELECT MIN(n.effective_from) FROM revisions n WHERE n.pattern = r.pattern "
             "AND (n.effective_from, n.revision) > (r.effective_from, r.revision)) AS next_from "
             "FROM revisions r LEFT JOIN revisions b ON b.rowid = ("
             "SELECT p.rowid FROM revisions p WHERE p.pattern = r.pattern "
             "AND (p.effective_from, p.revision) < (r.effective_from, r.revision) "
             "ORDER BY p.effective_from DESC, p.revision DESC LIMIT 1) "
             "WHERE r.effective_from >= ? AND r.effective_from <= ? "
             "ORDER BY r.pattern, r.effective_from, r.revision")
        return self._frame(q, (str(start), str(end)))

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
        return dict(zip(cols, zip(*rows))) if rows else {c: () for c in cols}

    def riser_designs(self, patterns: Iterable[str]) -> pd.DataFrame:
        """The stored risers (every revision) of ``patterns``, without joins."""
        codes = list(dict.fromkeys(patterns))
        frames = [self._frame("SELECT pattern, revision, riser, zone, placement, top, diameter_mm, height_mm, "
                              f"sleeve, neck_diameter_mm FROM risers WHERE pattern IN ({', '.join('?' * len(chunk))}) "
                              "ORDER BY pattern, revision, riser", chunk)
                  for chunk in (codes[i:i + 900] for i in range(0, len(codes), 900))]
        if not frames:
            return self._frame("SELECT pattern, revision, riser, zone, placement, top, diameter_mm, height_mm, "
                               "sleeve, neck_diameter_mm FROM risers WHERE 0")
        return pd.concat(frames, ignore_index=True)

    def reject_notes(self, start: str | None = None, end: str | None = None, pattern=None,
                     per_pattern: int = 5) -> pd.DataFrame:
        """The newest non-empty notes of current reject and rework records, at
        most ``per_pattern`` per pattern, for lots poured from ``start`` to
        ``end`` (ISO strings, inclusive)."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT pattern, lot, poured_on, result, defect, zone, quantity, notes FROM ("
             "SELECT l.pattern, l.lot, l.poured_on, i.result, i.defect, i.zone, i.quantity, "
             "i.notes, ROW_NUMBER() OVER (PARTITION BY l.pattern "
             "ORDER BY l.poured_on DESC, i.id DESC) AS k "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             "WHERE i.result != 'accept' AND i.void = 0 AND TRIM(COALESCE(i.notes, '')) != '' "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)"
             + "".join(" AND " + w for w in where)
             + ") WHERE k <= ? ORDER BY pattern, k")
        return self._frame(q, [*params, int(per_pattern)])

    def pour_span(self) -> tuple[str | None, str | None]:
        # Two subqueries: SQLite answers a lone MIN() or MAX() from the index,
        # but scans every lot for both in one SELECT.
        r = self.conn.execute("SELECT (SELECT MIN(poured_on) FROM lots), "
                              "(SELECT MAX(poured_on) FROM lots)").fetchone()
        return r[0], r[1]

    def last_pour_before(self, day: str) -> str | None:
        """The newest pour date before ``day`` (ISO string), or None (from the pour-date index)."""
        return self.conn.execute("SELECT MAX(poured_on) FROM lots WHERE poured_on < ?",
                                 (str(day),)).fetchone()[0]

    def rejects_by_pattern(self, start: str, end: str) -> pd.DataFrame:
        """Castings rejected (current records) per pattern in lots poured from
        ``start`` to ``end`` (ISO strings, inclusive): one plain aggregate, the
        floor the scale benchmark holds the weekly review against."""
        # The lots of the week (by the pour-date index) drive: left to itself, SQLite
        # without statistics scans every record (taking result = 'reject' as selective)
        # or every lot (in pattern order, to save the GROUP BY sort).
        q = ("SELECT l.pattern, SUM(i.quantity) AS rejected "
             "FROM lots l INDEXED BY lots_poured_on_pattern CROSS JOIN inspections i ON i.lot = l.lot "
             "WHERE l.poured_on >= ? AND l.poured_on <= ? AND i.result = 'reject' AND i.void = 0 "
             "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id) "
             "GROUP BY l.pattern")
        return self._frame(q, (str(start), str(end)))

    def review_floor(self, start: str, end: str, history: Iterable[tuple[str, str, str]] = ()
                     ) -> dict[str, list[tuple]]:
        """The rows a review of lots poured from ``start`` to ``end`` (ISO strings,
        inclusive) reads, fetched as plain tuples with no computation: the floor
        the scale benchmark holds the review against.

        ``lots``: (lot, pattern, poured_on, castings); ``records``: the current
        (not superseded, not void) inspection records of those lots (lot, result,
        defect, zone, quantity); ``risers``: the riser revisions in force in the
        span for the patterns poured in it, one row per riser (pattern, revision,
        effective_from, riser, zone, placement, top, diameter_mm, height_mm,
        sleeve, neck_diameter_mm). ``history``: (pattern, first day, last day) spans
        read besides (``tracker.review.history_spans``, the lots before the span
        that judging riser revisions reads): their lots and current records are
        added as ``history_lots`` and ``history_records`` (same columns).
        """
        span = (str(start), str(end))
        lots = self.conn.execute(
            "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
            "FROM lots l INDEXED BY lots_poured_on_pattern CROSS JOIN patterns p ON p.pattern = l.pattern "
            "WHERE l.poured_on >= ? AND l.poured_on <= ?", span).fetchall()
        records = self.conn.execute(
            "SELECT i.lot, i.result, i.defect, i.zone, i.quantity "
            "FROM lots l INDEXED BY lots_poured_on_pattern CROSS JOIN inspections i ON i.lot = l.lot "
            "WHERE l.poured_on >= ? AND l.poured_on <= ? AND i.void = 0 "
            "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)", span).fetchall()
        risers = self.conn.execute(
            "SELECT r.pattern, r.revision, r.effective_from, x.riser, x.zone, x.placement, x.top, "
            "x.diameter_mm, x.height_mm, x.sleeve, x.neck_diameter_mm "
            "FROM revisions r JOIN risers x ON x.pattern = r.pattern AND x.revision = r.revision "
            "WHERE r.effective_from <= ?2 "
            "AND r.pattern IN (SELECT pattern FROM lots WHERE poured_on >= ?1 AND poured_on <= ?2) "
            "AND NOT EXISTS (SELECT 1 FROM revisions s WHERE s.pattern = r.pattern "
            "AND s.effective_from > r.effective_from AND s.effective_from <= ?1)", span).fetchall()
        out = {"lots": lots, "records": records, "risers": risers}
        if history:
            out["history_lots"], out["history_records"] = [], []
            for pattern, first, last in history:
                span = (str(pattern), str(first), str(last))
                out["history_lots"] += self.conn.execute(
                    "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
                    "FROM lots l INDEXED BY lots_pattern_poured_on CROSS JOIN patterns p "
                    "ON p.pattern = l.pattern WHERE l.pattern = ? AND l.poured_on >= ? AND l.poured_on <= ?",
                    span).fetchall()
                out["history_records"] += self.conn.execute(
                    "SELECT i.lot, i.result, i.defect, i.zone, i.quantity "
                    "FROM lots l INDEXED BY lots_pattern_poured_on CROSS JOIN inspections i ON i.lot = l.lot "
                    "WHERE l.pattern = ? AND l.poured_on >= ? AND l.poured_on <= ? AND i.void = 0 "
                    "AND NOT EXISTS (SELECT 1 FROM inspections n WHERE n.supersedes = i.id)", span).fetchall()
        return out

    def query_plan(self, sql: str, params: Iterable = ()) -> list[str]:
        """SQLite's plan for one statement (EXPLAIN QUERY PLAN), one line per step,
        indented by depth."""
        rows = self.conn.execute("EXPLAIN QUERY PLAN " + sql, tuple(params)).fetchall()
        depth: dict[int, int] = {0: -1}
        out = []
        for node, parent, _, detail in rows:
            depth[node] = depth.get(parent, -1) + 1
            out.append("  " * depth[node] + detail)
        return out

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
        return dict(zip([d[0] for d in cur.description], row))

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
        return dict(zip([d[0] for d in cur.description], row))

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
        return dict(zip([d[0] for d in cur.description], row))

    def lot(self, code: str) -> dict:
        cur = self.conn.execute("SELECT l.*, l.molds * p.castings_per_mold AS castings "
                                "FROM lots l JOIN patterns p ON p.pattern = l.pattern WHERE l.lot = ?",
                                (code,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("lot", code, "import or log the lot first")
        return dict(zip([d[0] for d in cur.description], row))

    def sleeve(self, code: str) -> dict:
        cur = self.conn.execute("SELECT * FROM sleeves WHERE sleeve = ?", (code,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("sleeve", code, "import it with the sleeve catalogue first")
        return dict(zip([d[0] for d in cur.description], row))

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
                              (dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"),
                               rows, castings, data_until, blob))
            return self.last_insert_id()

    def latest_model(self) -> dict | None:
        cur = self.conn.execute("SELECT id, fitted_at, rows, castings, data_until, blob FROM models "
                                "ORDER BY id DESC LIMIT 1")
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row))

    # --- accounts, sessions and the audit (tracker/auth.py) -------------------------
    USER_COLUMNS = ("name", "role", "enabled", "failed_sign_ins", "locked_until", "created_at",
                    "created_by", "password_set_at", "last_sign_in")

    def users_frame(self) -> pd.DataFrame:
        """Every account without its password hash, by name."""
        return self._frame(f"SELECT {', '.join(self.USER_COLUMNS)} FROM users ORDER BY name COLLATE NOCASE")

    def user_account(self, name: str) -> dict | None:
        """One account (name matched without case) WITH its password hash, for
        ``tracker.auth`` to verify a password; never shown or exported."""
        cur = self.conn.execute(f"SELECT {', '.join(self.USER_COLUMNS)}, password_hash FROM users "
                                "WHERE name = ?", (name,))
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row))

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
        sets = ", ".join(f"[{k}] = ?" for k in fields)
        self.conn.execute(f"UPDATE users SET {sets} WHERE name = ?", (*fields.values(), name))

    def enabled_users(self, role: str | None = None) -> int:
        """How many enabled accounts the log holds (of ``role`` only, if given)."""
        q = "SELECT COUNT(*) FROM users WHERE enabled = 1" + (" AND role = ?" if role else "")
        return self.conn.execute(q, (role,) if role else ()).fetchone()[0]

    def insert_session(self, token_sha256: str, user: str, at: str) -> None:
        self.conn.execute("INSERT INTO sessions (token_sha256, user, started_at, last_seen) VALUES (?, ?, ?, ?)",
                          (token_sha256, user, at, at))

    def session_row(self, token_sha256: str) -> dict | None:
        cur = self.conn.execute("SELECT token_sha256, user, started_at, last_seen, ended_at, end_reason "
                                "FROM sessions WHERE token_sha256 = ?", (token_sha256,))
        row = cur.fetchone()
        return None if row is None else dict(zip([d[0] for d in cur.description], row))

    def touch_session(self, token_sha256: str, at: str) -> None:
        self.conn.execute("UPDATE sessions SET last_seen = ? WHERE token_sha256 = ? AND ended_at IS NULL",
                          (at, token_sha256))

    def end_sessions(self, at: str, reason: str, *, token_sha256: str | None = None,
                     user: str | None = None) -> int:
        """End one session (by token hash) or every open session of ``user``."""
        if token_sha256 is not None:
            cur = self.conn.execute("UPDATE sessions SET ended_at = ?, end_reason = ? "
                                    "WHERE token_sha256 = ? AND ended_at IS NULL", (at, reason, token_sha256))
        else:
            cur = self.conn.execute("UPDATE sessions SET ended_at = ?, end_reason = ? "
                                    "WHERE user = ? AND ended_at IS NULL", (at, reason, user))
        return cur.rowcount

    def insert_audit(self, at: str, event: str, user: str | None, subject: str | None,
                     detail: str | None, via: str | None) -> None:
        self.conn.execute("INSERT INTO audit (at, event, user, subject, detail, via) VALUES (?, ?, ?, ?, ?, ?)",
                          (at, event, user, subject, detail, via))

    def audit_frame(self, since: str | None = None) -> pd.DataFrame:
        """The audit, oldest first; ``since`` (an ISO date or time) keeps entries at or after it."""
        q = "SELECT id, at, event, user, subject, detail, via FROM audit"
        params: tuple = ()
        if since is not None:
            q += " WHERE at >= ?"
            params = (str(since),)
        return self._frame(q + " ORDER BY id", params)

    # --- maintenance --------------------------------------------------------------
    def backup(self, dest: str | os.PathLike) -> None:
        """Copy the log with SQLite's online backup (safe while others write).

        The copy is written under a temporary name beside ``dest`` and renamed
        when complete, so a backup stopped part-way (a crash, SIGKILL, a full
        disk) never leaves a file under the backup's name."""
        auth.require(self, "backup")
        dest = pathlib.Path(dest)
        if dest.exists():
            raise PourbackError(f"backup file {dest} exists already; choose a new name")
        if not dest.parent.is_dir():
            raise PourbackError(f"could not write the backup {dest}: the folder {dest.parent} does not exist")
        part = dest.with_name(f".{dest.name}.{os.getpid()}.partial")
        try:
            target = sqlite3.connect(str(part))
            try:
                self.conn.backup(target, pages=-1)  # one step: a stepwise copy restarts on every write
            finally:
                target.close()
            with open(part, "rb+") as fh:
                os.fsync(fh.fileno())
            os.replace(part, dest)
        except (sqlite3.Error, OSError) as exc:
            for p in (part, pathlib.Path(f"{part}-journal")):
                p.unlink(missing_ok=True)  # never leave a half-written backup behind
            if isinstance(exc, sqlite3.Error) and "full" in str(exc) or getattr(exc, "errno", None) == 28:
                raise DiskFull(dest) from None
            raise PourbackError(f"could not write the backup {dest} ({exc}); check that its folder "
                                "can be written and has room") from None

    def integrity_check(self) -> str:
        return self.conn.execute("PRAGMA integrity_check").fetchone()[0]


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
