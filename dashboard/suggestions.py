"""Suggestions: riser changes for flagged patterns with their yield and money, and a what-if."""

from __future__ import annotations

import streamlit as st

from dashboard import access, charts, common, save_revision, thermal_view
from tracker import units
from tracker.advice import pricing
from tracker.advice import what_if as what_if_run
from tracker.design.assess import rule_words
from tracker.thermal.checks import AUTO_BUDGET_S
from tracker.views import suggestions as views
from tracker.views.common import label, length_text

NUMBER = st.column_config.NumberColumn
KEEP, BARE = "keep", "none"
DIAMETER_RANGE_MM = (10.0, 2000.0)  # what the what-if's diameter field takes
THERMAL_NOTE = ("Thermal filter: as `pourback suggest` does by default, each chosen riser is checked by a 2-D "
                "solidification solve and the next candidate is taken where it fails, when the solves of all "
                f"problem zones fit in {AUTO_BUDGET_S:.0f} s; otherwise a row's reason says the check was not "
                "run (`pourback suggest --thermal` runs it). The same log gives the same risers here and there.")


def suggestion_list(week: str, weeks: int, target: float, charge: float) -> list[dict]:
    system = common.unit_system()
    status = ("Pricing riser changes for the problem patterns and checking each chosen riser by a "
              "solidification solve (a few seconds per zone)")
    if not common.load("model_is_current"):
        status = ("Fitting the reject model on the whole log (no stored fit covers the newest pours), "
                  "then " + status[0].lower() + status[1:])
    # the library call of `pourback suggest` with its metric defaults: the thermal check on where
    # the solves of all problem zones fit in its budget. The diameter step stays the metric one in
    # either unit system, so the page suggests the same risers in inches as in mm.
    found = common.load("suggest", target=target / 100.0, week=week, weeks=weeks, remelt_charge=charge,
                        thermal=None, system=system, status=status)
    st.subheader("Suggested changes")
    if not found:
        st.success(f"No pattern is flagged in the {weeks} weeks up to {week} at a target of {target:g} %.")
        return []
    code = common.load("currency")
    money = views.money_per_year(code)
    table = views.suggestions_table(found, currency=code, system=system)
    st.markdown("**What to change**")
    st.dataframe(table[views.change_part(system)], hide_index=True, width="stretch", key="suggestions_table",
                 placeholder="", column_config=common.pinned({
                     label("now: diameter (mm)", system): NUMBER(format=common.length_format()),
                     label("suggested: diameter (mm)", system): NUMBER(format=common.length_format())},
                     "pattern", "riser", label("now: diameter (mm)", system),
                     label("suggested: diameter (mm)", system)))
    st.markdown("**What it brings**")
    st.dataframe(table[views.balance_part(code, system)], hide_index=True, width="stretch", key="balance_table",
                 placeholder="", column_config=common.pinned({
                     "observed now (%)": NUMBER(format="%.2f"), "predicted now (%)": NUMBER(format="%.2f"),
                     "predicted after (%)": NUMBER(format="%.2f"),
                     label("added metal (kg per mold)", system): NUMBER(format="%+.2f"),
                     "yield now (%)": NUMBER(format="%.1f"),
                     "yield after (%)": NUMBER(format="%.1f"),
                     f"scrap saved ({money})": NUMBER(format="%,.0f"),
                     f"extra cost ({money})": NUMBER(format="%,.0f"),
                     f"balance ({money})": NUMBER(format="%+,.0f"),
                     "chance it pays off (%)": NUMBER(format="%.0f")},
                     "pattern", "observed now (%)", "predicted after (%)"))
    st.caption("Observed now: " + common.md_escape(views.observed_scope(week, weeks)) + " (all rejects of the "
               "pattern where no riser change is suggested). Predicted now: the zone's calibrated rate, the "
               "reject model's rate for its design updated by the zone's own castings and shrinkage rejects "
               "(a zone with many castings speaks for itself). Predicted after: that rate shifted by the "
               "model's change for the new riser. Ranges are 90 % intervals, from the zone's own counts and "
               "the model's uncertainty; the chance it pays off is the share of those outcomes with a "
               "balance above 0. The money is on that one basis: scrap saved = "
               "castings per year × (predicted now − predicted after) × cost per scrapped casting. Extra "
               "cost: added riser metal at the remelt charge, and the change in sleeve cost. Yield: casting "
               "weight / (casting + riser weight), gating left out.")
    st.caption(THERMAL_NOTE)
    for s in found:
        where = " · ".join(str(x) for x in (s["pattern"], s.get("zone"), s.get("riser")) if x)
        with st.expander(common.md_escape(f"{where}: {s['action'].replace('_', ' ')}")):
            st.markdown(common.md_escape(s["reason"]))
            if s["action"] != "no_riser_change" and s.get("riser"):
                save_revision.save_form("suggestion", s, f"saverev_s_{s['pattern']}_{s['zone']}_{s['riser']}")
    return found


def _sleeve_picked(sleeves, row, sleeve_key: str, dia_key: str) -> None:
    """A sleeve picked: show its inner diameter (the riser's own for keep or bare)."""
    code = st.session_state[sleeve_key]
    if code in (KEEP, BARE):
        mm = float(row["diameter_mm"])
    else:
        mm = float(sleeves.loc[sleeves["sleeve"] == code, "inner_diameter_mm"].iat[0])
    st.session_state[dia_key] = float(common.shown("diameter_mm", mm))


def _diameter_typed(sleeves, row, sleeve_key: str, dia_key: str) -> None:
    """A diameter typed with a sleeve on: the catalogue's sleeve of the same
    kind and that size, where there is one (else the what-if says there is none)."""
    code = st.session_state[sleeve_key]
    if code == BARE or (code == KEEP and not isinstance(row["sleeve"], str)):
        return
    present = row["sleeve"] if code == KEEP else code
    kind = sleeves.loc[sleeves["sleeve"] == present, "kind"]
    mm = units.to_metric("diameter_mm", st.session_state[dia_key], common.unit_system())
    hit = what_if_run.same_kind_sleeve(sleeves, kind.iat[0], mm) if len(kind) else None
    if hit is not None:
        st.session_state[sleeve_key] = hit["sleeve"]


def what_if(found: list[dict], week: str, weeks: int, charge: float) -> None:
    st.subheader("What if")
    st.caption("Change one riser of a pattern's newest revision and see its rule margins, the predicted "
               "shrinkage rate, the yield and the money, priced as the suggestions are. Nothing is saved "
               "unless you save it as the next revision below.")
    system = common.unit_system()
    risers = common.load("riser_options", system=system)
    if risers.empty:
        st.info("No risers in the log yet.")
        return
    keys = list(zip(risers["pattern"], risers["riser"], strict=False))
    labels = dict(zip(keys, risers["label"], strict=False))
    first = next(((s["pattern"], s["riser"]) for s in found if s.get("riser")), keys[0])
    c1, c2, c3 = st.columns([2, 1, 1])
    key = c1.selectbox("Riser", keys, index=keys.index(first) if first in keys else 0,
                       format_func=labels.get, key="whatif_riser")
    row = risers[(risers["pattern"] == key[0]) & (risers["riser"] == key[1])].iloc[0]
    sleeves = common.load("sleeve_options", system=system)  # smallest first
    sleeve_labels = {KEEP: "keep as it is" + (f" ({row['sleeve']})" if isinstance(row["sleeve"], str) else
                                              " (no sleeve)"),
                     BARE: "no sleeve (bare riser)", **dict(zip(sleeves["sleeve"], sleeves["label"], strict=False))}
    # the typed diameter is kept per unit system: a number typed in inches is never read as mm
    sleeve_key = f"whatif_sleeve_{key[0]}_{key[1]}"
    dia_key = f"whatif_dia_{'us_' if system == units.US else ''}{key[0]}_{key[1]}"
    sleeve = c2.selectbox("Sleeve (smallest first)", list(sleeve_labels), format_func=sleeve_labels.get,
                          key=sleeve_key, on_change=_sleeve_picked, args=(sleeves, row, sleeve_key, dia_key))
    now = float(common.shown("diameter_mm", float(row["diameter_mm"])))
    st.session_state.setdefault(dia_key, now)  # set here, moved by the sleeve picked
    lo, hi = (float(common.shown("diameter_mm", mm)) for mm in DIAMETER_RANGE_MM)
    diameter = c3.number_input(f"Diameter ({common.unit('diameter_mm')})", min_value=lo, max_value=hi,
                               step=float(common.shown("diameter_mm", units.default_step_mm(system))),
                               format="%.2f" if system == units.US else "%.0f", key=dia_key,
                               on_change=_diameter_typed, args=(sleeves, row, sleeve_key, dia_key),
                               help="A sleeved riser takes the sleeve's inner diameter and height; a "
                                    "diameter typed with a sleeve takes the catalogue's sleeve of the same "
                                    "kind and that size. A bare riser keeps its height / diameter ratio.")
    # typed in the session's units, handed to the library in mm
    changed = None if diameter == now else float(units.to_metric("diameter_mm", diameter, system))
    result = None
    with common.guard():
        result = common.load("what_if", key[0], key[1], diameter_mm=changed,
                             sleeve=None if sleeve == BARE else sleeve, week=week, weeks=weeks,
                             remelt_charge=charge, system=system)
    if result is None:
        return
    size = " x ".join(length_text(result[k], system) for k in ("diameter_mm", "height_mm"))
    st.markdown(common.md_escape(
        f"{result['pattern']} revision {result['revision']}, riser {result['riser']} on zone "
        f"{result['zone']}: {size} {common.unit('diameter_mm')}, "
        + (f"sleeve {result['sleeve']}" if result["sleeve"] else "no sleeve")))
    _rule_metrics(result)
    _rate_metrics(result)
    _money_metrics(result)
    st.altair_chart(charts.margins(views.what_if_margins(result)), width="stretch", key="whatif_chart")
    thermal_view.what_if_section(result)
    save_revision.save_form("what_if", result, f"saverev_w_{key[0]}_{key[1]}", offer=result["changed"])


def _delta(new, now, fmt="{:+.2f}", unit=""):
    if new is None or now is None or abs(new - now) < 1e-9:
        return None
    return fmt.format(new - now) + unit


def _rule_metrics(result: dict) -> None:
    c = st.columns(4)
    c[0].metric("Modulus ratio (rule: 1.2 or more)", f"{result['modulus_ratio']:.2f}",
                delta=_delta(result["modulus_ratio"], result["modulus_ratio_now"]))
    if result["caine_margin"] is None:
        c[1].metric("Caine margin", "not applied", help="no Caine constants for this alloy")
    else:
        c[1].metric("Caine margin (0 or more passes)", f"{result['caine_margin']:+.2f}",
                    delta=_delta(result["caine_margin"], result["caine_margin_now"]))
    c[2].metric("Feed margin (0 or more passes)", f"{result['feed_margin']:+.2f}",
                delta=_delta(result["feed_margin"], result["feed_margin_now"]))
    failed = [r for r in result["failed_rules"].split(",") if r]
    c[3].metric("Rules", "all pass" if result["passes"] else f"{len(failed)} failed",
                help=None if result["passes"] else "failed: " + rule_words(failed))
    if failed:
        st.caption(common.md_escape("Rules failed: " + ", ".join(f.replace("_", " ") for f in failed) + "."))


def _rate_metrics(result: dict) -> None:
    def p(v):
        return None if v is None else 100 * v

    now, new = p(result["predicted_rate_now"]), p(result["predicted_rate_after"])
    c = st.columns(4)
    c[0].metric("Observed rate (log)", common.pct(p(result["observed_rate"]), 2),
                help=f"shrinkage rejects in zone {result['zone']} over the {result['zone_castings']:,} castings "
                     f"poured under this revision in the {result['weeks']} weeks up to {result['week']}")
    c[1].metric("Predicted rate now (calibrated)", common.pct(now, 2),
                help=_range_help(result, "predicted_rate_now"))
    c[2].metric("Predicted rate changed", common.pct(new, 2),
                delta=_delta(new, now, unit=" points"), delta_color="inverse",
                help=_range_help(result, "predicted_rate_after"))
    c[3].metric("Yield changed", common.pct(100 * result["yield_after"]),
                delta=_delta(100 * result["yield_after"], 100 * result["yield_before"], "{:+.1f}", " points"),
                help="now: " + common.pct(100 * result["yield_before"]))


def _balance_range(result: dict) -> str:
    """The yearly balance's 90 % interval and the chance the change pays off, for the metric's help."""
    lo, hi, chance = (result.get(k) for k in ("yearly_balance_low", "yearly_balance_high", "probability_pays_off"))
    if lo is None or hi is None or chance is None or not result.get("changed"):
        return ""
    return f"; 90 % interval {common.money(lo)} to {common.money(hi)}; chance it pays off {100 * chance:.0f} %"


def _range_help(result: dict, key: str) -> str | None:
    """The 90 % interval of a predicted rate, as a metric's help text."""
    lo, hi = result.get(key + "_low"), result.get(key + "_high")
    if lo is None or hi is None:
        return None
    return f"90 % interval {common.pct(100 * lo, 2)} to {common.pct(100 * hi, 2)}"


def _money_metrics(result: dict) -> None:
    """The money as in the suggestions, every figure headed with the log's currency: two columns,
    so the labels fit at tablet width."""
    code = common.load("currency")
    per_year = views.money_per_year(code)
    unit = f"; in {code} per year"
    rows = [(f"Extra riser metal ({per_year})", "extra_metal_cost_per_year",
             f"{common.shown('metal_kg', result['added_metal_kg_per_mold']):+.2f} {common.unit('metal_kg')} "
             "per mold at the remelt charge" + unit),
            (f"Sleeves ({per_year})", "sleeve_cost_per_year", "change in sleeve cost per casting" + unit),
            (f"Scrap saved ({per_year})", "scrap_saved_per_year",
             "castings per year × (predicted now − predicted changed) × cost per scrapped casting" + unit),
            (f"Yearly balance ({per_year})", "yearly_balance", "scrap saved less extra riser metal and sleeves" + unit
             + _balance_range(result))]
    for pair in (rows[:2], rows[2:]):
        c = st.columns(2)
        for col, (heading, key, note) in zip(c, pair, strict=False):
            delta = None
            if key == "yearly_balance" and result["changed"]:
                delta = "pays off" if result["pays_off"] else "does not pay off"
            col.metric(heading, common.money(result[key]), delta=delta, help=note,
                       delta_color="normal" if result["pays_off"] else "inverse")
    also = [r for r in result["changed_risers"] if r != result["riser"]]
    st.caption(common.md_escape(
        f"Priced as the suggestions are: {result['castings_per_year']:,.0f} castings a year, "
        f"{common.money(result['cost_per_scrapped_casting'])} {code} per scrapped casting (processing in full, "
        f"metal at the remelt charge {result['remelt_charge']:g})"
        + (f"; the same change on {', '.join(also)}, which fail the rules on the same zone" if also else "")
        + "."))


def main() -> None:
    common.header("Suggestions", "For each flagged pattern: which riser to resize or re-sleeve, by how much, "
                                 "what it costs in poured metal, and what the shop's history predicts.")
    save_revision.announce()
    state = common.load("start_state")
    if not state["ready"] or not state["has_design"]:
        common.start_message(state, "suggestions (they need risers, lots and inspections)")
        return
    week, weeks, target = common.review_controls()
    c1, _ = st.columns([1, 3])
    charge = float(c1.number_input("Remelt charge (share of metal price)", min_value=0.0, max_value=1.0,
                                   value=pricing.DEFAULT_REMELT_CHARGE, step=0.05, format="%.2f", key="remelt",
                                   help=f"What is lost on each {common.unit('metal_kg')} poured that does "
                                        "not ship (scrapped "
                                        "castings, extra riser metal): melting, handling, melt loss. "
                                        "Common practice 0.2 to 0.4 of the metal price; shop practice varies."))
    found = suggestion_list(week, weeks, target, charge)
    st.divider()
    if access.can("what_if"):
        what_if(found, week, weeks, charge)
    else:
        st.subheader("What if")
        st.caption(access.not_offered("what_if"))


main()
