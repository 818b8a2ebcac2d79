"""The review's actions as a display table, for the dashboard's review page and
pattern file and for the printable pack (:mod:`tracker.views.pack`)."""

from __future__ import annotations

import pandas as pd

ACTION_COLUMNS = {"id": "no.", "pattern": "pattern", "text": "what", "owner": "owner", "due": "due",
                  "status": "status", "created_by": "added by", "done_at": "done (UTC)", "done_by": "done by",
                  "note": "note"}
OPEN_COLUMNS = ["no.", "pattern", "what", "owner", "due", "status", "added by"]


def actions_table(actions: list[dict], done: bool = True) -> pd.DataFrame:
    """Actions (:func:`tracker.log.actions.list_actions`) with display labels, by due date;
    ``done`` False keeps the columns of open actions only."""
    cols = list(ACTION_COLUMNS.values()) if done else OPEN_COLUMNS
    if not actions:
        return pd.DataFrame(columns=cols)
    t = pd.DataFrame(actions)[list(ACTION_COLUMNS)].rename(columns=ACTION_COLUMNS)
    t["done (UTC)"] = t["done (UTC)"].map(lambda v: v.replace("T", " ")[:16] if isinstance(v, str) else v)
    return t[cols].reset_index(drop=True)


def action_label(action: dict) -> str:
    """One line naming an action in a picker: "3 · P-1017 · check R3 neck (M. Lopez, due 2026-12-11)"."""
    text = action["text"] if len(action["text"]) <= 60 else action["text"][:59] + "…"
    return f"{action['id']} · {action['pattern']} · {text} ({action['owner']}, due {action['due']})"
