"""Actions decided at the weekly review: what is to be done on a pattern, by whom
and by when, and when it was done.

An action is added (``add_action``) and later closed (``close_action``) with an
optional note; it is never deleted or rewritten otherwise. Both writes are
role-checked (the ``actions`` write of :mod:`tracker.log.accounts`) and leave an
entry in the audit, in the same transaction as the row. The SQL is in
:class:`ActionRows`, mixed into :class:`tracker.log.store.Store`.
"""

from __future__ import annotations

import datetime as dt

import pandas as pd

from tracker.errors import BadInput, NotFound
from tracker.log import accounts as auth
from tracker.log.core import StoreCore

MAX_TEXT = 500      # characters of an action's text or closing note
MAX_OWNER = 80      # characters of an owner's name
ACTION_COLUMNS = ("id", "pattern", "text", "owner", "due", "created_at", "created_by", "done_at",
                  "done_by", "note")


class ActionRows(StoreCore):
    """The ``actions`` table."""

    def insert_action(self, pattern: str, text: str, owner: str, due: str, at: str, by: str | None) -> int:
        self.conn.execute("INSERT INTO actions (pattern, text, owner, due, created_at, created_by) "
                          "VALUES (?, ?, ?, ?, ?, ?)", (pattern, text, owner, due, at, by))
        return self.last_insert_id()

    def action_row(self, action_id: int) -> dict | None:
        return self._row(f"SELECT {', '.join(ACTION_COLUMNS)} FROM actions WHERE id = ?", (int(action_id),))

    def actions_frame(self, open_only: bool = False, pattern: str | None = None) -> pd.DataFrame:
        """Actions by due date (then id); ``open_only`` leaves out the closed ones."""
        where, params = [], []
        if open_only:
            where.append("done_at IS NULL")
        if pattern is not None:
            where.append("pattern = ?")
            params.append(pattern)
        return self._frame(f"SELECT {', '.join(ACTION_COLUMNS)} FROM actions"
                           + (" WHERE " + " AND ".join(where) if where else "") + " ORDER BY due, id", params)

    def mark_action_done(self, action_id: int, at: str, by: str | None, note: str | None) -> int:
        return self.conn.execute("UPDATE actions SET done_at = ?, done_by = ?, note = ? "
                                 "WHERE id = ? AND done_at IS NULL", (at, by, note, int(action_id))).rowcount


# --- checks -----------------------------------------------------------------------------

def _one_line(field: str, value, limit: int, required: bool = True) -> str | None:
    text = "" if value is None else str(value).strip()
    if not text:
        if required:
            raise BadInput(field, value, "must not be empty")
        return None
    if any(ch in text for ch in "\r\n\x00"):
        raise BadInput(field, value, "must be one line (no line breaks)")
    if len(text) > limit:
        raise BadInput(field, value, f"must be at most {limit} characters (got {len(text)})")
    return text


def check_due(due) -> str:
    """The due date as an ISO day (YYYY-MM-DD)."""
    if isinstance(due, dt.date):
        return due.isoformat()
    try:
        return dt.date.fromisoformat(str(due).strip()).isoformat()
    except ValueError:
        raise BadInput("due", due, "give a date as YYYY-MM-DD, e.g. 2026-12-11") from None


def _now() -> str:
    return dt.datetime.now(dt.UTC).isoformat(timespec="seconds")


# --- the actions ------------------------------------------------------------------------

def add_action(store, pattern: str, text: str, owner: str, due, by: str | None = None) -> dict:
    """Add an open action on ``pattern`` (which must be in the log), due on ``due`` (a
    date), for ``owner``; audited as ``action_added``. Returns the stored action."""
    what = str(_one_line("text", text, MAX_TEXT))
    owner_name = str(_one_line("owner", owner, MAX_OWNER))
    day = check_due(due)
    store.pattern(pattern)
    who = auth.author(store, "actions", by)
    at = _now()
    with store.write():
        action_id = store.insert_action(pattern, what, owner_name, day, at, who)
        store.insert_audit(at, "action_added", who, f"action {action_id}",
                           f"{pattern}: {what} (owner {owner_name}, due {day})", auth._via(store))
    return action(store, action_id)


def close_action(store, action_id: int, note: str | None = None, by: str | None = None) -> dict:
    """Mark action ``action_id`` done, with an optional ``note``; audited as ``action_done``.
    An action already done is refused, naming who closed it and when."""
    note = _one_line("note", note, MAX_TEXT, required=False)
    row = action(store, action_id)
    if row["done_at"]:
        raise BadInput("action", action_id, f"was already closed on {row['done_at'][:10]} by "
                                            f"{row['done_by'] or 'someone unnamed'}")
    who = auth.author(store, "actions", by)
    at = _now()
    with store.write():
        if not store.mark_action_done(action_id, at, who, note):  # closed meanwhile by another writer
            raise BadInput("action", action_id, "was closed by someone else a moment ago")
        store.insert_audit(at, "action_done", who, f"action {action_id}",
                           f"{row['pattern']}: {row['text']}" + (f"; note: {note}" if note else ""),
                           auth._via(store))
    return action(store, action_id)


def action(store, action_id: int) -> dict:
    """One action with its ``status`` (see :func:`list_actions`)."""
    try:
        key = int(action_id)
    except (TypeError, ValueError):
        raise BadInput("action", action_id, "give the action's number (see `pourback action list`)") from None
    row = store.action_row(key)
    if row is None:
        raise NotFound("action", key, "see `pourback action list` for the actions")
    return _with_status(row, dt.date.today())


def _with_status(row: dict, today: dt.date) -> dict:
    if row["done_at"]:
        return {**row, "status": "done"}
    return {**row, "status": "overdue" if dt.date.fromisoformat(row["due"]) < today else "open"}


def list_actions(store, open_only: bool = False, pattern: str | None = None,
                 today: dt.date | None = None) -> list[dict]:
    """The actions by due date, each with ``status``: "open", "overdue" (open and past its
    due date, as of ``today``) or "done". ``open_only`` keeps the open and overdue ones."""
    frame = store.actions_frame(open_only=open_only, pattern=pattern)
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    day = today or dt.date.today()
    return [_with_status(r, day) for r in rows]
