"""The log: one :class:`Store` over the SQLite file or PostgreSQL schema holding it.

All SQL of the project lives in :mod:`tracker.log`. The log lives in an SQLite
file (the embedded default) or on a PostgreSQL server (a ``postgresql://`` URL).
The SQL is written once for both; what differs between the two (connection,
placeholders, DDL types, schema version, row ids, COPY, the writers' lock,
retries, query plans) lives in :mod:`tracker.log.dialect`.

Reads return pandas DataFrames or plain dicts; writes run in transactions that
let one writer in at a time (SQLite's ``BEGIN IMMEDIATE``, PostgreSQL's
advisory lock), so that an import is all-or-nothing and concurrent writers
wait for each other instead of failing.

Inspection records are never overwritten: a correction is a new record whose
``supersedes`` names the old one; the *current* records are those no other
record supersedes and that are not void (:data:`tracker.log.schema.CURRENT`).

:class:`Store` is a small core (:mod:`tracker.log.core`: open, close, the
write transaction, retries, migrations) with one class per family of tables,
each in its own module:

- ``tables``: any table by name, bulk inserts, copy-log;
- ``designs``: patterns, zones, sleeves, revisions, risers;
- ``records``: lots and inspection records;
- ``review_reads``: what the weekly review reads;
- ``totals``: the running totals per pattern and pour day (their SQL in ``totals_sql``);
- ``imports``: imported files and their keys;
- ``users``: accounts, sessions, the audit;
- ``actions``: the weekly review's actions;
- ``meta``: settings (``meta``) and fitted models;
- ``castings``: a pattern's casting model (STL) for the 3-D solve;
- ``backup``: backup, restore, integrity check.

The schema's names (columns, keys, the current-record condition) are in
``schema``, its versions in ``migrations``.

The names other layers import from here (``Store``, ``KEYS``, ``TABLE_COLUMNS``,
``retrying``, ``DATABASE_ERRORS``, ...) stay importable from this module.
"""

from __future__ import annotations

from tracker.errors import (  # noqa: F401 (re-exported: callers import them from here)
    DiskFull,
    LogError,
    LogLocked,
    LogNotFound,
    LogReadOnly,
    NotALog,
    NotFound,
    PourbackError,
)
from tracker.log.actions import ActionRows
from tracker.log.backup import Maintenance, restore  # noqa: F401 (restore re-exported for callers)
from tracker.log.castings import CastingRows
from tracker.log.core import (  # noqa: F401 (re-exported: callers import them from here)
    DATABASE_ERRORS,
    DEFAULT_DB,
    ENV_DB,
    StoreCore,
    absolute_target,
    resolve_path,
    retrying,
)
from tracker.log.designs import Designs
from tracker.log.dialect import (  # noqa: F401 (re-exported: callers use store.py only)
    BUSY_TIMEOUT_MS,
    data_version,
    display_name,
    is_url,
    log_error,
)
from tracker.log.imports import ImportBookkeeping
from tracker.log.meta import MetaRows, ModelRows
from tracker.log.migrations import MIGRATIONS, SCHEMA_VERSION  # noqa: F401 (re-exported for tests and the CLI)
from tracker.log.pgpool import drop_schema, new_schema, with_schema  # noqa: F401 (re-exported for tests, benchmark)
from tracker.log.records import Records
from tracker.log.review_reads import ReviewReads
from tracker.log.schema import (  # noqa: F401 (re-exported: callers import them from here)
    COPY_ORDER,
    CURRENT,
    DEFAULT_PLANT_KEY,
    KEYS,
    TABLE_COLUMNS,
)
from tracker.log.tables import Tables
from tracker.log.totals import RunningTotals
from tracker.log.totals_sql import (  # noqa: F401 (re-exported for the tests of the running totals)
    EARLIEST_DAY,
    TOTALS_TABLES,
    _totals_from,
)
from tracker.log.users import UserRows


class Store(Tables, Designs, Records, ReviewReads, RunningTotals, ImportBookkeeping, MetaRows, ModelRows,
            UserRows, ActionRows, CastingRows, Maintenance, StoreCore):
    """One open connection to the log.

    ``Store(target)`` opens (creating and migrating when needed) the log in an
    SQLite file or, for a ``postgresql://`` URL, on a PostgreSQL server; use it
    as a context manager so the connection is closed. ``path`` is the target
    as given (a URL keeps its password: print ``name``, which masks it).
    Its methods come from one class per family of tables (see the module's
    docstring); the state they share is :class:`tracker.log.core.StoreCore`'s.
    """
