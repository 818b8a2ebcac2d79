"""The log's key-value settings (``meta``) and its fitted models."""

from __future__ import annotations

import datetime as dt

from tracker.log import accounts as auth
from tracker.log.core import StoreCore


class MetaRows(StoreCore):
    """The ``meta`` table: settings kept in the log."""

    def get_meta(self, key: str, default: str | None = None) -> str | None:
        row = self.conn.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return default if row is None else row[0]

    def set_meta(self, key: str, value: str) -> None:
        auth.require(self, "settings")
        with self.write():
            self.conn.execute("INSERT INTO meta (key, value) VALUES (?, ?) "
                              "ON CONFLICT(key) DO UPDATE SET value = excluded.value", (key, value))


class ModelRows(StoreCore):
    """The ``models`` table: the fitted suggestion models, newest last."""

    def save_model(self, blob: bytes, rows: int, castings: int, data_until: str | None) -> int:
        auth.require(self, "fit_model")
        with self.write():
            self.conn.execute("INSERT INTO models (fitted_at, rows, castings, data_until, blob) "
                              "VALUES (?, ?, ?, ?, ?)",
                              (dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
                               rows, castings, data_until, blob))
            return self.last_insert_id()

    def latest_model(self) -> dict | None:
        return self._row("SELECT id, fitted_at, rows, castings, data_until, blob FROM models ORDER BY id DESC LIMIT 1")
