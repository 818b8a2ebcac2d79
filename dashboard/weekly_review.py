"""Weekly review: scrap by pattern and defect, trend, control chart, riser revisions."""

from __future__ import annotations

import streamlit as st

from dashboard import charts, common
from tracker import views


def controls(weeks_available: list[str]) -> tuple[str, int, float]:
    c1, c2, c3 = st.columns([2, 1, 1])
    week = c1.selectbox("Review week (ISO week of pour)", weeks_available, key="week")
    weeks = c2.number_input("Weeks in the window", min_value=1, max_value=104, value=13, step=1,
                            key="weeks")
    target = c3.number_input("Target reject rate (%)", min_value=0.0, max_value=50.0, value=2.0, step=0.5,
                             format="%.1f", key="target")
    return week, int(weeks), float(target)


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
        c[3].metric(f"Scrap cost, {name} (currency units)", common.money(t["scrap_cost"]))
    flagged = h["problems"]
    st.markdown(f"**Patterns flagged:** {len(flagged)} of {h['patterns']} poured"
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


def scrap(review: dict) -> None:
    st.subheader("Where the scrap is")
    c1, c2 = st.columns(2)
    of = c1.radio("Rank", ["patterns", "defects"], horizontal=True, key="pareto_of")
    by = c2.radio("By", ["cost", "count"], horizontal=True, key="pareto_by",
                  format_func={"cost": "scrap cost", "count": "castings rejected"}.get)
    data = views.review_pareto(review, of, by)
    item = "pattern" if of == "patterns" else "defect"
    value = "scrap cost (currency units)" if by == "cost" else "castings rejected"
    st.altair_chart(charts.pareto(data, item, value, item), width="stretch")
    st.caption("Bars: the window's scrap, largest first (faded after the items that make up 80 %). "
               "Line: cumulative share (%, right axis).")


def trend(review: dict) -> None:
    st.subheader("Trend")
    st.altair_chart(charts.trend(views.review_trend(review), 100.0 * review["target"]), width="stretch")
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
    st.altair_chart(charts.p_chart(chart), width="stretch")
    row = next(p for p in rows if p["pattern"] == code)
    fired = views.signal_words(row["signal_rules"])
    why = views.reason_words(row["problem_reasons"])
    st.caption("Weekly reject rate against the pattern's centre (dashed: its rate over the window); the "
               "shaded bar of each week runs between its limits, 3 standard errors either side of the "
               "centre (wider in weeks with fewer castings). Weeks with nothing inspected are left blank. "
               + (f"Signal in the last 2 weeks: {fired}. " if fired else "No signal in the last 2 weeks. ")
               + (f"Flagged: {why}." if why else "Not flagged."))


def revisions(review: dict) -> None:
    st.subheader("Riser revisions under judgement")
    table = views.review_revisions_table(review)
    if table.empty:
        st.caption("No riser revision took effect in this window or is still waiting for data.")
        return
    for row in table.to_dict("records"):
        with st.container(border=True):
            c1, c2, c3 = st.columns([3, 2, 1])
            c1.markdown(common.md_escape(f"{row['pattern']} revision {row['revision']}, "
                                         f"in effect from {row['effective from']}"))
            c1.caption(common.md_escape(row["what changed"]))
            c2.markdown(common.md_escape(f"Before: {row['before: shrinkage rejects']}"))
            c2.markdown(common.md_escape(f"After: {row['after: shrinkage rejects']}"))
            p = row["p-value (Fisher)"]
            d = row["change (% points)"]
            c3.markdown("**Verdict:** " + common.md_escape(row["verdict"]))
            c3.caption(("" if d != d else f"change {d:+.1f} % points")
                       + ("" if p is None or p != p else f"; Fisher's exact test p = {p:.2g}"))
    st.caption("Shrinkage rejects of castings inspected, in the zones of the changed risers: lots poured "
               "under the previous revision against lots poured since. 'Not enough data yet' means the "
               "castings since the change are too few to tell a halving of the rate from chance.")


def download(review: dict) -> None:
    from tracker import report

    html = report.render(review, "html")
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
    week, weeks, target = controls(common.load("week_options"))
    review = common.load("weekly_review", week=week, weeks=weeks, target=target / 100.0)
    if not review["patterns"]:
        st.info(f"Nothing was poured in the {weeks} weeks up to {week}. Pick another week.")
        return
    headline(review)
    download(review)
    changes(review)
    scrap(review)
    trend(review)
    st.subheader("Patterns in the window")
    patterns = views.review_patterns_table(review)
    st.dataframe(patterns, hide_index=True, width="stretch",
                 key="patterns_table",
                 placeholder="",
                 column_config={"reject rate (%)": st.column_config.NumberColumn(format="%.2f"),
                                "scrap cost (currency units)": st.column_config.NumberColumn(format="%.0f")})
    common.download_csv(patterns, "Download the patterns table (CSV)", f"pourback-patterns-{review['week']}.csv",
                        key="download_patterns")
    control(review)
    revisions(review)


main()
