"""The review's actions on a page: the table, and for the roles that may, a form to
add one and a form to mark one done (the same library calls as `pourback action`)."""

from __future__ import annotations

import datetime as dt

import streamlit as st

from dashboard import access, common
from tracker.log.actions import MAX_OWNER, MAX_TEXT, add_action, close_action
from tracker.views.actions import action_label, actions_table


def section(pattern: str | None = None, key: str = "review") -> None:
    """Open actions (every pattern's, or ``pattern``'s with its done ones too), and the forms."""
    st.subheader("Actions" if pattern else "Open actions")
    done = st.session_state.pop(f"{key}_action_done_msg", None)
    if done:
        st.success(done)
    rows = common.load("actions", open_only=pattern is None, pattern=pattern)
    if rows:
        st.dataframe(actions_table(rows, done=pattern is not None), hide_index=True, width="stretch",
                     key=f"{key}_actions_table", placeholder="")
    else:
        st.caption("No " + ("action on this pattern yet." if pattern else "open action."))
    if not access.can("actions"):
        st.caption(access.not_offered("actions"))
        return
    c1, c2 = st.columns(2)
    with c1.expander("Add an action"):
        _add_form(pattern, key)
    open_rows = [r for r in rows if r["status"] != "done"]
    if open_rows:
        with c2.expander("Mark an action done"):
            _done_form(open_rows, key)


def _add_form(pattern: str | None, key: str) -> None:
    with st.form(f"{key}_add_action", clear_on_submit=True, border=False):
        if pattern is None:
            codes = common.load("pattern_options")["pattern"].tolist()
            flagged = common.flagged_patterns()
            picked = st.selectbox("Pattern", codes, index=codes.index(flagged[0]) if flagged and flagged[0] in codes
                                  else 0, key=f"{key}_action_pattern")
        else:
            picked = pattern
        text = st.text_input("What is to be done", max_chars=MAX_TEXT, key=f"{key}_action_text")
        owner = st.text_input("Owner", max_chars=MAX_OWNER, key=f"{key}_action_owner")
        due = st.date_input("Due", value=dt.date.today() + dt.timedelta(days=7), format="YYYY-MM-DD",
                            key=f"{key}_action_due")
        by = access.author_field(st, "Your name (recorded as who added it)", f"{key}_action_by")
        if not st.form_submit_button("Add the action"):
            return
    _write(key, lambda store: add_action(store, picked, text, owner, due, by=by or None),
           lambda row: f"Added action {row['id']} on {row['pattern']} for {row['owner']}, due {row['due']}.")


def _done_form(open_rows: list[dict], key: str) -> None:
    with st.form(f"{key}_done_action", clear_on_submit=True, border=False):
        ids = [r["id"] for r in open_rows]
        labels = {r["id"]: action_label(r) for r in open_rows}
        picked = st.selectbox("Action", ids, format_func=labels.get, key=f"{key}_done_id")
        note = st.text_input("Note (optional)", max_chars=MAX_TEXT, key=f"{key}_done_note")
        by = access.author_field(st, "Your name (recorded as who closed it)", f"{key}_done_by")
        if not st.form_submit_button("Mark it done"):
            return
    _write(key, lambda store: close_action(store, picked, note or None, by=by or None),
           lambda row: f"Action {row['id']} on {row['pattern']} marked done.")


def _write(key: str, write, said) -> None:
    """Run ``write(store)``; a refusal is shown where it happened, a success is said
    (``said(row)``) once the page has been drawn again on the changed log."""
    row = None
    with common.guard(), common.open_store() as store:
        row = write(store)
    if row is None:  # refused: the error is shown
        return
    common.forget()
    st.session_state[f"{key}_action_done_msg"] = common.md_escape(said(row))
    st.rerun()
