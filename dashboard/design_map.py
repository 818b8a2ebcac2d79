"""Design map: each riser zone's shrinkage reject rate against its design point."""

from __future__ import annotations

import datetime as dt

import streamlit as st

from dashboard import charts, common
from tracker.design.alloys import ALLOYS
from tracker.views import design_map as views


def alloy_name(key: str) -> str:
    a = ALLOYS.get(key)
    return f"{a.name} ({key})" if a else key


def main() -> None:
    common.header("Design map", "Every riser zone placed by its design (volume ratio across, freezing ratio "
                                "up), sized by castings poured and shaded by its shrinkage reject rate. "
                                "A zone above its alloy's Caine curve is sound by that rule; zones below "
                                "it should show the scrap.")
    common.follow_pattern_link()  # a point clicked, or a pattern chosen, on the last run
    state = common.load("start_state")
    if not state["ready"] or not state["has_design"]:
        common.start_message(state, "the design map (it needs risers, lots and inspections)")
        return
    alloys = common.load("alloy_options")
    first, last = common.load("pour_span")
    first, last = dt.date.fromisoformat(first), dt.date.fromisoformat(last)

    c1, c2 = st.columns(2)
    alloy = c1.selectbox("Alloy (one curve per alloy)", alloys, format_func=alloy_name, key="alloy",
                         index=alloys.index("steel") if "steel" in alloys else 0)
    # The last year of pours by default: a long log's whole history is slow to
    # draw and mixes designs long since changed.
    shown_from = max(first, last - dt.timedelta(weeks=52))
    period = c2.date_input("Pour period (default: the last 52 weeks)", value=(shown_from, last),
                           min_value=first, max_value=last, format="YYYY-MM-DD", key="period")
    opts = common.load("pattern_options")
    opts = opts[opts["alloy"] == alloy]
    labels = dict(zip(opts["pattern"], opts["label"], strict=False))
    patterns = st.multiselect("Patterns (none picked = all of this alloy)", list(labels),
                              format_func=labels.get, key="patterns")
    start, end = (period if isinstance(period, (tuple, list)) and len(period) == 2 else (first, last))

    frame = common.load("design_map", start=start.isoformat(), end=end.isoformat(), alloy=alloy,
                        status=f"Reading the zone features of {start} to {end}")
    flagged = common.flagged_patterns()
    points = views.filter_design_map(frame, alloy, patterns, current=common.load("current_revisions"),
                                     flagged=flagged)
    if points.empty:
        st.info("No zone of this alloy was poured in the period (under a known riser design). "
                "Widen the period or pick another alloy.")
        return
    curve = common.load("caine_curve", alloy, y_max=float(points["volume_ratio"].max()) * 1.15,
                        x_max=max(float(points["freezing_ratio"].max()) * 1.3, 2.0))
    s = _metrics(points, start, end)
    if curve is None:
        why = " (no textbook row is known for ductile iron)" if alloy == "ductile_iron" else ""
        st.info(f"No Caine curve for {common.md_escape(alloy_name(alloy))}: the log holds no Caine "
                f"constants for it{why}. Its zones are shown without the curve; judge them by the freezing "
                "ratio (the modulus rule asks 1.2 or more) and the feed margin in the table below.",
                icon=":material/info:")
    event = st.altair_chart(charts.design_map(points, curve), width="stretch", key="design_map_chart",
                            on_select=_picked, selection_mode=charts.PICK)
    del event
    st.caption("Click a point to open its pattern's file. Hover a point for the pattern, zone, riser and rates. "
               "Faded points: designs a later riser revision superseded; a thick dark ring: a pattern the "
               f"weekly review flags ({len(flagged)} flagged). Ratios have no unit: volume ratio = riser volume "
               "/ volume of the zone it feeds; freezing ratio = effective riser modulus (sleeve included) / "
               "zone modulus, the same ratio the modulus rule asks to be 1.2 or more. The colour scale runs "
               f"from 0 to the highest rate shown ({s['max_rate_pct']:.1f} %). Caine's constants: textbook "
               "table (from memory).")
    shown = sorted(points["pattern"].unique(), key=lambda p: (p not in flagged, p))
    st.selectbox("Open the file of a pattern on the map (flagged first)", shown, index=None,
                 placeholder="choose a pattern", key="open_pattern", on_change=_chosen,
                 format_func=lambda p: p + (" · flagged" if p in flagged else ""))
    st.subheader("Zones on the map")
    full = st.toggle("Show every column", key="design_map_all_columns",
                     help="Revision, riser, shrinkage rejects, ratios and margins.")
    st.dataframe(views.design_map_table(points, full=full), hide_index=True, width="stretch",
                 key="design_map_table",
                 column_config={"shrinkage rate (%)": st.column_config.NumberColumn(format="%.2f"),
                                "castings poured": st.column_config.NumberColumn(format="localized"),
                                "volume ratio": st.column_config.NumberColumn(format="%.2f"),
                                "freezing ratio": st.column_config.NumberColumn(format="%.2f"),
                                "Caine margin": st.column_config.NumberColumn(format="%+.2f"),
                                "feed margin": st.column_config.NumberColumn(format="%+.2f")})


def _metrics(points, start: dt.date, end: dt.date) -> dict:
    """The map's headline figures and the words that say which rate it shows; returns the summary."""
    s = views.design_map_summary(points)
    c = st.columns(4)
    c[0].metric("Riser zones shown", f"{s['zones']:,}",
                help=f"{s['superseded']:,} of them under a revision since superseded (faded on the map)")
    c[1].metric("Castings poured", f"{s['castings']:,}")
    c[2].metric("Shrinkage rejects (castings)", f"{s['shrinkage_rejects']:,}",
                help="rejects with defect shrinkage logged against a zone")
    c[3].metric("Zones in use whose riser fails a rule", f"{s['failing']:,}",
                help="risers of the revision in use today; superseded revisions are not counted")
    st.caption("Shrinkage rate on this page: " + common.md_escape(views.rate_scope(start.isoformat(),
                                                                                end.isoformat())) + ".")
    return s


def _picked() -> None:
    """A click on a point: open that pattern's file."""
    chosen = st.session_state["design_map_chart"].selection.get(charts.PICK) or []
    if chosen and chosen[0].get("pattern"):
        common.open_pattern_later(chosen[0]["pattern"])


def _chosen() -> None:
    code = st.session_state.get("open_pattern")
    st.session_state["open_pattern"] = None
    if code:
        common.open_pattern_later(code)


main()
