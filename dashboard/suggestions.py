"""Suggestions: riser changes for flagged patterns with their yield and cost, and a what-if."""

from __future__ import annotations

import streamlit as st

from dashboard import access, charts, common
from tracker import views

NUMBER = st.column_config.NumberColumn
KEEP, BARE = "keep", "none"


def suggestion_list(week: str, weeks: int, target: float) -> list[dict]:
    found = common.load("suggest", target=target / 100.0, week=week, weeks=weeks)
    st.subheader("Suggested changes")
    if not found:
        st.success(f"No pattern is flagged in the {weeks} weeks up to {week} at a target of {target:g} %.")
        return []
    table = views.suggestions_table(found)
    st.markdown("**What to change**")
    st.dataframe(table[views.CHANGE_PART], hide_index=True, width="stretch", key="suggestions_table",
                 placeholder="", column_config={
                     "now: diameter (mm)": NUMBER(format="%.0f"),
                     "suggested: diameter (mm)": NUMBER(format="%.0f")})
    st.markdown("**What it brings**")
    st.dataframe(table[views.BALANCE_PART], hide_index=True, width="stretch", key="balance_table",
                 placeholder="", column_config={
                     "reject rate now (%)": NUMBER(format="%.2f"), "predicted after (%)": NUMBER(format="%.2f"),
                     "added metal (kg per mold)": NUMBER(format="%+.2f"), "yield now (%)": NUMBER(format="%.1f"),
                     "yield after (%)": NUMBER(format="%.1f"),
                     "balance (currency units/year)": NUMBER(format="%+,.0f")})
    st.caption("Reject rate now: shrinkage rejects in the zone (or all rejects where no riser change is "
               "suggested), % of castings poured in the window. Predicted after: the shop's reject model "
               "for the changed riser. Yield: casting weight / (casting + riser weight), gating left out. "
               "Yearly balance: scrap saved less extra metal and sleeves, at this window's pour rate "
               "(currency units per year).")
    for s in found:
        where = " · ".join(str(x) for x in (s["pattern"], s.get("zone"), s.get("riser")) if x)
        with st.expander(common.md_escape(f"{where}: {s['action'].replace('_', ' ')}")):
            st.markdown(common.md_escape(s["reason"]))
    return found


def what_if(found: list[dict]) -> None:
    st.subheader("What if")
    st.caption("Change one riser of a pattern's newest revision and see its rule margins, the predicted "
               "shrinkage rate and the yield. Nothing is saved.")
    risers = common.load("riser_options")
    if risers.empty:
        st.info("No risers in the log yet.")
        return
    keys = list(zip(risers["pattern"], risers["riser"]))
    labels = dict(zip(keys, risers["label"]))
    first = next(((s["pattern"], s["riser"]) for s in found if s.get("riser")), keys[0])
    c1, c2, c3 = st.columns([2, 1, 1])
    key = c1.selectbox("Riser", keys, index=keys.index(first) if first in keys else 0,
                       format_func=labels.get, key="whatif_riser")
    row = risers[(risers["pattern"] == key[0]) & (risers["riser"] == key[1])].iloc[0]
    sleeves = common.load("sleeve_options")
    sleeve_labels = {KEEP: "keep as it is" + (f" ({row['sleeve']})" if isinstance(row["sleeve"], str) else
                                              " (no sleeve)"),
                     BARE: "no sleeve (bare riser)", **dict(zip(sleeves["sleeve"], sleeves["label"]))}
    sleeve = c2.selectbox("Sleeve", list(sleeve_labels), format_func=sleeve_labels.get,
                          key=f"whatif_sleeve_{key[0]}_{key[1]}")
    catalogue = sleeve not in (KEEP, BARE)
    sleeved_now = isinstance(row["sleeve"], str) and sleeve == KEEP
    diameter = c3.number_input("Diameter (mm)", min_value=10.0, max_value=2000.0,
                               value=float(row["diameter_mm"]), step=10.0, format="%.0f",
                               key=f"whatif_dia_{key[0]}_{key[1]}", disabled=catalogue or sleeved_now,
                               help="A sleeved riser takes the sleeve's inner diameter; the height keeps "
                                    "the present height / diameter ratio.")
    changed = None if (catalogue or sleeved_now or diameter == float(row["diameter_mm"])) else float(diameter)
    result = common.load("what_if", key[0], key[1], diameter_mm=changed,
                         sleeve=None if sleeve == BARE else sleeve)

    st.markdown(common.md_escape(
        f"{result['pattern']} revision {result['revision']}, riser {result['riser']} on zone "
        f"{result['zone']}: {result['diameter_mm']:g} x {result['height_mm']:g} mm, "
        + (f"sleeve {result['sleeve']}" if result["sleeve"] else "no sleeve")))
    def delta(new, now, fmt="{:+.2f}", unit=""):
        if new is None or now is None or abs(new - now) < 1e-9:
            return None
        return fmt.format(new - now) + unit

    c = st.columns(4)
    c[0].metric("Modulus ratio (rule: 1.2 or more)", f"{result['modulus_ratio']:.2f}",
                delta=delta(result["modulus_ratio"], result["modulus_ratio_now"]))
    if result["caine_margin"] is None:
        c[1].metric("Caine margin", "not applied", help="no Caine constants for this alloy")
    else:
        c[1].metric("Caine margin (0 or more passes)", f"{result['caine_margin']:+.2f}",
                    delta=delta(result["caine_margin"], result["caine_margin_now"]))
    c[2].metric("Feed margin (0 or more passes)", f"{result['feed_margin']:+.2f}",
                delta=delta(result["feed_margin"], result["feed_margin_now"]))
    failed = [r for r in result["failed_rules"].split(",") if r]
    c[3].metric("Rules", "all pass" if result["passes"] else f"{len(failed)} failed",
                help=None if result["passes"] else "failed: " + ", ".join(failed))
    c = st.columns(4)
    now, new = result.get("predicted_rate_now"), result.get("predicted_rate")
    c[0].metric("Predicted shrinkage rate", common.pct(None if new is None else 100 * new, 2),
                delta=delta(None if new is None else 100 * new, None if now is None else 100 * now,
                            unit=" points"),
                delta_color="inverse", help="now: " + common.pct(None if now is None else 100 * now, 2))
    c[1].metric("Yield now", common.pct(100 * result["yield_before"]))
    c[2].metric("Yield changed", common.pct(100 * result["yield_after"]),
                delta=delta(100 * result["yield_after"], 100 * result["yield_before"], "{:+.1f}", " points"))
    c[3].metric("Added metal (kg per mold)", f"{result['added_metal_kg_per_mold']:+.2f}")
    if failed:
        st.caption(common.md_escape("Rules failed: " + ", ".join(f.replace("_", " ") for f in failed) + "."))
    st.altair_chart(charts.margins(views.what_if_margins(result)), width="stretch", key="whatif_chart")


def main() -> None:
    common.header("Suggestions", "For each flagged pattern: which riser to resize or re-sleeve, by how much, "
                                 "what it costs in poured metal, and what the shop's history predicts.")
    state = common.load("start_state")
    if not state["ready"] or not state["has_design"]:
        common.start_message(state, "suggestions (they need risers, lots and inspections)")
        return
    week, weeks, target = common.review_controls()
    found = suggestion_list(week, weeks, target)
    st.divider()
    if access.can("what_if"):
        what_if(found)
    else:
        st.subheader("What if")
        st.caption(access.not_offered("what_if"))


main()
