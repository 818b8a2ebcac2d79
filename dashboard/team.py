"""Team (admins only): the accounts, the audit, and whether the dashboard is served safely."""

from __future__ import annotations

import streamlit as st

from dashboard import access, common
from tracker.log import accounts as auth


def main() -> None:
    common.header("Team", "Who may sign in, with which role, and the audit of sign-ins and account changes. "
                          "Accounts are added, given new passwords and disabled with `pourback user` on the "
                          "serving computer.")
    if not access.can("users"):
        st.caption(access.not_offered("users"))
        return
    if access.served_without_tls():
        st.warning(access.NO_TLS_TEXT, icon=":material/lock_open:")
    with common.open_store() as store:
        users = auth.list_users(store)
        audit = auth.audit_log(store)
    st.subheader("Accounts")
    st.dataframe([{"user": u["name"], "role": u["role"], "enabled": u["enabled"], "locked now": u["locked"],
                   "last sign-in (UTC)": u["last_sign_in"], "password set (UTC)": u["password_set_at"],
                   "added by": u["created_by"]} for u in users],
                 hide_index=True, width="stretch", key="users_table")
    st.caption(f"A user is locked for {auth.LOCK_MINUTES} minutes after {auth.LOCK_AFTER_FAILURES} wrong "
               "passwords in a row; `pourback user passwd NAME` sets a new password and lifts the lock.")
    st.subheader("Roles")
    st.dataframe([{"role": r["role"], "may": r["may"]} for r in auth.role_table()], hide_index=True,
                 width="stretch", key="roles_table")
    st.subheader("Audit (newest first)")
    st.dataframe([{"at (UTC)": r["at"], "event": r["event"], "by": r["user"], "account": r["subject"],
                   "detail": r["detail"], "via": r["via"]} for r in reversed(audit[-500:])],
                 hide_index=True, width="stretch", key="audit_table")
    st.caption("The last 500 entries; `pourback audit --since DATE` prints them all.")


main()
