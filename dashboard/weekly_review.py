"""Weekly review: scrap by pattern and defect, trend, control chart, riser revisions."""

from __future__ import annotations

import streamlit as st

from dashboard import actions_view, charts, common
from tracker.review.target import METHOD, SIGNAL_PROBABILITY
from tracker.views import review as views
from tracker.views.common import money_head


def headline(review: dict) -> None:
    h = views.review_headline(review)
    st.markdown(f"**Week {review['week']}** ({review['week_start']} to {review['week_end']}); "
                f"window {review['window']['first_week']} to {review['window']['last_week']} "
                f"({review['window']['weeks']} weeks)")
    for part, name in (("week", "week"), ("window", "window")):
        t = h[part]
        c = st.columns(4)
        c[0].metric(f"Castings inspected, {name}", f"{t['inspected']:,}",
                    help=f"castings poured: {t['poured']:,}; the rest await inspection")
        c[1].metric(f"Castings rejected, {name}", f"{t['rejected']:,}",
                    help=f"reworked (not scrap): {t['reworked']:,} castings")
        c[2].metric(f"Reject rate, {name}", common.pct(t["reject_rate_pct"], 2),
                    help=f"95 % range {common.pct(t['wilson_low_pct'], 2)} to "
                         f"{common.pct(t['wilson_high_pct'], 2)}; target {h['target_pct']:g} %")
        c[3].metric(f"Scrap cost, {name} ({h['currency']})", common.money(t["scrap_cost"]))
    flagged = h["problems"]
    st.markdown(f"**Patterns flagged:** {len(flagged)} of {h['patterns']:,} poured"
                + (": " + common.md_escape(", ".join(flagged)) if flagged else ""))


def changes(review: dict) -> None:
    ch = views.review_changes(review)
    with st.expander(f"What changed since the review of {ch['previous_week']}", expanded=True):
        c1, c2, c3 = st.columns(3)
        c1.markdown("**Newly flagged**")
        c1.text("\n".join(ch["new_problems"]) or "none")
        c1.markdown("**No longer flagged**")
        c1.text(", ".join(ch["no_longer_problems"]) or "none")
        c2.markdown("**Still flagged**")
        c2.text(", ".join(ch["still_problems"]) or "none")
        c2.markdown("**Riser revisions that took effect this week**")
        c2.text("\n".join(ch["revisions_took_effect"]) or "none")
        c3.markdown("**Largest moves in the weekly reject rate**")
        c3.text("\n".join(ch["rate_moves"]) or "none")


PARETO_BARS = 12  # the largest 11 and one bar for the rest: every bar keeps its label


def scrap(review: dict) -> None:
    st.subheader("Where the scrap is")
    c1, c2 = st.columns(2)
    of = c1.radio("Rank", ["patterns", "defects"], horizontal=True, key="pareto_of")
    by = c2.radio("By", ["cost", "count"], horizontal=True, key="pareto_by",
                  format_func={"cost": "scrap cost", "count": "castings rejected"}.get)
    data = views.review_pareto(review, of, by, top=PARETO_BARS)
    item = "pattern" if of == "patterns" else "defect"
    value = money_head("scrap cost", review) if by == "cost" else "castings rejected"
    st.altair_chart(charts.pareto(data, item, value, item), width="stretch", key="pareto_chart")
    st.caption(f"Bars: the window's scrap, largest first (faded after the items that make up 80 %); at most "
               f"{PARETO_BARS} bars, the last one holding all the rest. Line: cumulative share (%, right axis).")


def trend(review: dict) -> None:
    st.subheader("Trend")
    st.altair_chart(charts.trend(views.review_trend(review), 100.0 * review["target"],
                                 money_head("scrap cost", review)), width="stretch", key="trend_chart")
    st.caption("All patterns: weekly reject rate with its 95 % range (shaded), against the target.")


def control(review: dict) -> None:
    st.subheader("Control chart of one pattern")
    rows = review["patterns"]
    codes = [p["pattern"] for p in rows]
    flagged = review["problems"]
    default = codes.index(flagged[0]) if flagged else 0
    labels = {p["pattern"]: p["pattern"] + (" · flagged" if p["problem"] else "") for p in rows}
    code = st.selectbox("Pattern", codes, index=default, format_func=labels.get, key="chart_pattern")
    chart = views.review_pchart(review, code)
    st.altair_chart(charts.p_chart(chart, 100.0 * review["target"]), width="stretch", key="pchart_chart")
    row = next(p for p in rows if p["pattern"] == code)
    fired = views.signal_words(row["signal_rules"], row["signal_high_rules"])
    why = views.reason_words(row["problem_reasons"])
    st.caption("Weekly reject rate against the pattern's centre (dashed: its rate over the window); the "
               "shaded bar of each week runs between its limits: exact binomial probability limits for that "
               "week's castings, 0.135 % chance each side of falling outside by chance alone (wider in weeks "
               "with fewer castings). Weeks with nothing inspected are left blank. Dashed orange: the target "
               "(a pattern can be in control around a centre far above it; see Against the target). "
               + (f"Signal in the last 2 weeks: {fired}. " if fired else "No signal in the last 2 weeks. ")
               + (f"Flagged: {why}." if why else "Not flagged."))


def against_target(review: dict) -> None:
    st.subheader("Against the target")
    data = views.review_target(review)
    st.altair_chart(charts.target_chance(data, 100.0 * SIGNAL_PROBABILITY), width="stretch", key="target_chart")
    st.caption(f"Each pattern against the target ({100 * review['target']:g} %) as well as against its own "
               f"centre: the {METHOD}. The control chart above asks whether a pattern changed; this asks "
               "whether it is worse than the target.")
    with st.expander("The figures behind the chart"):
        st.dataframe(views.review_target_table(review), hide_index=True, width="stretch", key="target_table",
                     column_config={"reject rate (%)": st.column_config.NumberColumn(format="%.2f"),
                                    "target (%)": st.column_config.NumberColumn(format="%.2f"),
                                    "chance above target (%)": st.column_config.NumberColumn(format="%.1f")})


def signals(review: dict) -> None:
    st.subheader("Chart signals")
    table = views.review_signals(review)
    if table.empty:
        st.caption("No pattern's control chart signals in this window.")
        return
    st.dataframe(table, hide_index=True, width="stretch", key="signals_table")
    st.caption("Signal rules on each pattern's weekly chart (NIST/SEMATECH e-Handbook 6.3.3.2; Western "
               "Electric run rule): a point beyond a limit, or 8 or more weeks in a row on one side of the "
               "centre. A signal on the low side means fewer rejects than usual and does not flag a pattern.")


def revisions(review: dict) -> None:
    st.subheader("Riser revisions under judgement")
    table = views.review_revisions_table(review)
    if table.empty:
        st.caption("No riser revision took effect in this window or is still waiting for a verdict.")
        return
    for row in table.to_dict("records"):
        with st.container(border=True):
            st.markdown(common.md_escape(f"{row['pattern']} revision {row['revision']}, in effect from "
                                         f"{row['effective from']}")
                        + ("" if row["took effect in the window"] == "yes" else
                           " · *took effect before this window; still awaiting a verdict*"))
            st.markdown("**Verdict:** " + common.md_escape(row["verdict in words"]) + ".",
                        help=common.md_escape(row["statistics"]))
            st.caption(common.md_escape(f"What changed: {row['what changed']}. Before: "
                                        f"{row['before: shrinkage rejects']}; after: "
                                        f"{row['after: shrinkage rejects']}."))
            if row["castings to a verdict"] != "-":
                st.caption("Still to pour for a verdict: " + common.md_escape(row["castings to a verdict"]) + ".")
    st.caption("Shrinkage rejects of castings inspected, in the zones of the changed risers: lots poured "
               "under the previous revision against lots poured since. A revision stays here until it has "
               "a verdict. Hover the ? for the statistics behind a verdict.")


def track_record(review: dict) -> None:
    st.subheader("Track record")
    st.caption("What the model predicted for each changed riser's zone, from pours before the change only, "
               "beside what was observed since. " + common.md_escape(views.track_record_summary(
                   review.get("track_record"))))
    table = views.track_record_table(review.get("track_record"))
    if not table.empty:
        st.dataframe(table, hide_index=True, width="stretch", key="track_record_table", placeholder="",
                     column_config={c: st.column_config.NumberColumn(format="%.2f")
                                    for c in ("predicted after (%)", "observed after (%)")})


def patterns(review: dict) -> None:
    st.subheader("Patterns in the window")
    full = st.toggle("Show every column", key="patterns_all_columns",
                     help="Poured castings, the 95 % range of the rate, shrinkage rejects and chart signals.")
    cost = money_head("scrap cost", review)
    st.caption("Reject rate (%): " + common.md_escape(views.rate_scope(review)) + ".")
    st.dataframe(views.review_patterns_table(review, full=full), hide_index=True, width="stretch",
                 key="patterns_table", placeholder="",
                 column_config=common.pinned({
                     "reject rate (%)": st.column_config.NumberColumn(format="%.2f"),
                     "rejected (castings)": st.column_config.NumberColumn(format="localized"),
                     "poured (castings)": st.column_config.NumberColumn(format="localized"),
                     cost: st.column_config.NumberColumn(format="localized")}, "pattern", "reject rate (%)"))
    common.download_csv(views.review_patterns_table(review, full=True), "Download the patterns table (CSV)",
                        f"pourback-patterns-{review['week']}.csv", key="download_patterns")


def download(review: dict, week: str, weeks: int, target: float) -> None:
    """The printable review pack: prepared on request (it runs the suggestions and draws every
    chart), then offered as HTML; the same pack as `pourback review --format html`."""
    asked = (week, weeks, target, common.unit_system())
    if st.session_state.get("pack_asked") != asked:
        if not st.button("Prepare the printable review pack", key="prepare_pack", icon=":material/print:",
                         help="The review with the suggestions (money and thermal check), each pattern against "
                              "the target, the open actions and the charts; prints on A4 and Letter."):
            return
        st.session_state["pack_asked"] = asked
    html = common.load("review_pack", "html", common.unit_system(), week=week, weeks=weeks, target=target / 100.0,
                       status="Preparing the review pack (suggestions, thermal checks, charts)")
    st.download_button("Download this review as HTML", data=html.encode("utf-8"),
                       file_name=f"pourback-review-{review['week']}.html", mime="text/html",
                       key="download_report", icon=":material/download:")


def main() -> None:
    common.header("Weekly review", "Scrap by pattern and defect for a review week and the weeks before it, "
                                   "which patterns went out of control, and whether riser revisions worked. "
                                   "Rates are castings rejected / castings inspected, counted in the week "
                                   "the lot was poured.")
    state = common.load("start_state")
    if not state["ready"]:
        common.start_message(state, "a review")
        return
    week, weeks, target = common.review_controls()
    # figures with a unit (riser changes, scrap weight) in the session's units; the report too
    review = common.load("weekly_review_in", common.unit_system(), week=week, weeks=weeks, target=target / 100.0,
                         status=f"Computing the review of {week} ({weeks} weeks)")
    if not review["patterns"]:
        st.info(f"Nothing was poured in the {weeks} weeks up to {week}. Pick another week.")
        return
    headline(review)
    download(review, week, weeks, target)
    changes(review)
    scrap(review)
    trend(review)
    patterns(review)
    control(review)
    against_target(review)
    signals(review)
    revisions(review)
    track_record(review)
    actions_view.section(key="review")
    plants(week, weeks, target)


def plants(week: str, weeks: int, target: float) -> None:
    """The plants side by side for one alloy (when the log names two or more plants)."""
    if len(common.load("plant_options", every_plant=True)) < 2:
        return
    st.subheader("Plants side by side")
    alloys = common.load("alloy_options", every_plant=True)
    alloy = st.selectbox("Alloy", alloys, format_func=lambda k: k.replace("_", " "), key="compare_alloy")
    data = common.load("compare_plants", alloy, week=week, weeks=weeks, target=target / 100.0,
                       every_plant=True)
    table = views.plant_comparison_table(data)
    st.dataframe(table, hide_index=True, width="stretch", key="plants_table")
    st.altair_chart(charts.plant_rates(table), width="stretch")
    st.caption(f"Each plant's {alloy.replace('_', ' ')} patterns over the same window: reject rate with its 95 % "
               "range. Ranges that overlap do not show a difference between the plants.")


main()
