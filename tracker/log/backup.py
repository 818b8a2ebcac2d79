"""Backups of the log, their restore, and its integrity check."""

from __future__ import annotations

import os
import pathlib
import sqlite3

import sqlite_utils

from tracker.errors import PourbackError
from tracker.log import accounts as auth
from tracker.log.core import StoreCore


class Maintenance(StoreCore):
    """Backing the log up and checking it."""

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
            tables = set(sqlite_utils.Database(src, recursive_triggers=False, execute_plugins=False).table_names())
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
