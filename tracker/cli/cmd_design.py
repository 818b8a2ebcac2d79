"""Design commands: size a riser, check the stored risers."""

from __future__ import annotations

import click

from tracker.alloys import ALLOYS
from tracker.cautions import SAFETY_CAUTION
from tracker.cli import caution_text, db_option, emit, handle_errors, json_option, main, open_store, table

@main.command()
@click.option("--alloy", default=None, metavar="ALLOY",
              help="Alloy family: " + ", ".join(sorted(ALLOYS)) + " (default with --zone: the pattern's).")
@click.option("--volume-cm3", type=float, default=None, help="Volume of the fed section, cm³.")
@click.option("--area-cm2", type=float, default=None, help="Cooling area of the fed section, cm².")
@click.option("--pattern", default=None, help="Take the section from this pattern's zone in the log (with --zone).")
@click.option("--zone", default=None, help="The zone of --pattern: its volume, cooling area, thickness, "
              "width, length, alloy and mould come from the log.")
@click.option("--placement", type=click.Choice(["top", "side"]), default="side", show_default=True,
              help="Top riser (sits on the section) or side riser.")
@click.option("--h-over-d", type=float, default=1.0, show_default=True,
              help="Riser height over diameter, 0.5 to 3.")
@click.option("--sleeve", "sleeve_code", default=None, metavar="CODE",
              help="A sleeve of the log's catalogue: its modulus factor and feeding efficiency are used.")
@click.option("--sleeve-factor", type=float, default=1.0, show_default=True,
              help="Sleeve modulus extension factor (1.0 bare sand).")
@click.option("--modulus-factor", type=float, default=1.2, show_default=True,
              help="Modulus rule factor: M_riser >= factor x M_section (pressure control: x M_neck).")
@click.option("--efficiency", type=float, default=None,
              help="Feeding efficiency, fraction (default: the sleeve's; 0.25 for a sleeved riser "
                   "without one; else the alloy's bare sand value).")
@click.option("--shrinkage", type=float, default=None,
              help="Volumetric solidification shrinkage, fraction (default: the alloy's value).")
@click.option("--pour-temp-c", type=float, default=None,
              help="Pour temperature, °C, for the liquid contraction (default: liquidus + the alloy's "
                   "usual superheat).")
@click.option("--mould", type=click.Choice(["green_sand", "rigid"]), default=None,
              help="Mould rigidity, for ductile iron's pressure control (default: the pattern's, "
                   "else green_sand).")
@click.option("--thickness-mm", type=float, default=None, help="Section thickness, mm (checks V/A <= T/2; "
              "with width, the feeding distance).")
@click.option("--width-mm", type=float, default=None, help="Section width, mm (bar or plate feeding distance).")
@click.option("--length-mm", type=float, default=None, help="Feeding length from the riser to the farthest "
              "point it feeds, mm.")
@click.option("--step-mm", type=float, default=None,
              help="The shop's diameter step, mm: the answer is also rounded up to it (default with "
                   "--zone: 10).")
@db_option
@json_option
@handle_errors
def size(alloy, volume_cm3, area_cm2, pattern, zone, placement, h_over_d, sleeve_code, sleeve_factor,
         modulus_factor, efficiency, shrinkage, pour_temp_c, mould, thickness_mm, width_mm, length_mm,
         step_mm, db_path, as_json):
    """Size the smallest cylindrical riser that meets every rule.

    The riser must pass its alloy's rule set: the modulus rule, Caine's curve
    (where the alloy has constants) and the feed-volume rule, the largest of
    the minimum diameters governing; for ductile iron, pressure control
    (the riser outlasts a neck that freezes as graphite expansion starts, and
    holds the liquid contraction). The output says which rule set judged it.

    Example:

        pourback size --alloy steel --volume-cm3 2000 --area-cm2 1100 --placement side

        pourback size --pattern P-1004 --zone body --step-mm 10
    """
    from tracker.sizing import round_up_diameter, size_riser, size_zone

    if (pattern is None) != (zone is None):
        raise click.UsageError("give --pattern and --zone together")
    if pattern is None and (alloy is None or volume_cm3 is None or area_cm2 is None):
        raise click.UsageError("give --alloy, --volume-cm3 and --area-cm2, or --pattern and --zone")
    if pattern is not None and (volume_cm3 is not None or area_cm2 is not None):
        raise click.UsageError("--volume-cm3 and --area-cm2 come from the zone; leave them out with --zone")
    opts = dict(placement=placement, h_over_d=h_over_d, sleeve_factor=sleeve_factor,
                modulus_factor=modulus_factor, efficiency=efficiency, shrinkage=shrinkage,
                mould=mould, pour_temp_c=pour_temp_c, thickness_mm=thickness_mm, width_mm=width_mm,
                length_mm=length_mm)
    if pattern is not None or sleeve_code is not None:
        with open_store(db_path) as store:
            if sleeve_code is not None:
                opts["sleeve"] = store.sleeve(sleeve_code)
            if pattern is not None:
                r = size_zone(store, pattern, zone, alloy=alloy.lower() if alloy else None, **opts)
                step_mm = 10.0 if step_mm is None else step_mm
    if pattern is None:
        r = size_riser(volume_cm3, area_cm2, alloy.lower(), **opts)
    data = r.to_dict()
    if pattern is not None:
        data["pattern"], data["zone"] = pattern, zone
    if step_mm is not None:
        data.update(round_up_diameter(r, step_mm))
    data["caution"] = SAFETY_CAUTION
    emit(data, as_json, _format_size)


def _format_size(d: dict) -> str:
    rows = [("Pattern, zone", f"{d['pattern']}, {d['zone']}")] if d.get("pattern") else []
    rows += [
        ("Alloy", d["alloy"]),
        ("Rule set", d["rule_set_text"]),
        ("Placement", f"{d['placement']} riser, H/D {d['h_over_d']:g}"),
        ("Sleeve factor", f"{d['sleeve_factor']:g}" + (f" (sleeve {d['sleeve']})" if d.get("sleeve") else "")),
        ("Section modulus (cm)", f"{d['section_modulus_cm']:.3f}"),
        ("Riser diameter (mm)", f"{d['diameter_mm']:.1f}"),
    ]
    if d.get("rounded_diameter_mm") is not None:
        rows += [(f"Rounded up to the {d['step_mm']:g} mm step (mm)",
                  f"{d['rounded_diameter_mm']:.0f} x {d['rounded_height_mm']:.0f} high")]
    rows += [
        ("Riser height (mm)", f"{d['height_mm']:.1f}"),
        ("Riser volume (cm³)", f"{d['riser_volume_cm3']:.0f}"),
        ("Riser weight (kg)", f"{d['riser_weight_kg']:.2f}"),
        ("Riser modulus, effective (cm)", f"{d['riser_modulus_cm']:.3f}"),
        ("Freezing ratio X", f"{d['freezing_ratio']:.3f}"),
        ("Volume ratio Y", f"{d['volume_ratio']:.3f}"),
        ("Freezing time, riser / section", f"{d['freezing_time_ratio']:.2f}"),
    ]
    if d.get("neck_diameter_mm") is not None:
        rows.append(("Neck diameter (mm), round", f"{d['neck_diameter_mm']:.0f} (modulus {d['neck_modulus_cm']:.2f} cm)"))
    if d.get("pour_temp_c") is not None:
        rows.append(("Liquid contraction", f"{d['liquid_contraction']:.2%} (pour {d['pour_temp_c']:.0f} °C)"))
    if d.get("feeding_distance_mm") is not None:
        judged = ("not judged (no length)" if d["feeding_distance_ok"] is None
                  else ("passes" if d["feeding_distance_ok"] else "fails")
                  + f" for {d['feeding_length_mm']:g} mm")
        rows.append((f"Feeding distance, {d['section_shape']} (mm)", f"{d['feeding_distance_mm']:.0f}, {judged}"))
    if not d.get("riser_needed", True):
        rows.append(("Riser needed", "no: may be cast without a riser (rigid mould, heavy section)"))
    feed = f"eff. {d['efficiency']:.0%}, shrink {d['shrinkage']:.1%}"
    if d.get("liquid_contraction"):
        feed += f" + liquid {d['liquid_contraction']:.1%}"
    mod = (f"Modulus rule (x{d['modulus_factor']:g} the neck)" if d.get("rule_set") == "pressure_control"
           else f"Modulus rule (x{d['modulus_factor']:g})")
    mins = [
        ("Caine's curve", d["caine_min_diameter_mm"]),
        (mod, d["modulus_min_diameter_mm"]),
        (f"Feed volume ({feed})", d["feed_min_diameter_mm"]),
    ]
    w = max([len(k) for k, _ in rows] + [len(k) + 2 for k, _ in mins])
    out = [f"{k:<{w}}  {v}" for k, v in rows]
    out.append("")
    out.append("Smallest diameter by rule (mm):")
    for (k, v), key in zip(mins, ("caine", "modulus", "feed_volume")):
        val = "not applied (no Caine constants for this alloy)" if v is None else f"{v:.1f}"
        mark = "  <- governs" if key == d["governing_rule"] else ""
        out.append(f"  {k:<{w - 2}}  {val}{mark}")
    for label, items in (("Warning", d.get("warnings") or []), ("Note", d.get("notes") or [])):
        out += [f"{label}: {t}" for t in items]
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
    shown = [{**r, "rule_set": (r["rule_set"] or "").replace("_", " ")} for r in rows]
    click.echo(table(shown, [
        ("pattern", "pattern"), ("revision", "rev"), ("riser", "riser"), ("zone", "zone"),
        ("diameter_mm", "D (mm)"), ("sleeve", "sleeve"), ("modulus_ratio", "M ratio"),
        ("caine_margin", "Caine margin"), ("feed_margin", "feed margin"), ("rule_set", "rule set"),
        ("passes", "passes"), ("failed_rules_text", "fails")]
        + ([("thermal_ok", "thermal ok"), ("last_to_freeze", "last to freeze")] if thermal else [])))
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
        ("casting_weight_kg", "casting (kg)"), ("castings_per_mold", "per mould"), ("mould", "mould"),
        ("revision", "riser revision"), ("effective_from", "since")]))
