"""Design commands: size a riser, check the stored risers."""

from __future__ import annotations

import click

from tracker.alloys import ALLOYS
from tracker.cautions import SAFETY_CAUTION
from tracker.cli import caution_text, db_option, emit, handle_errors, json_option, main, open_store, table

@main.command()
@click.option("--alloy", required=True, metavar="ALLOY",
              help="Alloy family: " + ", ".join(sorted(ALLOYS)) + ".")
@click.option("--volume-cm3", type=float, required=True, help="Volume of the fed section, cm³.")
@click.option("--area-cm2", type=float, required=True, help="Cooling area of the fed section, cm².")
@click.option("--placement", type=click.Choice(["top", "side"]), default="side", show_default=True,
              help="Top riser (sits on the section) or side riser.")
@click.option("--h-over-d", type=float, default=1.0, show_default=True,
              help="Riser height over diameter, 0.5 to 3.")
@click.option("--sleeve-factor", type=float, default=1.0, show_default=True,
              help="Sleeve modulus extension factor (1.0 bare sand).")
@click.option("--modulus-factor", type=float, default=1.2, show_default=True,
              help="Modulus rule factor: M_riser >= factor x M_section.")
@click.option("--efficiency", type=float, default=None,
              help="Feeding efficiency, fraction (default: the alloy's bare sand value).")
@click.option("--shrinkage", type=float, default=None,
              help="Volumetric shrinkage, fraction (default: the alloy's value).")
@json_option
@handle_errors
def size(alloy, volume_cm3, area_cm2, placement, h_over_d, sleeve_factor, modulus_factor,
         efficiency, shrinkage, as_json):
    """Size the smallest cylindrical riser that meets every rule.

    The riser must pass the modulus rule, Caine's curve (where the alloy has
    constants) and the feed-volume rule; the largest of the three minimum
    diameters governs.

    Example:

        pourback size --alloy steel --volume-cm3 2000 --area-cm2 1100 --placement side
    """
    from tracker.sizing import size_riser

    r = size_riser(volume_cm3, area_cm2, alloy.lower(), placement, h_over_d, sleeve_factor,
                   modulus_factor, efficiency, shrinkage)
    data = r.to_dict()
    data["caution"] = SAFETY_CAUTION
    emit(data, as_json, _format_size)


def _format_size(d: dict) -> str:
    rows = [
        ("Alloy", d["alloy"]),
        ("Placement", f"{d['placement']} riser, H/D {d['h_over_d']:g}"),
        ("Sleeve factor", f"{d['sleeve_factor']:g}"),
        ("Section modulus (cm)", f"{d['section_modulus_cm']:.3f}"),
        ("Riser diameter (mm)", f"{d['diameter_mm']:.1f}"),
        ("Riser height (mm)", f"{d['height_mm']:.1f}"),
        ("Riser volume (cm³)", f"{d['riser_volume_cm3']:.0f}"),
        ("Riser weight (kg)", f"{d['riser_weight_kg']:.2f}"),
        ("Riser modulus, effective (cm)", f"{d['riser_modulus_cm']:.3f}"),
        ("Freezing ratio X", f"{d['freezing_ratio']:.3f}"),
        ("Volume ratio Y", f"{d['volume_ratio']:.3f}"),
        ("Freezing time, riser / section", f"{d['freezing_time_ratio']:.2f}"),
    ]
    mins = [
        ("Caine's curve", d["caine_min_diameter_mm"]),
        (f"Modulus rule (x{d['modulus_factor']:g})", d["modulus_min_diameter_mm"]),
        (f"Feed volume (eff. {d['efficiency']:.0%}, shrink {d['shrinkage']:.1%})",
         d["feed_min_diameter_mm"]),
    ]
    w = max([len(k) for k, _ in rows] + [len(k) + 2 for k, _ in mins])
    out = [f"{k:<{w}}  {v}" for k, v in rows]
    out.append("")
    out.append("Smallest diameter by rule (mm):")
    for (k, v), key in zip(mins, ("caine", "modulus", "feed_volume")):
        val = "not applied (no Caine constants for this alloy)" if v is None else f"{v:.1f}"
        mark = "  <- governs" if key == d["governing_rule"] else ""
        out.append(f"  {k:<{w - 2}}  {val}{mark}")
    out.append("")
    out.append(caution_text())
    return "\n".join(out)



@main.command()
@click.option("--pattern", default=None, help="Only this pattern.")
@click.option("--on", "on_date", default=None, help="Judge the revision in effect on this date (YYYY-MM-DD).")
@click.option("--modulus-factor", type=float, default=1.2, show_default=True,
              help="Modulus rule factor: M_riser >= factor x M_section.")
@click.option("--thermal", is_flag=True,
              help="Add the thermal check per riser (a solidification solve each): thermal_ok, last_to_freeze.")
@db_option
@json_option
@handle_errors
def check(pattern, on_date, modulus_factor, thermal, db_path, as_json):
    """Judge every riser of the current revision by the rules.

    For each riser: modulus ratio against the factor, Caine margin, feed
    volume, neck and feeding distance where given, pass or fail.

    Example:

        pourback check --pattern P-1042
    """
    from tracker.assess import check as run_check

    with open_store(db_path) as store:
        frame = run_check(store, pattern=pattern, on=on_date, modulus_factor=modulus_factor)
        if thermal:
            from tracker.thermal.checks import thermal_columns

            frame = thermal_columns(store, frame)
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    for r in rows:
        for k in ("caine_ok", "neck_ok", "feeding_distance_ok"):
            r[k] = None if r[k] is None else bool(r[k])
    if as_json:
        emit(rows, True)
        return
    click.echo(table(rows, [
        ("pattern", "pattern"), ("revision", "rev"), ("riser", "riser"), ("zone", "zone"),
        ("diameter_mm", "D (mm)"), ("sleeve", "sleeve"), ("modulus_ratio", "M ratio"),
        ("caine_margin", "Caine margin"), ("feed_margin", "feed margin"), ("passes", "passes"),
        ("failed_rules", "fails")] + ([("thermal_ok", "thermal ok"), ("last_to_freeze", "last to freeze")]
                                      if thermal else [])))
    click.echo(f"\n{sum(r['passes'] for r in rows)} of {len(rows)} risers pass every rule "
               f"(modulus factor {modulus_factor:g}).")
    click.echo("\n" + caution_text())


@main.command()
@db_option
@json_option
@handle_errors
def patterns(db_path, as_json):
    """List the patterns in the log with their alloy, weight and current riser revision.

    Example:

        pourback patterns
    """
    import datetime as dt

    from tracker.assess import revision_in_effect

    with open_store(db_path) as store:
        frame = store.table("patterns")
        current = revision_in_effect(store.revisions_frame(), dt.date.today().isoformat())
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    rev = {r.pattern: (r.revision, r.effective_from) for r in current.itertuples()}
    for r in rows:
        r["revision"], r["effective_from"] = rev.get(r["pattern"], (None, None))
    emit(rows, as_json, lambda rs: table(rs, [
        ("pattern", "pattern"), ("description", "description"), ("alloy", "alloy"),
        ("casting_weight_kg", "casting (kg)"), ("castings_per_mold", "per mould"),
        ("revision", "riser revision"), ("effective_from", "since")]))
