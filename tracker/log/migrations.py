"""The log's schema, version by version: each migration brings it one version up.

A migration writes through a :class:`Schema`, which maps the DDL's column types
to the dialect's and ``?`` to its placeholder, so each is written once for both
backends. A log written by an older version of the program opens and is
brought up to date (see ``StoreCore.migrate``).
"""

from __future__ import annotations

from collections.abc import Iterable

from tracker.design.alloys import ALLOYS
from tracker.log.totals_sql import EARLIEST_DAY, _totals_from


class Schema:
    """What a migration writes through: DDL and seed rows in the shared subset,
    mapped to the dialect (see the note above the migrations)."""

    def __init__(self, dialect):
        self.dialect = dialect

    def execute(self, sql: str, params: Iterable = ()):
        return self.dialect.execute(self.dialect.ddl(sql), params)

    def create_table(self, name: str, columns: dict[str, type], pk: str | tuple[str, ...],
                     not_null: Iterable[str] = ()) -> None:
        """Create a plain table: columns of Python types (str, int, float, bytes), a
        primary key, NOT NULL columns (sqlite-utils' ``Database.create_table`` on SQLite)."""
        self.dialect.create_table(name, columns, pk, not_null)

    def add_column(self, table: str, column: str, col_type: type) -> None:
        """Add a column of Python type ``col_type`` (sqlite-utils' ``Table.add_column`` on SQLite)."""
        self.dialect.add_column(table, column, col_type)


# --- migrations -------------------------------------------------------------------
# Each migration is plain SQL in the subset both dialects share, run through
# ``db.execute`` (a :class:`Schema`), which maps the column types to the
# dialect's (INTEGER PRIMARY KEY, REAL, BLOB, TEXT) and ``?`` to its placeholder.
# A plain table (typed columns, a primary key, NOT NULL) is made by
# ``db.create_table`` and a new column by ``db.add_column``: sqlite-utils on SQLite.
# Tables with CHECK constraints, collations, foreign keys or partial indexes stay
# in SQL, which says them the same way to both dialects. Migrations 1 to 3 run in
# the tests on a bare sqlite-utils ``Database`` too (its ``execute`` and
# ``create_table`` take the same arguments).

def _migration_1(db: Schema) -> None:
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
    _seed_alloys(db)


def _seed_alloys(db: Schema) -> None:
    """The alloys table as the program knows them (tracker.design.alloys)."""
    for a in ALLOYS.values():
        c = a.caine
        db.execute("INSERT INTO alloys (alloy, name, shrinkage, density_kg_dm3, bare_efficiency, "
                   "caine_a, caine_b, caine_c, source) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                   (a.key, a.name, a.shrinkage, a.density_kg_dm3, a.bare_efficiency,
                    c.a if c else None, c.b if c else None, c.c if c else None, a.source))


def _migration_2(db: Schema) -> None:
    db.create_table("meta", {"key": str, "value": str}, pk="key")


def _migration_3(db: Schema) -> None:
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


def _migration_4(db: Schema) -> None:
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


def _migration_5(db: Schema) -> None:
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


def _migration_6(db: Schema) -> None:
    # The mould a pattern is moulded in (green_sand or rigid; empty = green sand): ductile
    # iron's pressure-control rules depend on it. A zone's width, for the feeding-distance
    # rules of bars and plates (width over thickness).
    db.add_column("patterns", "mould", str)
    db.add_column("zones", "width_mm", float)


def _migration_7(db: Schema) -> None:
    # A new lot code that differs from a stored one only by case ("l26-0412" beside
    # "L26-0412") is imported with a warning: found through this index, not a scan.
    db.execute("CREATE INDEX lots_lot_lower ON lots(lower(lot))")


def _migration_8(db: Schema) -> None:
    # Plants: a pattern belongs to one plant of a group (None: the log's only plant).
    db.add_column("patterns", "plant", str)
    db.execute("CREATE INDEX patterns_plant ON patterns(plant, pattern)")


def _migration_9(db: Schema) -> None:
    # The running totals the riser revisions' before/after are read from (see above).
    day = {"pattern": str, "poured_on": str, "lots": int, "castings": int, "inspected_castings": int,
           "rejected": int, "shrinkage": int, "zoned_shrinkage": int}
    db.create_table("day_totals", day, pk=("pattern", "poured_on"), not_null=day)
    zone = {"pattern": str, "zone": str, "poured_on": str, "shrinkage": int}
    db.create_table("zone_totals", zone, pk=("pattern", "zone", "poured_on"), not_null=zone)
    _totals_from(db.execute, EARLIEST_DAY)


def _migration_10(db: Schema) -> None:
    # A zone's faces joined to the rest of the casting ("bottom;edges"; empty: every face
    # cools): its V/A may then exceed T/2, and the thermal model insulates those faces.
    db.add_column("zones", "joined_faces", str)


def _migration_11(db: Schema) -> None:
    # Actions decided at the weekly review (tracker/log/actions.py): open until done_at is set.
    db.execute("""
        CREATE TABLE actions (
            id INTEGER PRIMARY KEY,
            pattern TEXT NOT NULL REFERENCES patterns(pattern),
            text TEXT NOT NULL, owner TEXT NOT NULL, due TEXT NOT NULL,
            created_at TEXT NOT NULL, created_by TEXT,
            done_at TEXT, done_by TEXT, note TEXT
        )""")
    db.execute("CREATE INDEX actions_due ON actions(due, id)")


def _migration_12(db: Schema) -> None:
    # A pattern's casting model (STL, as the file came, with its SHA-256 and unit) for the
    # 3-D solve; a riser's position on it: the contact centre (mm) and its axis (z, -x, ...);
    # a zone's position (its hot spot, mm) and its modulus from the 3-D solve (cm).
    db.execute("CREATE TABLE castings (pattern TEXT PRIMARY KEY REFERENCES patterns(pattern), "
               "file TEXT NOT NULL, units TEXT NOT NULL, digest TEXT NOT NULL, volume_cm3 REAL, "
               "stored_at TEXT NOT NULL, stl BLOB NOT NULL)")
    for column in ("x_mm", "y_mm", "z_mm"):
        db.add_column("risers", column, float)
    db.add_column("risers", "axis", str)
    for column in ("x_mm", "y_mm", "z_mm", "modulus_cm"):
        db.add_column("zones", column, float)


# index i brings the schema from version i to i + 1
MIGRATIONS = [_migration_1, _migration_2, _migration_3, _migration_4, _migration_5, _migration_6,
              _migration_7, _migration_8, _migration_9, _migration_10, _migration_11, _migration_12]
SCHEMA_VERSION = len(MIGRATIONS)
