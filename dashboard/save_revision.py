"""The "save as the next revision" action of the what-if and of each suggestion:
the change stored as the pattern's next riser revision, every other riser carried
over, through the same library call as `pourback what-if --save-revision`."""

from __future__ import annotations

import datetime as dt

import streamlit as st

from dashboard import access, common
from tracker.advice.next_revision import save_suggestion, save_what_if
from tracker.log.ingest.next_revision import next_code

_SAVED = "saved_revision_message"


def _save(kind: str, item: dict, key: str) -> None:
    """Button callback: save ``item`` (a what-if result or a suggestion), keep the outcome for the page."""
    s = st.session_state
    signed_in = access.session()
    by = signed_in.user if signed_in is not None else (s.get(f"{key}_by") or "").strip()
    if not by:
        s[_SAVED] = (key, "error", "Name who saves the revision: the audit keeps who saved it.")
        return
    day = s.get(f"{key}_from")
    save = save_what_if if kind == "what_if" else save_suggestion
    try:
        with common.open_store() as store:
            done = save(store, item, s.get(f"{key}_code", ""), day.isoformat() if day else "", by=by)
    except common.PourbackError as exc:
        s[_SAVED] = (key, "exception", exc)
        return
    common.forget()
    kept = done["carried_over"]
    s[_SAVED] = (key, "success", common.md_escape(
        f"Saved revision {done['revision']} of {done['pattern']}, in effect from {done['effective_from']}: "
        f"changed {', '.join(done['changed'])}; "
        + (f"carried over {', '.join(kept)} unchanged." if kept else "no other riser to carry over.")))


def announce() -> None:
    """At the top of the page: a revision just saved, as a toast, seen at once
    (the page then works out its figures again on the changed log)."""
    message = st.session_state.get(_SAVED)
    if message and message[1] == "success":
        st.toast(message[2], icon=":material/check_circle:", duration="long")


def save_form(kind: str, item: dict, key: str, offer: bool = True) -> None:
    """The action under a what-if (``kind`` "what_if") or a suggestion ("suggestion"),
    for the roles that may change designs; the others are told why it is missing.
    Without ``offer`` (a what-if that changes nothing) only the outcome of a save just made is shown."""
    message = st.session_state.get(_SAVED)
    if message and message[0] == key:
        st.session_state.pop(_SAVED)
        _, how, what = message
        {"success": st.success, "error": st.error}.get(how, common.show_error)(what)
    if not offer:
        return
    if not access.can("design"):
        st.caption(access.not_offered("design"))
        return
    with st.container(border=True, key=f"{key}_box"):
        st.markdown("**Save as the next revision**")
        st.caption(common.md_escape(
            f"Stores the change as a new riser revision of {item['pattern']} after revision {item['revision']}: "
            f"{', '.join(item['changed_risers'])} as shown, every other riser carried over as it is. "
            "The save is recorded in the audit."))
        c1, c2 = st.columns(2)
        st.session_state.setdefault(f"{key}_code", next_code(item["revision"]))
        c1.text_input("New revision code", key=f"{key}_code", max_chars=64)
        c2.date_input("In effect from", key=f"{key}_from", value=dt.date.today(), format="YYYY-MM-DD")
        access.author_field(st, "Your name (required; recorded in the audit)", f"{key}_by")
        st.button("Save as the next revision", key=f"{key}_save", on_click=_save, args=(kind, item, key))
