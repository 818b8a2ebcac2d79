"""Log results: record one inspection result, import a file, see the latest records."""

from __future__ import annotations

import datetime as dt
import pathlib
import tempfile

import streamlit as st

from dashboard import access, common
from tracker.auth import MAX_UPLOAD_MB, TABLE_ACTION
from tracker import views
from tracker.ingest import DEFECTS, KINDS, METHODS, RESULTS, XRAY_CATEGORIES, import_file, log_inspection

NONE = views.NONE
KIND_HELP = {
    "patterns": "pattern, description, alloy, casting_weight_kg, castings_per_mold, metal_cost_per_kg",
    "zones": "pattern, zone, volume_cm3, cooling_area_cm2 (+ thickness_mm, length_mm, required_xray_level)",
    "sleeves": "sleeve, kind, inner_diameter_mm, height_mm, modulus_factor, feeding_efficiency",
    "risers": "pattern, revision, effective_from, riser, zone, placement, top, diameter_mm, height_mm",
    "lots": "lot, pattern, poured_on, heat, molds (+ pour_temp_c)",
    "inspections": "lot, inspected_on, method, quantity, result (+ defect, zone, xray_category, ...)",
}


def record_form(state: dict) -> None:
    st.subheader("Record an inspection result")
    if not access.can("log"):
        st.caption(access.not_offered("log"))
        return
    lots = common.load("lot_options")
    if lots.empty:
        st.caption("No lots in the log yet: import patterns, zones, sleeves, risers and lots below, "
                   "then record their inspection results here.")
        return
    labels = dict(zip(lots["lot"], lots["label"]))
    lot = st.selectbox("Lot (newest first; type to search)", list(labels), format_func=labels.get,
                       key="lot")
    pattern = lots.loc[lots["lot"] == lot, "pattern"].iat[0]
    zones = common.load("zone_options", pattern)

    with st.form("record", clear_on_submit=False, border=True):
        c1, c2, c3, c4 = st.columns(4)
        inspected_on = c1.date_input("Inspected on", value=dt.date.today(), key="inspected_on",
                                     max_value=dt.date.today(), format="YYYY-MM-DD")
        method = c2.selectbox("Method", METHODS, key="method")
        quantity = c3.number_input("Quantity (castings)", min_value=1, value=1, step=1, key="quantity")
        result = c4.selectbox("Result", RESULTS, key="result")
        c1, c2, c3, c4 = st.columns(4)
        defect = c1.selectbox("Defect (reject and rework)", (NONE, *DEFECTS), key="defect")
        zone = c2.selectbox(f"Zone of the casting ({common.md_escape(pattern)})", (NONE, *zones), key="zone")
        category = c3.selectbox("Radiography category (x-ray)", (NONE, *XRAY_CATEGORIES), key="xray_category")
        severity = c4.selectbox("Severity level (1 least – 5)", (NONE, 1, 2, 3, 4, 5), key="severity")
        c1, c2, c3 = st.columns(3)
        inspector = c1.text_input("Inspector", key="inspector", max_chars=100)
        serial = c2.text_input("Casting serial (optional)", key="serial", max_chars=100)
        recorded_by = access.author_field(c3, "Your name (required; recorded as who logged it)", "recorded_by")
        notes = st.text_area("Notes", key="notes", max_chars=2000, height=80)
        saved = st.form_submit_button("Save record", type="primary", key="save")

    if not saved:
        return
    if not recorded_by:
        st.error("Name the person logging the result: the record keeps who logged it.")
        return
    record = views.form_record({
        "lot": lot, "inspected_on": inspected_on, "method": method, "quantity": int(quantity),
        "result": result, "defect": defect, "zone": zone, "xray_category": category,
        "severity": severity, "serial": serial, "inspector": inspector, "notes": notes})
    with common.guard():
        with common.open_store() as store:
            rid = log_inspection(store, record, by=recorded_by, source="dashboard")
        common.forget()
        n = int(quantity)
        st.success(f"Saved record {rid}: lot {common.md_escape(lot)}, {n} casting{'s' if n != 1 else ''}, "
                   f"{result}.")


def upload_file() -> None:
    kinds = [k for k in KINDS if access.can(TABLE_ACTION[k])]
    if not kinds:
        return  # the record form above said why
    st.subheader("Import a file")
    st.caption("One bad row refuses the whole file and nothing is written; every refused row is "
               "listed with its row number (the header is row 1), column and reason.")
    c1, c2 = st.columns([1, 2])
    kind = c1.selectbox("What the file holds", kinds, index=kinds.index("inspections"), key="kind")
    c2.caption("Columns: " + KIND_HELP[kind])
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
        with common.open_store() as store:
            res = import_file(store, kind, path, by=by)
        common.forget()
        st.success(f"Imported {common.md_escape(res.file)}: {res.rows:,} rows read, {res.added:,} added, "
                   f"{res.skipped:,} already present.")


def latest(state: dict) -> None:
    st.subheader("Latest records")
    if state["counts"]["inspections"] == 0:
        st.caption("No inspection records yet.")
        return
    n = st.number_input("Records to show (newest first)", min_value=10, max_value=1000, value=50, step=10,
                        key="history_limit")
    st.dataframe(common.load("latest_records", limit=int(n)), hide_index=True, width="stretch",
                 key="latest_records_table", placeholder="")


def main() -> None:
    common.header("Log results", "Record inspection results per pour lot, import files, and check "
                                 "the latest records. Records are never overwritten; corrections are "
                                 "made with `pourback correct`.")
    state = common.load("start_state")
    if not any(state["counts"].values()):
        common.start_message(state)
    record_form(state)
    st.divider()
    upload_file()
    st.divider()
    latest(common.load("start_state"))


main()
