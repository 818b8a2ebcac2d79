"""Team (admins only): the accounts, the audit, and whether the dashboard is served safely."""

from __future__ import annotations

import streamlit as st

from dashboard import access, common
from tracker.log import accounts as auth
from tracker.views import team as views


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
        users = views.users_rows(store)
        audit = views.audit_rows(store)
    st.subheader("Accounts")
    st.dataframe(users, hide_index=True, width="stretch", key="users_table")
    st.caption(f"A user is locked for {auth.LOCK_MINUTES} minutes after {auth.LOCK_AFTER_FAILURES} wrong "
               "passwords in a row; `pourback user passwd NAME` sets a new password and lifts the lock.")
    st.subheader("Roles")
    st.dataframe(views.roles_rows(), hide_index=True, width="stretch", key="roles_table")
    st.subheader("Audit (newest first)")
    st.dataframe(audit, hide_index=True, width="stretch", key="audit_table")
    st.caption(f"The last {views.AUDIT_SHOWN} entries; `pourback audit --since DATE` prints them all.")


main()
