"""Accounts, dashboard sessions and the audit: their rows (the rules live in
:mod:`tracker.log.accounts`)."""

from __future__ import annotations

import pandas as pd

from tracker.log.core import StoreCore


class UserRows(StoreCore):
    """The users, sessions and audit tables."""

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

    def count_failed_sign_in(self, name: str, at: str, lock_after: int, until: str) -> tuple[int, bool] | None:
        """Count a wrong password for ``name`` and lock the account once the count
        reaches ``lock_after`` (until ``until``, the count starting again), in one
        statement, so simultaneous sign-ins cannot both read the count before
        either writes it. None when the account is locked at ``at`` (nothing counted);
        else (the failures in a row, whether this one locked it)."""
        row = self.conn.execute(
            "UPDATE users SET "
            "locked_until = CASE WHEN failed_sign_ins + 1 >= ? THEN ? ELSE NULL END, "
            "failed_sign_ins = CASE WHEN failed_sign_ins + 1 >= ? THEN 0 ELSE failed_sign_ins + 1 END "
            "WHERE name = ? AND enabled = 1 AND (locked_until IS NULL OR locked_until <= ?) "
            "RETURNING failed_sign_ins, locked_until", (lock_after, until, lock_after, name, at)).fetchone()
        if row is None:
            return None
        locked = row[1] is not None
        return (lock_after if locked else int(row[0])), locked

    def open_sign_in(self, name: str, password_hash: str, at: str, new_hash: str | None = None) -> bool:
        """Clear the failure count of ``name`` as its right password signs in, in one
        statement that also checks the account is enabled, unlocked at ``at`` and
        still has ``password_hash``; False (nothing changed) when it is not."""
        row = self.conn.execute(
            "UPDATE users SET failed_sign_ins = 0, locked_until = NULL, last_sign_in = ?, "
            "password_hash = ? WHERE name = ? AND enabled = 1 AND password_hash = ? "
            "AND (locked_until IS NULL OR locked_until <= ?) RETURNING name",
            (at, new_hash or password_hash, name, password_hash, at)).fetchone()
        return row is not None

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
