"""Log results, at the bench: correct or withdraw a record, and enter a new lot.

Both write through the library functions the command line uses
(``correct_inspection`` as ``pourback correct``; ``log_lot`` checks a lot with the
lots import's own validator), as the signed-in user, for the roles that may log.
"""

from __future__ import annotations

import datetime as dt

import pandas as pd
import streamlit as st

from dashboard import access, common
from tracker.log.ingest import DEFECTS, RESULTS, XRAY_CATEGORIES, correct_inspection, log_lot
from tracker.views import log_results as views

XRAY = "xray"
SEVERITIES = [1, 2, 3, 4, 5]
WHAT = {"correct": "correct it", "withdraw": "withdraw it (entered in error)"}


def _blank(v):
    """None for a stored blank (None, NaN, "")."""
    return None if v is None or v == "" or (isinstance(v, float) and pd.isna(v)) else v


def _who(key: str) -> str:
    signed_in = access.session()
    return signed_in.user if signed_in is not None else (st.session_state.get(key) or "").strip()


def show_message(message_key: str, after_refusal=None) -> None:
    """The (kind, text) a form left under ``message_key``, shown once; ``after_refusal(text)``
    runs after a refusal is shown (a hint where to go next)."""
    message = st.session_state.pop(message_key, None)
    if not message:
        return
    kind, what = message
    if kind == "success":
        st.success(what)
    elif kind == "error":
        st.error(what)
    else:
        common.show_error(what)
        if after_refusal is not None:
            after_refusal(what)


def hint_after(exc: Exception) -> None:
    """Under a record refused for the lot's totals: an earlier record may be the wrong one."""
    if getattr(exc, "field", None) == "quantity" and "were poured" in str(exc):
        st.caption("If a record logged earlier on this lot is wrong (all castings logged as accepted, then a "
                   "reject found), correct its quantity or withdraw it under **Correct or withdraw a record** "
                   "below, then save this result again.")


# --- correct or withdraw ------------------------------------------------------------------

def _apply(rid: int, what: str, rec: dict) -> None:
    """Button callback: correct or withdraw record ``rid`` through correct_inspection."""
    s = st.session_state
    by = _who("fix_by")
    if not by:
        s["fix_message"] = ("error", "Name the person correcting the record: the log keeps who did it.")
        return
    if what == "withdraw":
        changes: dict = {"void": True}
    else:
        key = f"fix_{rid}_"
        fields = [f for f in views.CORRECTABLE if rec["method"] == XRAY or f not in ("xray_category", "severity")]
        changes = views.correction_changes(rec, {f: s.get(key + f) for f in fields})
        if not changes:
            s["fix_message"] = ("error", f"Nothing to correct: record {rid} already holds these values. "
                                         "Change a field, or withdraw the record.")
            return
    try:
        with common.open_store() as store:
            new = correct_inspection(store, rid, changes, by=by, reason=s.get("fix_reason") or "")
    except common.PourbackError as exc:
        s["fix_message"] = ("exception", exc)
        return
    common.forget()
    s["fix_reason"] = ""
    done = "withdrawn" if what == "withdraw" else "corrected"
    s["fix_message"] = ("success", f"Record {rid} {done}: record {new} stands in its place; record {rid} stays "
                                   "in the history with who, when and why.")


def _fields(rid: int, rec: dict) -> None:
    """The record's correctable fields, starting from its stored values."""
    key = f"fix_{rid}_"  # keys per record: a record picked anew starts from its own values
    c1, c2, c3 = st.columns([1, 2, 1])
    c1.number_input("Castings (corrected quantity)", min_value=1, step=1, value=int(rec["quantity"]),
                    key=key + "quantity")
    c2.radio("Accept, reject or rework (corrected)", RESULTS, index=RESULTS.index(rec["result"]), horizontal=True,
             key=key + "result")
    c3.date_input("Corrected inspection date", value=dt.date.fromisoformat(rec["inspected_on"]),
                  max_value=dt.date.today(), format="YYYY-MM-DD", key=key + "inspected_on")
    st.pills("Corrected defect", DEFECTS, default=_blank(rec["defect"]), key=key + "defect",
             format_func=lambda d: d.replace("_", " "))
    zones = common.load("zone_options", rec["pattern"])
    zone = _blank(rec["zone"])
    st.pills(f"Corrected zone ({common.md_escape(rec['pattern'])})", zones,
             default=zone if zone in zones else None, key=key + "zone", disabled=not zones)
    if rec["method"] == XRAY:
        c1, c2 = st.columns([2, 1])
        c1.pills("Corrected radiography category", XRAY_CATEGORIES, default=_blank(rec["xray_category"]),
                 key=key + "xray_category")
        sev = _blank(rec["severity"])
        c2.pills("Corrected severity level (1-5)", SEVERITIES, default=None if sev is None else int(sev),
                 key=key + "severity")
    st.text_input("Note (corrected)", value=_blank(rec["notes"]) or "", max_chars=2000, key=key + "notes")


def correct_form() -> None:
    """Correct or withdraw a current record of the lot picked in the form above."""
    if not access.can("log"):
        return  # the record form above said why
    lot = st.session_state.get("lot")
    if not lot:
        return
    st.subheader("Correct or withdraw a record")
    records = common.load("lot_records", lot)
    if records.empty:
        st.caption(f"Lot {common.md_escape(lot)} has no current record to correct.")
        show_message("fix_message")
        return
    st.caption(f"The current records of lot {common.md_escape(lot)} (the lot picked above). A correction is a new "
               "record in the old one's place; the old one stays in the history with who, when and why.")
    with st.container(border=True):
        labels = dict(zip(records["id"].astype(int), records["label"], strict=False))
        rid = st.selectbox("Record (newest first)", list(labels), format_func=labels.get, key="fix_record")
        rec = records.loc[records["id"] == rid].iloc[0].to_dict()
        what = st.radio("What to do", list(WHAT), horizontal=True, format_func=WHAT.get, key="fix_what")
        # A form: the fields are sent together with the button, not one rerun per field.
        with st.form("fix_form", border=False, enter_to_submit=False):
            if what == "correct":
                _fields(int(rid), rec)
            c1, c2 = st.columns(2)
            c1.text_input("Reason (required; kept with the record)", max_chars=500, key="fix_reason")
            access.author_field(c2, "Your name (required; recorded as who corrected it)", "fix_by")
            st.form_submit_button("Save correction" if what == "correct" else "Withdraw record",
                                  on_click=_apply, args=(int(rid), what, rec))
    show_message("fix_message")


# --- a new lot ----------------------------------------------------------------------------

def _add_lot(system: str) -> None:
    """Submit callback: store the lot through log_lot, then pick it in the record form."""
    s = st.session_state
    s["new_lot_open"] = True
    by = _who("new_lot_by")
    if not by:
        s["lot_message"] = ("error", "Name the person entering the lot: the log keeps who did it.")
        return
    record = views.lot_form_record({
        "lot": s.get("new_lot_code"), "pattern": s.get("new_lot_pattern"), "poured_on": s.get("new_lot_poured_on"),
        "heat": s.get("new_lot_heat"), "molds": s.get("new_lot_molds"), "pour_temp_c": s.get("new_lot_temp")},
        system)
    try:
        with common.open_store() as store:
            res = log_lot(store, record, by=by, source="dashboard")
    except common.PourbackError as exc:
        s["lot_message"] = ("exception", exc)
        return
    common.forget()
    picked = record["lot"] in set(common.load("lot_options")["lot"])  # the newest lots only
    if picked:
        s["lot"] = record["lot"]  # the record form opens on the new lot
    warn = (" Note: " + "; ".join(res.warnings) + ".") if res.warnings else ""
    where = ("it is picked in the form above" if picked else
             "it was poured before the newest lots the form lists: log its results in an inspections file")
    s["lot_message"] = ("success", f"Saved lot {common.md_escape(record['lot'])} of pattern "
                                   f"{common.md_escape(record['pattern'])}; {where}.{warn}")
    for key in ("new_lot_code", "new_lot_heat", "new_lot_molds", "new_lot_temp"):
        s[key] = None if key in ("new_lot_molds", "new_lot_temp") else ""


def lot_form() -> None:
    """A new lot typed in, checked as a row of a lots file."""
    if not access.can("log"):
        return
    patterns = common.load("pattern_options")
    if patterns.empty:
        return  # the start message says to import patterns first
    system = common.unit_system()
    # Open once a lot was saved or refused here, and kept open: a changed ``expanded`` would fold it.
    opened = bool(st.session_state.get("new_lot_open"))
    with st.expander("Enter a new lot (poured, not yet in the log)", expanded=opened):
        labels = dict(zip(patterns["pattern"], patterns["label"], strict=False))
        form = st.form("new_lot", border=False, enter_to_submit=False)
        c1, c2 = form.columns([1, 2])
        c1.text_input("Lot", max_chars=64, key="new_lot_code")
        c2.selectbox("Pattern", list(labels), index=None, format_func=labels.get, key="new_lot_pattern",
                     placeholder="Type to search")
        c1, c2, c3, c4 = form.columns(4)
        c1.date_input("Poured on", value=dt.date.today(), max_value=dt.date.today(), format="YYYY-MM-DD",
                      key="new_lot_poured_on")
        c2.text_input("Heat", max_chars=64, key="new_lot_heat")
        c3.number_input("Molds", value=None, step=1, key="new_lot_molds")
        c4.number_input(f"Pour temperature ({common.unit('pour_temp_c')})", value=None, step=5.0,
                        key="new_lot_temp", help="Optional.")
        access.author_field(form, "Your name (required; recorded as who entered it)", "new_lot_by")
        form.form_submit_button("Save lot", on_click=_add_lot, args=(system,))
        st.caption("Checked as a row of a lots file: castings poured = molds × the pattern's castings per mold.")
        show_message("lot_message")
