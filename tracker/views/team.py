"""The Team page's data: the accounts, the roles and the audit as display rows
(see :mod:`tracker.views.common` for the conventions)."""

from __future__ import annotations

from tracker.log import accounts as auth
from tracker.log.store import Store

AUDIT_SHOWN = 500  # the newest entries the page lists; `pourback audit --since DATE` prints them all


def users_rows(store: Store) -> list[dict]:
    """One row per account: name, role, enabled, locked now, last sign-in and
    password set (UTC), and who added it."""
    return [{"user": u["name"], "role": u["role"], "enabled": u["enabled"], "locked now": u["locked"],
             "last sign-in (UTC)": u["last_sign_in"], "password set (UTC)": u["password_set_at"],
             "added by": u["created_by"]} for u in auth.list_users(store)]


def roles_rows() -> list[dict]:
    """One row per role and what it may do."""
    return [{"role": r["role"], "may": r["may"]} for r in auth.role_table()]


def audit_rows(store: Store, limit: int = AUDIT_SHOWN) -> list[dict]:
    """The newest ``limit`` audit entries, newest first."""
    audit = auth.audit_log(store)
    return [{"at (UTC)": r["at"], "event": r["event"], "by": r["user"], "account": r["subject"],
             "detail": r["detail"], "via": r["via"]} for r in reversed(audit[-limit:])]
