"""Design map: each riser zone's shrinkage reject rate against its design point."""

from __future__ import annotations

import datetime as dt

import streamlit as st

from dashboard import charts, common
from tracker import views
from tracker.alloys import ALLOYS


def alloy_name(key: str) -> str:
    a = ALLOYS.get(key)
    return f"{a.name} ({key})" if a else key


def main() -> None:
    common.header("Design map", "Every riser zone placed by its design (volume ratio across, freezing ratio "
                                "up), sized by castings poured and shaded by its shrinkage reject rate. "
                                "A zone above its alloy's Caine curve is sound by that rule; zones below "
                                "it should show the scrap.")
    state = common.load("start_state")
    if not state["ready"] or not state["has_design"]:
        common.start_message(state, "the design map (it needs risers, lots and inspections)")
        return
    alloys = common.load("alloy_options")
    first, last = common.load("pour_span")
    first, last = dt.date.fromisoformat(first), dt.date.fromisoformat(last)

    c1, c2, c3 = st.columns([3, 2, 3])
    alloy = c1.selectbox("Alloy (one curve per alloy)", alloys, format_func=alloy_name, key="alloy",
                         index=alloys.index("steel") if "steel" in alloys else 0)
    # The last year of pours by default: a long log's whole history is slow to
    # draw and mixes designs long since changed.
    shown_from = max(first, last - dt.timedelta(weeks=52))
    period = c2.date_input("Pour period (default: the last 52 weeks)", value=(shown_from, last),
                           min_value=first, max_value=last, format="YYYY-MM-DD", key="period")
    opts = common.load("pattern_options")
    opts = opts[opts["alloy"] == alloy]
    labels = dict(zip(opts["pattern"], opts["label"]))
    patterns = c3.multiselect("Patterns (none picked = all of this alloy)", list(labels),
                              format_func=labels.get, key="patterns")
    start, end = (period if isinstance(period, (tuple, list)) and len(period) == 2 else (first, last))

    frame = common.load("design_map", start=start.isoformat(), end=end.isoformat(), alloy=alloy,
                        status=f"Reading the zone features of {start} to {end}")
    points = views.filter_design_map(frame, alloy, patterns)
    if points.empty:
        st.info("No zone of this alloy was poured in the period (under a known riser design). "
                "Widen the period or pick another alloy.")
        return
    curve = common.load("caine_curve", alloy, y_max=float(points["volume_ratio"].max()) * 1.15,
                        x_max=max(float(points["freezing_ratio"].max()) * 1.3, 2.0))
    s = views.design_map_summary(points)
    c = st.columns(4)
    c[0].metric("Riser zones shown", f"{s['zones']:,}")
    c[1].metric("Castings poured", f"{s['castings']:,}")
    c[2].metric("Shrinkage rejects (castings)", f"{s['shrinkage_rejects']:,}",
                help="rejects with defect shrinkage logged against a zone")
    c[3].metric("Zones whose riser fails a rule", f"{s['failing']:,}")
    if curve is None:
        why = " (no textbook row is known for ductile iron)" if alloy == "ductile_iron" else ""
        st.info(f"No Caine curve for {common.md_escape(alloy_name(alloy))}: the log holds no Caine "
                f"constants for it{why}. Its zones are shown without the curve; judge them by the freezing "
                "ratio (the modulus rule asks 1.2 or more) and the feed margin in the table below.",
                icon=":material/info:")
    st.altair_chart(charts.design_map(points, curve), width="stretch", key="design_map_chart")
    st.caption("Hover a point for the pattern, zone, riser and rates. Ratios have no unit: volume ratio "
               "= riser volume / volume of the zone it feeds; freezing ratio = effective riser modulus "
               "(sleeve included) / zone modulus, the same ratio the modulus rule asks to be 1.2 or more. "
               "Caine's constants: textbook table (from memory).")
    st.subheader("Zones on the map")
    st.dataframe(views.design_map_table(points), hide_index=True, width="stretch", key="design_map_table",
                 column_config={"shrinkage rate (%)": st.column_config.NumberColumn(format="%.2f"),
                                "volume ratio": st.column_config.NumberColumn(format="%.2f"),
                                "freezing ratio": st.column_config.NumberColumn(format="%.2f"),
                                "Caine margin": st.column_config.NumberColumn(format="%+.2f"),
                                "feed margin": st.column_config.NumberColumn(format="%+.2f")})


main()
