"""Log results: record one inspection result, import a file, see the latest records.

The bench form is built for one result at a time with few clicks: method,
result, defect, zone, category and severity are one click each; radiography
category and severity appear only for x-ray; after a save the result-specific
fields are cleared and lot, date, inspector and name are kept.
"""

from __future__ import annotations

import datetime as dt
import pathlib
import re
import tempfile

import streamlit as st

from dashboard import access, common, log_fixes
from tracker import units
from tracker.log.accounts import MAX_UPLOAD_MB, TABLE_ACTION
from tracker.log.ingest import DEFECTS, KINDS, METHODS, RESULTS, XRAY_CATEGORIES, import_file, log_inspection
from tracker.views import log_results as views

XRAY = "xray"
KIND_HELP = {
    "patterns": "pattern, description, alloy, casting_weight_kg, castings_per_mold, metal_cost_per_kg",
    "zones": "pattern, zone, volume_cm3, cooling_area_cm2 (+ thickness_mm, length_mm, required_xray_level)",
    "sleeves": "sleeve, kind, inner_diameter_mm, height_mm, modulus_factor, feeding_efficiency",
    "risers": "pattern, revision, effective_from, riser, zone, placement, top, diameter_mm, height_mm",
    "lots": "lot, pattern, poured_on, heat, molds (+ pour_temp_c)",
    "inspections": "lot, inspected_on, method, quantity, result (+ defect, zone, xray_category, ...)",
}


def columns_help(kind: str, system: str) -> str:
    """KIND_HELP's column list with each unit-bearing column named in ``system``
    (``diameter_in`` for ``diameter_mm`` in us)."""
    return re.sub(r"[a-z_0-9]+", lambda m: units.column_name(m.group(0), system), KIND_HELP[kind])


# Cleared after each save: what belongs to one result, not to the inspection session.
RESULT_FIELDS = {"result": RESULTS[0], "defect": None, "zone": None, "xray_category": None, "severity": None,
                 "quantity": 1, "serial": "", "notes": ""}
SEVERITIES = [1, 2, 3, 4, 5]


def _clear_result_fields() -> None:
    for key, value in RESULT_FIELDS.items():
        st.session_state[key] = value


def _save(lot: str, castings: int) -> None:
    """Save button callback: write the record, then clear the result-specific fields."""
    s = st.session_state
    signed_in = access.session()
    by = signed_in.user if signed_in is not None else (s.get("recorded_by") or "").strip()
    if not by:
        s["form_message"] = ("error", "Name the person logging the result: the record keeps who logged it.")
        return
    xray = s.get("method") == XRAY
    record = views.form_record({
        "lot": lot, "inspected_on": s.get("inspected_on"), "method": s.get("method"),
        "quantity": int(s.get("quantity") or 0), "result": s.get("result"), "defect": s.get("defect"),
        "zone": s.get("zone"), "xray_category": s.get("xray_category") if xray else None,
        "severity": s.get("severity") if xray else None, "serial": s.get("serial"),
        "inspector": s.get("inspector"), "notes": s.get("notes")})
    try:
        with common.open_store() as store:
            rid = log_inspection(store, record, by=by, source="dashboard")
    except common.PourbackError as exc:
        s["form_message"] = ("exception", exc)
        return
    common.forget()
    n = record["quantity"]
    s["form_message"] = ("success", f"Saved record {rid}: lot {common.md_escape(lot)}, {n} casting"
                                    f"{'s' if n != 1 else ''}, {record['result']}"
                                    + (f" ({record['defect']})" if record["defect"] else "") + ".")
    _clear_result_fields()


def accounting(lot: str, method: str) -> None:
    """How many castings of the lot each method has accounted for, and how many are left."""
    a = common.load("lot_accounting", lot)
    table = a["methods"]
    shown = table[(table["accounted (castings)"] > 0) | (table["method"] == method)]
    parts = [f"**{r['method']}** {r['accounted (castings)']:,} of {a['castings']:,}, "
             f"{r['left (castings)']:,} left" for r in shown.to_dict("records")]
    st.caption(f"Lot {common.md_escape(lot)}: {a['castings']:,} castings poured. Accounted for by method: "
               + "; ".join(parts) + f". Rejected so far: {a['rejected']:,} ({a['rejects_left']:,} more "
               "can be rejected).")


def _defaults() -> None:
    """Start values of the form's fields (set once; a widget then keeps its own state)."""
    for key, value in {**RESULT_FIELDS, "method": METHODS[0], "inspected_on": dt.date.today()}.items():
        st.session_state.setdefault(key, value)


def record_form(state: dict) -> None:
    st.subheader("Record an inspection result")
    if not access.can("log"):
        st.caption(access.not_offered("log"))
        return
    _defaults()
    lots = common.load("lot_options")
    if lots.empty:
        st.caption("No lots in the log yet: import patterns, zones, sleeves, risers and lots below, "
                   "then record their inspection results here.")
        return
    labels = dict(zip(lots["lot"], lots["label"], strict=False))
    with st.container(border=True):
        c1, c2 = st.columns([3, 1])
        lot = c1.selectbox("Lot (newest first; type to search)", list(labels), format_func=labels.get,
                           key="lot")
        c2.date_input("Inspected on", key="inspected_on", max_value=dt.date.today(), format="YYYY-MM-DD")
        row = lots.loc[lots["lot"] == lot].iloc[0]
        pattern, castings = row["pattern"], int(row["castings"])
        method = st.radio("Method", METHODS, horizontal=True, key="method",
                          format_func=views.METHOD_WORDS.get)
        accounting(lot, method)
        c1, c2 = st.columns([2, 1])
        result = c1.radio("Result", RESULTS, horizontal=True, key="result")
        c2.number_input("Quantity (castings)", min_value=1, step=1, key="quantity")
        judged = result != "accept"
        st.pills("Defect (reject and rework)", DEFECTS, key="defect", disabled=not judged,
                 format_func=lambda d: d.replace("_", " "))
        zones = common.load("zone_options", pattern)
        st.pills(f"Zone of the casting ({common.md_escape(pattern)})", zones, key="zone",
                 disabled=not judged or not zones)
        if method == XRAY:
            c1, c2 = st.columns([2, 1])
            c1.pills("Radiography category", XRAY_CATEGORIES, key="xray_category",
                     help="Reference-radiograph category: A gas, B sand and slag, C shrinkage (CA-CD), "
                          "D cracks, E hot tears, F inserts, G mottling.")
            c2.pills("Severity level (1 least - 5)", SEVERITIES, key="severity")
        c1, c2 = st.columns(2)
        c1.text_input("Inspector", key="inspector", max_chars=100)
        access.author_field(c2, "Your name (required; recorded as who logged it)", "recorded_by")
        with st.expander("Serial and notes (optional)"):
            st.text_input("Casting serial", key="serial", max_chars=100)
            st.text_area("Notes", key="notes", max_chars=2000, height=80)
        st.button("Save record", type="primary", key="save", on_click=_save, args=(lot, castings))
    log_fixes.show_message("form_message", after_refusal=log_fixes.hint_after)


def upload_file() -> None:
    kinds = [k for k in KINDS if access.can(TABLE_ACTION[k])]
    if not kinds:
        return  # the record form above said why
    st.subheader("Import a file")
    st.caption("One bad row refuses the whole file and nothing is written; every refused row is "
               "listed with its row number (the header is row 1), column and reason.")
    c1, c2 = st.columns([1, 2])
    kind = c1.selectbox("What the file holds", kinds, index=kinds.index("inspections"), key="kind")
    c2.caption("Columns: " + columns_help(kind, common.unit_system()))
    upload = st.file_uploader(f"CSV (UTF-8) or Excel workbook (.xlsx), at most {MAX_UPLOAD_MB} MB",
                              type=["csv", "xlsx"], key="upload",
                              help=f"{MAX_UPLOAD_MB} MB holds about 70,000 CSV rows: more than a day's "
                                   "inspection and lot files. Import bigger files with `pourback import`.")
    by = access.author_field(st, "Your name (required; recorded with each imported record)", "import_by")
    if not st.button("Import file", key="import", disabled=upload is None):
        return
    if not by:
        st.error("Name the person importing the file: each record keeps who logged it.")
        return
    with common.guard(), tempfile.TemporaryDirectory(prefix="pourback-upload-") as tmp:
        path = pathlib.Path(tmp) / (pathlib.Path(upload.name).name or f"upload.{kind}.csv")
        path.write_bytes(upload.getvalue())
        with common.open_store() as store, st.status(f"Importing {kind} ...", expanded=False) as box:
            done = [0]

            def progress(rows: int) -> None:
                done[0] += rows
                box.update(label=f"Importing {kind}: {done[0]:,} rows checked ...")

            res = import_file(store, kind, path, by=by, progress=progress)
            box.update(label=f"Imported {kind}: {res.rows:,} rows", state="complete")
        common.forget()
        st.success(f"Imported {common.md_escape(res.file)}: {res.rows:,} rows read, {res.added:,} added, "
                   f"{res.skipped:,} already present.")
        for note in res.warnings[:20]:  # e.g. rows found from an earlier file, named with its import date
            st.warning(common.md_escape(note), icon=":material/warning:")


def latest(state: dict) -> None:
    st.subheader("Latest records")
    if state["counts"]["inspections"] == 0:
        st.caption("No inspection records yet.")
        return
    c1, c2 = st.columns([1, 1])
    n = c1.number_input("Records to show (newest first)", min_value=10, max_value=1000, value=50, step=10,
                        key="history_limit")
    full = c2.toggle("Show every column", key="history_all_columns",
                     help="x-ray category, severity, inspector, notes, when and from where it was recorded.")
    records = common.load("latest_records", limit=int(n), full=full)
    st.dataframe(records, hide_index=True, width="stretch", key="latest_records_table", placeholder="")
    common.download_csv(records, "Download these records (CSV)", "pourback-latest-records.csv",
                        key="download_latest_records")


def main() -> None:
    common.header("Log results", "Record inspection results per pour lot, import files, and check "
                                 "the latest records. Records are never overwritten: a correction or a "
                                 "withdrawal is a new record, and the old one stays in the history.")
    state = common.load("start_state")
    if not any(state["counts"].values()):
        common.start_message(state)
    record_form(state)
    log_fixes.lot_form()
    log_fixes.correct_form()
    st.divider()
    upload_file()
    st.divider()
    latest(common.load("start_state"))


main()
