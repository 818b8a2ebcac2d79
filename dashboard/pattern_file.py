"""Pattern file: one pattern's risers by revision, their rule margins, and its pours and rejects."""

from __future__ import annotations

import datetime as dt

import streamlit as st

from dashboard import actions_view, casting_view, charts, common, thermal_view
from tracker import limits
from tracker.views import pattern_file as views
from tracker.views import review as review_views
from tracker.views.common import label as view_label

NUMBER = st.column_config.NumberColumn


def _pct(fraction):
    return None if fraction is None else 100.0 * fraction


def main() -> None:
    common.header("Pattern file", "One pattern's riser design, revision by revision, judged by the rules, "
                                  "and what it poured and scrapped week by week.")
    state = common.load("start_state")
    opts = common.load("pattern_options")
    if opts.empty:
        common.start_message(state, "a pattern file")
        return
    code = _picked_pattern(opts)

    system = common.unit_system()
    label = lambda metric_label: view_label(metric_label, system)  # noqa: E731 (a one-line local helper)
    _summary(code)

    st.subheader("Zones")
    zones = common.load("pattern_zones", code, system=system)
    if zones.empty:
        st.info("No zones are logged for this pattern yet: import them (zones.csv).")
    else:
        st.dataframe(zones, hide_index=True, width="stretch", key="zones_table", placeholder="",
                     column_config=common.pinned({label("volume (cm³)"): NUMBER(format="%.0f"),
                                    label("cooling area (cm²)"): NUMBER(format="%.0f"),
                                    label("modulus (cm)"): NUMBER(format="%.2f"),
                                    label("thickness (mm)"): NUMBER(format=common.length_format()),
                                    label("width (mm)"): NUMBER(format=common.length_format()),
                                    label("feeding length (mm)"): NUMBER(format=common.length_format())},
                                                 "zone", label("modulus (cm)")))
        st.caption("Width and thickness tell a bar from a plate for the feeding distance (steel, Bishop and "
                   "Pellini): bar at width = thickness, plate from 5 × thickness, interpolated between. "
                   "Where thickness, width or length is missing, the feeding distance is not judged.")

    st.subheader("Risers by revision")
    design = common.load("risers_by_revision", code, system=system)
    if design.empty:
        st.info("No riser design is logged for this pattern yet: import its risers (risers.csv).")
    else:
        st.dataframe(design[views.design_part(system)], hide_index=True, width="stretch", key="risers_table",
                     placeholder="", column_config=common.pinned({
                         label("diameter (mm)"): NUMBER(format=common.length_format()),
                         label("height (mm)"): NUMBER(format=common.length_format()),
                         label("riser weight (kg)"): NUMBER(format="%.1f")}, "riser", label("diameter (mm)")))
        st.markdown("**Rule margins**")
        st.dataframe(design[views.margin_part(system)], hide_index=True, width="stretch", key="margins_table",
                     placeholder="", column_config=common.pinned({
                         label("zone modulus (cm)"): NUMBER(format="%.2f"),
                         label("riser modulus (cm)"): NUMBER(format="%.2f"),
                         "modulus ratio": NUMBER(format="%.2f"), "Caine margin": NUMBER(format="%+.2f"),
                         "feed margin": NUMBER(format="%+.2f")}, "riser", "modulus ratio", label("riser modulus (cm)")))
        st.caption("Modulus ratio = effective riser modulus (sleeve factor included) / modulus of the zone "
                   "it feeds; the modulus rule asks 1.2 or more (ductile iron, judged by pressure control: "
                   "1.2 × the neck's modulus, the neck 0.5-0.8 × the zone's). Caine margin = freezing ratio above the "
                   "alloy's curve (0 or more passes; blank where the alloy has no constants). Feed margin "
                   "= metal the riser can give over what the zone needs, as a share of the need "
                   "(0 or more passes).")

        thermal_view.pattern_section(code)
        _track_record(code)
        casting_view.section(code)

    st.subheader("Pours and rejects over time")
    weekly = common.load("pattern_weekly", code)
    marks = common.load("revision_marks", code)
    if not weekly.empty:
        lo = weekly["week_start"].min()
        shown = marks[marks["week"].isin(weekly["week"])]
        st.altair_chart(charts.pattern_history(weekly, shown), width="stretch", key="history_chart")
        before = marks[marks["effective_from"] < lo]
        note = common.md_escape("Revisions in effect before the first pour shown: " + ", ".join(
            f"{r.revision} (from {r.effective_from})" for r in before.itertuples()) + ".") \
            if not before.empty else ""
        st.caption("Bars: castings poured per week (left axis). Solid line: reject rate, all defects; dashed "
                   "line: shrinkage rejects (% of castings inspected, right axis). Dotted vertical lines: "
                   "the date each riser revision took effect. " + note)
    else:
        st.caption("No lots of this pattern are logged yet.")
    actions_view.section(pattern=code, key="pattern")


def _track_record(code: str) -> None:
    """The model's prediction for each riser change of the pattern, beside what followed."""
    st.subheader("Track record")
    record = common.load("pattern_track_record", code, status="Checking the model's past predictions")
    st.caption("What the model predicted for each changed riser's zone, from pours before the change only, "
               "beside what was observed since; 'too early' until the castings since the change are as many "
               "as the before/after test needs. " + common.md_escape(review_views.track_record_summary(record)))
    table = review_views.track_record_table(record)
    if not table.empty:
        st.dataframe(table, hide_index=True, width="stretch", key="track_record_table", placeholder="",
                     column_config={c: NUMBER(format="%.2f") for c in ("predicted after (%)", "observed after (%)")})


def _picked_pattern(opts) -> str:
    """The pattern picker: the pattern asked for in the address (?pattern=P-1031), else the
    first one the review flags; the address then names the pattern shown."""
    flagged = common.flagged_patterns()
    labels = {code: label + (" · flagged" if code in flagged else "")
              for code, label in zip(opts["pattern"], opts["label"], strict=False)}
    wanted = st.query_params.get("pattern")
    first = next((p for p in flagged if p in labels), None)
    index = list(labels).index(wanted) if wanted in labels else (list(labels).index(first) if first else 0)
    code = st.selectbox("Pattern", list(labels), index=index, format_func=labels.get, key="pattern")
    if code != wanted:
        st.query_params["pattern"] = code  # the address names the pattern shown

    return code


def _summary(code: str) -> None:
    """The pattern's master data and pour totals, and its reject rate all time and over
    the review window (the weekly review's figure, by the same library function)."""
    info = common.load("pattern_summary", code)
    c = st.columns(3)
    c[0].metric("Alloy", info.get("alloy_name") or info["alloy"], help=f"alloy key: {info['alloy']}")
    c[1].metric(f"Casting weight ({common.unit('casting_weight_kg')})",
                f"{common.shown('casting_weight_kg', info['casting_weight_kg']):.4g}")
    c[2].metric("Castings per mold", f"{info['castings_per_mold']:,}")
    c = st.columns(3)
    c[0].metric("Lots poured", f"{info['lots']:,}")
    c[1].metric("Castings poured", f"{info['poured']:,}")
    c[2].metric("Reject rate, all time", common.pct(info["reject_rate_pct"], 2),
                help=f"{info['rejected']:,} of {info['inspected']:,} castings inspected")
    recent = common.load("pattern_reject_rate", code, weeks=limits.WEEKS_DEFAULT,
                         week=common.load("default_week", today=dt.date.today().isoformat()))
    st.caption(common.md_escape(
        "Reject rate, all time: all rejects, pattern " + code + ", every pour, % of castings inspected. "
        f"Over the review window: {common.pct(_pct(recent['rate']), 2)} ({recent['scope']}; as the Weekly "
        "review shows it)."))
    mould = info["mould"].replace("_", " ") if info.get("mould") else "not given, taken as green sand"
    st.caption((f"Poured from {info['first_pour']} to {info['last_pour']}. " if info["first_pour"] else "")
               + f"Mould: {mould} (ductile iron's pressure-control rules depend on it).")


main()
