"""Pattern design: a new pattern, its zones and a riser revision typed into a form,
so a new pattern needs no hand-written CSV. The rows are checked by the imports'
own validators (``tracker.log.ingest.form_rows.save_design``) and stored all
together or not at all; a refusal names the form, its row, the field and the reason.

A revision of a pattern in the log starts from its newest revision's risers,
carried over: change, add or remove risers, give the new code and date, save.
"""

from __future__ import annotations

import datetime as dt

import pandas as pd
import streamlit as st

from dashboard import access, common
from tracker import units
from tracker.design.geometry import PLACEMENTS, TOPS
from tracker.design.rules import MOULDS
from tracker.errors import BadFile
from tracker.log.ingest.form_rows import save_design
from tracker.views.design_form import revision_rows

NEW = "(a new pattern)"
NO_SLEEVE = "(no sleeve)"
NO_LEVEL = "none"
_PENDING = "design_pending"  # {"pattern", "system", "zones": [...], "risers": [...]}
_MESSAGE = "design_message"


def _name(metric: str) -> str:
    return units.column_name(metric, common.unit_system())


def _label(text: str, metric: str) -> str:
    return f"{text} ({common.unit(metric)})"


def _pending(pattern: str, start: dict) -> dict:
    """The rows typed so far for ``pattern`` (started again on another pattern or unit system)."""
    system = common.unit_system()
    p = st.session_state.get(_PENDING)
    if p is None or p["pattern"] != pattern or p["system"] != system:
        p = {"pattern": pattern, "system": system, "zones": [], "risers": [dict(r) for r in start["risers"]]}
        st.session_state[_PENDING] = p
        st.session_state["design_revision"] = start["next_code"]  # proposed for this pattern
    return p


def _values(prefix: str, fields: tuple[str, ...]) -> dict:
    """The form's fields ``prefix_FIELD`` as a row keyed by the import's column names in the unit system."""
    s = st.session_state
    out = {}
    for f in fields:
        v = s.get(f"{prefix}_{f}")
        v = "" if v is None or v in (NO_SLEEVE, NO_LEVEL) else v
        out[_name(f)] = v.strip() if isinstance(v, str) else v
    return out


ZONE_INPUTS = ("zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm", "width_mm",
               "required_xray_level")
RISER_INPUTS = ("riser", "zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm")


def _add_zone() -> None:
    p = st.session_state[_PENDING]
    row = _values("dz", ZONE_INPUTS)
    p["zones"] = [z for z in p["zones"] if z["zone"] != row["zone"]] + [row]
    for f in ZONE_INPUTS:
        st.session_state[f"dz_{f}"] = NO_LEVEL if f == "required_xray_level" else ""


def _add_riser() -> None:
    p = st.session_state[_PENDING]
    row = _values("dr", RISER_INPUTS)
    p["risers"] = [r for r in p["risers"] if r["riser"] != row["riser"]] + [row]


def _remove(kind: str, code_key: str) -> None:
    p = st.session_state[_PENDING]
    code = st.session_state.get(code_key)
    p[kind] = [r for r in p[kind] if r[kind[:-1]] != code]


def _pattern_fields(c) -> dict:
    """The new pattern's fields, as the patterns import's row."""
    alloys = common.load("alloy_codes")
    a, b = c.columns(2)
    row = {"pattern": a.text_input("Pattern code", key="dp_pattern", max_chars=64).strip(),
           "description": b.text_input("Description", key="dp_description", max_chars=200).strip()}
    a, b, d = c.columns(3)
    row["alloy"] = a.selectbox("Alloy", alloys, key="dp_alloy")
    row["mould"] = b.selectbox("Mould", MOULDS, key="dp_mould", format_func=lambda m: m.replace("_", " "))
    row["castings_per_mold"] = d.text_input("Castings per mould", key="dp_castings_per_mold")
    a, b, d = c.columns(3)
    row[_name("casting_weight_kg")] = a.text_input(_label("Casting weight", "casting_weight_kg"), key="dp_weight")
    row[_name("metal_cost_per_kg")] = b.text_input(f"Metal cost ({common.load('currency')} per "
                                                   f"{common.unit('metal_kg')})", key="dp_metal_cost")
    row["processing_cost_per_casting"] = d.text_input(f"Processing cost ({common.load('currency')} per casting)",
                                                      key="dp_processing")
    return row


def _zones(pattern: str, start: dict, p: dict) -> None:
    st.subheader("Zones")
    if len(start["zones"]):
        st.caption(common.md_escape(f"Zones of {pattern} in the log (a stored zone is not changed here):"))
        st.dataframe(start["zones"], hide_index=True, width="stretch", key="design_stored_zones")
    with st.container(border=True):
        a, b, c = st.columns(3)
        a.text_input("Zone code", key="dz_zone", max_chars=64)
        b.text_input(_label("Volume", "volume_cm3"), key="dz_volume_cm3")
        c.text_input(_label("Cooling area", "cooling_area_cm2"), key="dz_cooling_area_cm2")
        a, b, c, d = st.columns(4)
        a.text_input(_label("Thickness", "thickness_mm") + ", optional", key="dz_thickness_mm")
        b.text_input(_label("Length", "length_mm") + ", optional", key="dz_length_mm")
        c.text_input(_label("Width", "width_mm") + ", optional", key="dz_width_mm")
        d.selectbox("Radiography level, optional", [NO_LEVEL, "1", "2", "3", "4", "5"], key="dz_required_xray_level")
        st.button("Add zone", key="design_add_zone", on_click=_add_zone)
    if p["zones"]:
        st.caption("New zones, saved with the form (row numbers as a refusal names them):")
        st.dataframe(pd.DataFrame(p["zones"]).rename_axis("row").reset_index().assign(row=lambda f: f["row"] + 1),
                     hide_index=True, width="stretch", key="design_new_zones")
        a, b = st.columns([2, 1])
        a.selectbox("Zone to remove", [z["zone"] for z in p["zones"]], key="design_zone_gone")
        b.button("Remove zone", key="design_remove_zone", on_click=_remove, args=("zones", "design_zone_gone"))


def _risers(pattern: str, start: dict, p: dict) -> tuple[str, str]:
    st.subheader("Riser revision")
    if start["revision"]:
        st.caption(common.md_escape(
            f"Starts from revision {start['revision']} of {pattern} (in effect from {start['effective_from']}): "
            "its risers are carried over as they are. Add a riser with a code it has to change that riser."))
    a, b = st.columns(2)
    code = a.text_input("New revision code", key="design_revision", max_chars=64)
    day = b.date_input("In effect from", key="design_from", value=dt.date.today(), format="YYYY-MM-DD")
    zones = sorted({*start["zones"].get("zone", pd.Series(dtype=str)).tolist(), *(z["zone"] for z in p["zones"])})
    if zones and st.session_state.get("dr_zone") not in zones:
        st.session_state["dr_zone"] = zones[0]  # a zone typed after the picker was first drawn
    with st.container(border=True):
        a, b, c = st.columns(3)
        a.text_input("Riser code", key="dr_riser", max_chars=64)
        b.selectbox("Zone it feeds", zones, key="dr_zone")
        c.selectbox("Sleeve", [NO_SLEEVE, *common.load("sleeve_codes")], key="dr_sleeve")
        a, b, c, d, e = st.columns(5)
        a.selectbox("Placement", PLACEMENTS, key="dr_placement")
        b.selectbox("Top", TOPS, key="dr_top")
        c.text_input(_label("Diameter", "diameter_mm"), key="dr_diameter_mm")
        d.text_input(_label("Height", "height_mm"), key="dr_height_mm")
        e.text_input(_label("Neck", "neck_diameter_mm") + ", side only", key="dr_neck_diameter_mm")
        st.button("Add or change riser", key="design_add_riser", on_click=_add_riser)
    if p["risers"]:
        st.caption("The risers of the new revision (row numbers as a refusal names them):")
        st.dataframe(pd.DataFrame(p["risers"]).rename_axis("row").reset_index().assign(row=lambda f: f["row"] + 1),
                     hide_index=True, width="stretch", key="design_new_risers")
        a, b = st.columns([2, 1])
        a.selectbox("Riser to remove", [r["riser"] for r in p["risers"]], key="design_riser_gone")
        b.button("Remove riser", key="design_remove_riser", on_click=_remove, args=("risers", "design_riser_gone"))
    return code.strip(), day.isoformat() if day else ""


def _save(pattern: str, new: dict | None, code: str, day: str, by: str, start: dict, changed: bool) -> None:
    p = st.session_state[_PENDING]
    rows = revision_rows(p["risers"], start, p["system"])  # the untouched risers exactly as stored
    risers = [{"pattern": pattern, "revision": code, "effective_from": day, **r} for r in rows] if changed else []
    zones = [{"pattern": pattern, **z} for z in p["zones"]]
    with common.guard():
        try:
            with common.open_store() as store:
                results = save_design(store, pattern=new, zones=zones, risers=risers, by=by)
        except BadFile as exc:  # each refused row on a line of its own: form, row, field and reason
            lines = [str(exc).splitlines()[0], *(str(x) for x in exc.problems)]
            st.error("  \n".join(common.md_escape(line) for line in lines))
            return
        common.forget()
        st.session_state.pop(_PENDING, None)
        added = ", ".join(f"{r.added} {r.kind[:-1] if r.added == 1 else r.kind}" for r in results)
        st.session_state[_MESSAGE] = f"Saved {pattern}: {added or 'nothing new'}."
    if _MESSAGE in st.session_state:
        st.rerun()


def main() -> None:
    common.header("Pattern design", "Type a pattern's zones and risers instead of writing a CSV: a new pattern, "
                                    "its zones, and a riser revision, checked as the imports check them.")
    done = st.session_state.pop(_MESSAGE, None)
    if done:
        st.success(common.md_escape(done))
    if not access.can("design"):
        st.caption(access.not_offered("design"))
        return
    options = common.load("pattern_options")
    codes = [NEW, *options["pattern"].tolist()]
    labels = {NEW: NEW, **dict(zip(options["pattern"], options["label"], strict=False))}
    chosen = st.selectbox("Pattern", codes, format_func=labels.get, key="design_pattern")
    new = None
    if chosen == NEW:
        with st.container(border=True):
            new = _pattern_fields(st)
        pattern = new["pattern"]
    else:
        pattern = chosen
    start = common.load("design_start", pattern if chosen != NEW else None, system=common.unit_system())
    p = _pending(pattern if chosen != NEW else NEW, start)
    _zones(pattern, start, p)
    code, day = _risers(pattern, start, p)
    changed = p["risers"] != start["risers"]
    st.caption("Nothing is stored until you save; then every row is checked as the imports check a file, and one "
               "refused row stores nothing." + ("" if changed or not start["risers"] else
                                                " The risers are as stored: no new revision is saved."))
    by = access.author_field(st, "Your name (required; recorded with the change)", "design_by")
    if st.button("Save pattern design", type="primary", key="design_save"):
        if not by:
            st.error("Name who makes the change.")
        elif not pattern:
            st.error("Pattern code: left blank; give the new pattern a code.")
        else:
            _save(pattern, new, code, day, by, start, changed)


main()
