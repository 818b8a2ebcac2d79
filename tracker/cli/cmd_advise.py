"""Methods commands: riser suggestions, what-if, and the reject model."""

from __future__ import annotations

import click

from tracker.cli import (caution_text, db_option, emit, handle_errors, json_option, main, open_store, table,
                         target_option, week_option, weeks_option)


@main.command()
@click.option("--pattern", default=None, help="Only this pattern (default: every problem pattern of the review).")
@target_option
@week_option
@weeks_option
@click.option("--step-mm", type=float, default=10.0, show_default=True,
              help="The shop's standard riser diameter step, mm.")
@click.option("--riser-metal-charge", type=float, default=1.0, show_default=True,
              help="Share of the metal cost per kg charged for extra riser metal (1 = full cost; "
                   "less where returns are remelted).")
@click.option("--refit", is_flag=True, help="Refit the reject model before suggesting.")
@db_option
@json_option
@handle_errors
def suggest(pattern, target, week, weeks, step_mm, riser_metal_charge, refit, db_path, as_json):
    """Suggest riser changes for problem patterns, with yield and cost.

    For each zone with shrinkage above the target: enlarge the riser (in
    diameter steps), fit a catalogue sleeve, both, or widen the neck; the
    cheapest that meets every rule and the target rate is shown. Patterns
    whose rejects are not shrinkage get "no_riser_change" with the reason.

    Example:

        pourback suggest --target 0.02
    """
    from tracker.advise import suggest as run

    with open_store(db_path) as store:
        rows = run(store, pattern=pattern, target=target, week=week, weeks=weeks, step_mm=step_mm, refit=refit,
                   riser_metal_charge=riser_metal_charge)
    emit(rows, as_json, _format)


def _format(rows: list[dict]) -> str:
    if not rows:
        return "No suggestions: no problem pattern in the review window.\n\n" + caution_text()
    show = []
    for r in rows:
        change = "-"
        if r["action"] != "no_riser_change":
            change = f"{r['current_diameter_mm']:.0f} -> {r['suggested_diameter_mm']:.0f} mm"
            if r.get("suggested_sleeve"):
                change += f" + {r['suggested_sleeve']}"
        show.append({**r, "change": change,
                     "rate": None if r["reject_rate"] is None else f"{r['reject_rate']:.1%}",
                     "after": None if r["predicted_rate_after"] is None else f"{r['predicted_rate_after']:.1%}",
                     "yield": None if r["yield_before"] is None else
                     f"{r['yield_before']:.1%} -> {r['yield_after']:.1%}"})
    out = [table(show, [("pattern", "pattern"), ("zone", "zone"), ("riser", "riser"), ("action", "action"),
                        ("change", "change"), ("rate", "shrinkage now"), ("after", "predicted after"),
                        ("added_metal_kg_per_mold", "added metal (kg/mould)"), ("yield", "yield"),
                        ("yearly_balance", "balance per year")])]
    out.append("")
    for r in rows:
        out.append(f"{r['pattern']}" + (f" {r['zone']}" if r["zone"] else "") + f": {r['reason']}")
    out.append("\n" + caution_text())
    return "\n".join(out)


@main.command("what-if")
@click.option("--pattern", required=True, help="Pattern code.")
@click.option("--riser", required=True, help="Riser code in the pattern's current revision.")
@click.option("--diameter-mm", type=float, default=None, help="New diameter, mm (keeps H/D unless --height-mm).")
@click.option("--height-mm", type=float, default=None, help="New height, mm.")
@click.option("--sleeve", default="keep", show_default=True,
              help="Catalogue sleeve code, 'none' for a bare riser, or keep.")
@db_option
@json_option
@handle_errors
def what_if(pattern, riser, diameter_mm, height_mm, sleeve, db_path, as_json):
    """Show the margins, predicted rate and yield of a changed riser.

    Example:

        pourback what-if --pattern P-1017 --riser R3 --diameter-mm 130
    """
    from tracker.advise import what_if as run

    with open_store(db_path) as store:
        r = run(store, pattern, riser, diameter_mm=diameter_mm, height_mm=height_mm, sleeve=sleeve)

    def human(r):
        rows = [{"figure": k, "now": r.get(k + "_now"), "changed": r[k]} for k in
                ("modulus_ratio", "caine_margin", "feed_margin", "predicted_rate")]
        rows.append({"figure": "yield", "now": r["yield_before"], "changed": r["yield_after"]})
        return (f"{r['pattern']} riser {r['riser']} (zone {r['zone']}): {r['diameter_mm']:.0f} x "
                f"{r['height_mm']:.0f} mm" + (f", sleeve {r['sleeve']}" if r["sleeve"] else ", bare") + "\n"
                + table(rows) + f"\npasses every rule: {'yes' if r['passes'] else 'no: ' + r['failed_rules']}"
                f"\nadded metal per mould: {r['added_metal_kg_per_mold']:.2f} kg\n\n" + caution_text())
    emit(r, as_json, human)


@main.command("fit-model")
@click.option("--alpha", type=float, default=10.0, show_default=True,
              help="Pull toward the rule-based prior, in castings (more: leans on the rules).")
@click.option("--folds", type=click.IntRange(2, 100), default=5, show_default=True, help="Cross-validation folds (grouped by pattern).")
@db_option
@json_option
@handle_errors
def fit_model(alpha, folds, db_path, as_json):
    """Refit the shrinkage reject model on the log and report how well it
    predicts patterns it has not seen (grouped cross-validation).

    Example:

        pourback fit-model
    """
    from tracker.advise import fit_model as fit
    from tracker.features import aggregate_for_fit, zone_lot_features
    from tracker.model import ShrinkageRejectModel, cross_validate

    with open_store(db_path) as store:
        model = fit(store, alpha=alpha)
        if model is None:
            raise click.ClickException("the log has no lots under a known riser design; import risers and lots first")
        feats = aggregate_for_fit(zone_lot_features(store))
        cv = None
        if feats["pattern"].nunique() >= 2:
            cv = cross_validate(feats, n_splits=folds, model=ShrinkageRejectModel(alpha=alpha))
    coef = model.coefficients_.to_dict("records")
    data = {"fitted_on": model.fitted_on_, "rows": int(model.n_rows_), "castings": int(model.n_castings_),
            "data_until": model.data_until_, "coefficients": coef}
    if cv is not None:
        data["cross_validation"] = {k: cv[k] for k in ("model", "baseline") if k in cv}
        for k in ("model", "baseline"):
            data["cross_validation"][k] = {kk: vv for kk, vv in cv[k].items() if kk != "bins"}

    def human(d):
        out = [f"Fitted on {d['rows']} rows ({d['castings']} castings) up to {d['data_until']}.", "",
               table(d["coefficients"], [("term", "term"), ("coefficient", "coefficient"), ("prior", "prior"),
                                         ("unit", "meaning")])]
        if "cross_validation" in d:
            m, b = d["cross_validation"]["model"], d["cross_validation"]["baseline"]
            out += ["", "Grouped cross-validation by pattern (log loss per casting, lower is better):",
                    f"  model     {m['log_loss']:.4f}   predicted/observed rejects {m['calibration_ratio']:.2f}",
                    f"  one rate  {b['log_loss']:.4f}   predicted/observed rejects {b['calibration_ratio']:.2f}"]
        return "\n".join(out)
    emit(data, as_json, human)
