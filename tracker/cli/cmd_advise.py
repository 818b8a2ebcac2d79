"""Methods commands: riser suggestions, what-if, and the reject model."""

from __future__ import annotations

from typing import Any

import click

from tracker import units
from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import (
    db_option,
    json_option,
    measure_option,
    open_store,
    plant_option,
    take_measures,
    target_option,
    units_option,
    week_option,
    weeks_option,
    who,
)
from tracker.cli.output import caution_text, emit, show_progress, table
from tracker.cli.steps import Steps
from tracker.log.settings import DEFAULT_CURRENCY, currency, resolve_units
from tracker.numbers import money_text, pct_text

remelt_option = click.option(
    "--remelt-charge", "--riser-metal-charge", "remelt_charge", type=float, default=None,
    help="Share of the metal price lost on metal poured that does not ship, charged alike on "
         "scrapped castings and on extra riser metal: melting, handling, melt loss (default 0.3; common "
         "practice 0.2 to 0.4, shop practice varies). --riser-metal-charge is its old name.")
basis_note = ("Money basis: the predicted rate now is the zone's calibrated rate (the reject model's rate "
              "for its design updated by the zone's own castings and shrinkage rejects), the rate after is "
              "that rate shifted by the model's change for the new design; scrap saved per year = castings "
              "per year x (predicted now - predicted after) x cost per scrapped casting. Ranges are 90 % "
              "intervals.")


@command()
@click.option("--pattern", default=None, help="Only this pattern (default: every problem pattern of the review).")
@target_option
@week_option
@weeks_option
@measure_option("step_mm", "The shop's standard riser diameter step, {unit} (default 10 mm, or 1/2 in "
                "in us units).")
@remelt_option
@click.option("--refit", is_flag=True, help="Refit the reject model before suggesting.")
@click.option("--thermal/--no-thermal", default=None,
              help="Check each chosen riser by a solidification solve, taking the next candidate where it "
                   "fails (default: on when the solves of all problem zones fit in a minute).")
@units_option
@plant_option
@db_option
@json_option
@handle_errors
def suggest(pattern, target, week, weeks, remelt_charge, refit, thermal, units_override, plant, db_path, as_json,
            **measures):
    """Suggest riser changes for problem patterns, with yield and money.

    For each zone with shrinkage above the target: enlarge the riser (in
    diameter steps), fit a catalogue sleeve, both, or widen the neck. Of the
    changes that meet every rule, the one with the highest yearly balance
    is shown where one pays off (reaching the target is shown, not
    required); where none pays off, the cheapest, said so. Patterns whose
    rejects are not shrinkage get "no_riser_change" with the reason.

    Money basis: the predicted rate now is the zone's calibrated rate (the
    reject model's rate for its design updated by the zone's own castings
    and shrinkage rejects), the rate after that rate shifted by the model's
    change for the new design (the observed rate is shown beside them), each
    with a 90 % interval; scrap saved per year = castings per year x
    (predicted now - predicted after) x cost per scrapped casting. A
    scrapped casting costs its processing in full plus the remelt charge on
    its metal; extra riser metal costs the remelt charge.

    Example:

        pourback suggest --target 0.02 --remelt-charge 0.3
    """
    from tracker.advice.suggest import suggest as run

    with Steps(show_progress(as_json)) as steps, open_store(db_path) as store:
        system = resolve_units(store, units_override)
        step_mm = take_measures(system, measures, "step_mm")["step_mm"]
        step_mm = units.default_step_mm(system) if step_mm is None else step_mm
        steps.step("Suggesting riser changes" + (" (refitting the model first)" if refit else ""))
        rows = run(store, pattern=pattern, target=target, week=week, weeks=weeks, step_mm=step_mm, refit=refit,
                   remelt_charge=remelt_charge, thermal=thermal, plant=plant, system=system)
        code = currency(store)
    rows = [units.convert_record(r, system) for r in rows]
    emit(rows, as_json, lambda found: _format(found, code, system))


def _format(rows: list[dict], code: str = DEFAULT_CURRENCY, system: str = units.METRIC) -> str:
    if not rows:
        return "No suggestions: no problem pattern in the review window.\n\n" + caution_text()
    show = []
    key = {k: units.column_name(k, system) for k in
           ("current_diameter_mm", "suggested_diameter_mm", "added_metal_kg_per_mold")}
    digits = ".0f" if system != units.US else ".2f"
    for r in rows:
        change = "-"
        if r["action"] != "no_riser_change":
            change = (f"{r[key['current_diameter_mm']]:{digits}} -> {r[key['suggested_diameter_mm']]:{digits}} "
                      f"{units.symbol('diameter_mm', system)}")
            if r.get("suggested_sleeve"):
                change += f" + {r['suggested_sleeve']}"
        changed = r["action"] != "no_riser_change"
        show.append({**r, "change": change, "observed": pct_text(r["reject_rate"]),
                     "now": pct_text(r["predicted_rate_now"]),
                     "after": pct_text(r["predicted_rate_after"]) if changed else None,
                     "yield": None if r["yield_before"] is None else
                     f"{r['yield_before']:.1%} -> {r['yield_after']:.1%}",
                     "saved": money_text(r["scrap_saved_per_year"]) if changed else None,
                     "extra": money_text(r["extra_cost_per_year"]) if changed else None,
                     "balance": money_text(r["yearly_balance"]) if changed else None,
                     "range": _range(r, "yearly_balance", money_text) if changed else None,
                     "chance": pct_text(r.get("probability_pays_off"), 0) if changed else None,
                     "pays": ("yes" if r["pays_off"] else "no") if changed else None})
    out = [table(show, [("pattern", "pattern"), ("zone", "zone"), ("riser", "riser"), ("action", "action"),
                        ("change", "change"), ("observed", "observed now"), ("now", "predicted now"),
                        ("after", "predicted after"),
                        (key["added_metal_kg_per_mold"],
                         f"added metal ({units.symbol('added_metal_kg_per_mold', system)}/mould)"),
                        ("yield", "yield"), ("saved", f"scrap saved ({code}/yr)"),
                        ("extra", f"extra cost ({code}/yr)"), ("balance", f"balance ({code}/yr)"),
                        ("range", f"balance 90 % ({code}/yr)"), ("chance", "chance it pays"),
                        ("pays", "pays off")])]
    charge = rows[0].get("remelt_charge")
    out.append("")
    out.append(basis_note + (f" Remelt charge {charge:g} of the metal price." if charge is not None else ""))
    out.append("")
    for r in rows:
        out.append(f"{r['pattern']}" + (f" {r['zone']}" if r["zone"] else "") + f": {r['reason']}")
    out.append("\n" + caution_text())
    return "\n".join(out)


@command("what-if")
@click.option("--pattern", required=True, help="Pattern code.")
@click.option("--riser", required=True, help="Riser code in the pattern's current revision.")
@measure_option("diameter_mm", "New diameter, {unit} (keeps H/D unless a new height is given). With a "
                "sleeve: the catalogue's sleeve of the same kind and this inner diameter.")
@measure_option("height_mm", "New height, {unit}.")
@click.option("--sleeve", default="keep", show_default=True,
              help="Catalogue sleeve code, 'none' for a bare riser, or keep.")
@week_option
@weeks_option
@remelt_option
@click.option("--thermal", is_flag=True,
              help="Add the thermal check of the changed riser (a solidification solve): thermal_ok, "
                   "thermal_verdict (pass, fail or inconclusive), last_to_freeze.")
@click.option("--save-revision", "save_revision", default=None, metavar="REV",
              help="Save the change as the pattern's next riser revision REV (every riser it does not "
                   "change is carried over); needs --effective-from.")
@click.option("--effective-from", "effective_from", default=None, metavar="YYYY-MM-DD",
              help="The day the saved revision takes effect (after the newest revision's).")
@click.option("--by", default=None, help="Who saves the revision (recorded in the audit; default: login name).")
@units_option
@db_option
@json_option
@handle_errors
def what_if(pattern, riser, sleeve, week, weeks, remelt_charge, thermal, save_revision, effective_from, by,
            units_override, db_path, as_json, **measures):
    """Show the margins, predicted rate, yield and money of a changed riser.

    The money is priced as in `suggest`, on the same basis: the zone's
    calibrated rate now and shifted by the model for the change (with 90 %
    intervals and the chance it pays off), castings per year over the
    window, the remelt charge on scrapped castings and extra riser metal.

    With --save-revision and --effective-from the change is stored as the
    pattern's next riser revision: the changed riser (and the risers on its
    zone that fail the rules, priced with the same change), every other
    riser of the newest revision carried over as it is. The save is audited.

    Example:

        pourback what-if --pattern P-1017 --riser R3 --diameter-mm 130
    """
    from tracker.advice.what_if import what_if as run

    if effective_from is not None and save_revision is None:
        raise click.UsageError("--effective-from needs --save-revision REV")
    if save_revision is not None and effective_from is None:
        raise click.UsageError("--save-revision needs --effective-from YYYY-MM-DD (the day the revision takes "
                               "effect)")
    with open_store(db_path) as store:
        system = resolve_units(store, units_override)
        m = take_measures(system, measures, "diameter_mm", "height_mm")
        if save_revision is not None:  # refused before the pricing, not after it
            from tracker.log.ingest.next_revision import check_next_revision

            check_next_revision(store, pattern, None, save_revision, effective_from)
        r = run(store, pattern, riser, diameter_mm=m["diameter_mm"], height_mm=m["height_mm"], sleeve=sleeve,
                week=week, weeks=weeks, remelt_charge=remelt_charge, system=system)
        if thermal:
            from tracker.thermal.checks import what_if_fields

            t = what_if_fields(store, r)
            r.update(thermal_ok=t["thermal_ok"], thermal_verdict=t["thermal_verdict"],
                     last_to_freeze=t["last_to_freeze"])
        if save_revision is not None:
            from tracker.advice.next_revision import save_what_if

            saved = save_what_if(store, r, save_revision, effective_from, by=who(by))
            r["saved_revision"] = {k: saved[k] for k in ("revision", "effective_from", "base", "changed",
                                                          "carried_over")}
        code = currency(store)
    r = units.convert_record(r, system)
    emit(r, as_json, lambda found: _what_if_text(found, code, system))


def _what_if_text(r: dict, code: str = DEFAULT_CURRENCY, system: str = units.METRIC) -> str:
    from tracker.design.assess import rule_words

    def v(name: str) -> Any:
        return r[units.column_name(name, system)]

    size = (f"{v('diameter_mm'):.0f} x {v('height_mm'):.0f} mm" if system != units.US else
            f"{v('diameter_mm'):.2f} x {v('height_mm'):.2f} in")
    sleeve = f", sleeve {r['sleeve']}" if r["sleeve"] else ", bare"
    passes = "yes" if r["passes"] else "no: " + rule_words(r["failed_rules"])
    design = [f"{r['pattern']} riser {r['riser']} (zone {r['zone']}): {size}{sleeve}",
              table(_what_if_figures(r)),
              f"passes every rule: {passes} (rule set: {r['rule_set'].replace('_', ' ')})",
              f"added metal per mould: {v('added_metal_kg_per_mold'):.2f} "
              f"{units.symbol('added_metal_kg_per_mold', system)}"]
    if "thermal_ok" in r:
        design.append(f"thermal check: {r['thermal_verdict']}, "
                      f"last to freeze: {r['last_to_freeze']}")
    pays = "yes" if r["pays_off"] else "no" if r["changed"] else "- (no change)"
    also = [x for x in r["changed_risers"] if x != r["riser"]]
    if also:
        pays += f" (priced with the same change on {', '.join(also)}, which fail the rules on the same zone)"
    money = [table(_what_if_money(r, code)), f"pays off: {pays}",
             f"{basis_note} Cost per scrapped casting {money_text(r['cost_per_scrapped_casting'])} {code}; remelt "
             f"charge {r['remelt_charge']:g}."]
    out = "\n".join(design) + "\n\n" + "\n".join(money) + "\n\n" + caution_text()
    if "saved_revision" in r:
        out += "\n\n" + saved_text(r["pattern"], r["saved_revision"])
    return out


def saved_text(pattern: str, saved: dict) -> str:
    """One line on a revision saved from a what-if."""
    kept = saved["carried_over"]
    return (f"Saved as revision {saved['revision']} of {pattern}, in effect from {saved['effective_from']} "
            f"(after revision {saved['base']}): changed {', '.join(saved['changed'])}; "
            + (f"carried over {', '.join(kept)} unchanged." if kept else "no other riser to carry over."))


def _range(r: dict, key: str, fmt) -> str | None:
    """"low to high" of a figure's 90 % interval (``key``_low, ``key``_high), None where unknown."""
    lo, hi = r.get(key + "_low"), r.get(key + "_high")
    return None if lo is None or hi is None else f"{fmt(lo)} to {fmt(hi)}"


def _what_if_figures(r: dict) -> list[dict]:
    """The rule margins, shrinkage rates and yield, now and changed."""
    rows = [{"figure": k.replace("_", " "), "now": r.get(k + "_now"), "changed": r[k]} for k in
            ("modulus_ratio", "caine_margin", "feed_margin")]
    rows += [{"figure": "shrinkage rate, observed", "now": pct_text(r["observed_rate"], 2), "changed": None},
             {"figure": "shrinkage rate, predicted", "now": pct_text(r["predicted_rate_now"], 2),
              "changed": pct_text(r["predicted_rate_after"], 2)},
             {"figure": "predicted, 90 % interval", "now": _range(r, "predicted_rate_now", lambda v: pct_text(v, 2)),
              "changed": _range(r, "predicted_rate_after", lambda v: pct_text(v, 2))},
             {"figure": "yield", "now": pct_text(r["yield_before"]), "changed": pct_text(r["yield_after"])}]
    return rows


def _what_if_money(r: dict, code: str) -> list[dict]:
    """The money per year of the change, in currency ``code``."""
    return [{"per year": "castings", "value": money_text(r["castings_per_year"])},
            {"per year": f"scrap saved ({code})", "value": money_text(r["scrap_saved_per_year"])},
            {"per year": f"extra riser metal ({code})", "value": money_text(r["extra_metal_cost_per_year"])},
            {"per year": f"sleeves ({code})", "value": money_text(r["sleeve_cost_per_year"])},
            {"per year": f"balance ({code})", "value": money_text(r["yearly_balance"])},
            {"per year": f"balance, 90 % interval ({code})", "value": _range(r, "yearly_balance", money_text)},
            {"per year": "chance it pays off", "value": pct_text(r.get("probability_pays_off"), 0)}]


@command("fit-model")
@click.option("--alpha", type=float, default=10.0, show_default=True,
              help="Pull toward the rule-based prior, in castings (more: leans on the rules).")
@click.option("--folds", type=click.IntRange(2, 100), default=5, show_default=True,
              help="Cross-validation folds (grouped by pattern).")
@db_option
@json_option
@handle_errors
def fit_model(alpha, folds, db_path, as_json):
    """Refit the shrinkage reject model on the log and report how well it
    predicts patterns it has not seen (grouped cross-validation).

    Example:

        pourback fit-model
    """
    from tracker.advice.features import fit_table
    from tracker.advice.fitting import fit_model as fit
    from tracker.advice.model import ShrinkageRejectModel, cross_validate

    with Steps(show_progress(as_json)) as steps, open_store(db_path) as store:
        steps.step("Reading the lots and rejects")
        feats = fit_table(store)  # read once, for the fit and the cross-validation
        steps.step("Fitting the reject model")
        model = fit(store, alpha=alpha, table=feats)
        if model is None:
            raise click.ClickException("the log has no lots under a known riser design; import risers and lots "
                                       "first")
        cv = None
        if feats["pattern"].nunique() >= 2:
            steps.step(f"Cross-validating ({folds} folds, grouped by pattern)")
            cv = cross_validate(feats, n_splits=folds, model=ShrinkageRejectModel(alpha=alpha))
    coef = model.coefficients_.to_dict("records")
    data = {"fitted_on": model.fitted_on_, "rows": int(model.n_rows_), "castings": int(model.n_castings_),
            "data_until": model.data_until_, "coefficients": coef}
    if cv is not None:
        data["cross_validation"] = {k: cv[k] for k in ("model", "baseline") if k in cv}
        for k in ("model", "baseline"):
            data["cross_validation"][k] = {kk: vv for kk, vv in cv[k].items() if kk != "bins"}

    emit(data, as_json, _format_fit)


def _format_fit(d: dict) -> str:
    out = [f"Fitted on {d['rows']} rows ({d['castings']} castings) up to {d['data_until']}.", "",
           table(d["coefficients"], [("term", "term"), ("coefficient", "coefficient"), ("prior", "prior"),
                                     ("unit", "meaning")])]
    if "cross_validation" in d:
        m, b = d["cross_validation"]["model"], d["cross_validation"]["baseline"]
        out += ["", "Grouped cross-validation by pattern (log loss per casting, lower is better):",
                f"  model     {m['log_loss']:.4f}   predicted/observed rejects {m['calibration_ratio']:.2f}",
                f"  one rate  {b['log_loss']:.4f}   predicted/observed rejects {b['calibration_ratio']:.2f}"]
    return "\n".join(out)
