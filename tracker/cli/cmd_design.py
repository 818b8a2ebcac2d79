"""Design commands: size a riser, check the stored risers."""

from __future__ import annotations

import contextlib
import datetime as dt
from typing import Any

import click

from tracker import units
from tracker.cautions import SAFETY_CAUTION
from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import (
    db_option,
    json_option,
    log_exists,
    measure_option,
    open_store,
    take_measures,
    units_option,
)
from tracker.cli.output import caution_text, emit, table
from tracker.design.alloys import ALLOYS
from tracker.design.sizing import round_up_to_step, size_riser, size_zone
from tracker.log.settings import resolve_units

SIZE_MEASURES = ("volume_cm3", "area_cm2", "pour_temp_c", "thickness_mm", "width_mm", "length_mm", "step_mm")


@command()
@click.option("--alloy", default=None, metavar="ALLOY",
              help="Alloy family: " + ", ".join(sorted(ALLOYS)) + " (default with --zone: the pattern's).")
@measure_option("volume_cm3", "Volume of the fed section, {unit}.")
@measure_option("area_cm2", "Cooling area of the fed section, {unit}.")
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
@measure_option("pour_temp_c", "Pour temperature, {unit}, for the liquid contraction (default: liquidus + "
                "the alloy's usual superheat).")
@click.option("--mould", type=click.Choice(["green_sand", "rigid"]), default=None,
              help="Mould rigidity, for ductile iron's pressure control (default: the pattern's, "
                   "else green_sand).")
@measure_option("thickness_mm", "Section thickness, {unit} (checks V/A <= T/2; with width, the feeding "
                "distance).")
@measure_option("width_mm", "Section width, {unit} (bar or plate feeding distance).")
@measure_option("length_mm", "Feeding length from the riser to the farthest point it feeds, {unit}.")
@measure_option("step_mm", "The shop's diameter step, {unit}: the answer is also rounded up to it (default "
                "with --zone: 10 mm, or 1/2 in with --units us).")
@click.option("--joined-faces", default=None, metavar="FACES",
              help="Faces of the section joined to the rest of the casting (they do not cool): any of top, "
                   "bottom, edges, separated by ';' (default with --zone: the zone's joined_faces). V/A may "
                   "then exceed T/2.")
@units_option
@db_option
@json_option
@handle_errors
def size(alloy, pattern, zone, placement, h_over_d, sleeve_code, sleeve_factor, modulus_factor, efficiency,
         shrinkage, mould, joined_faces, units_override, db_path, as_json, **measures):
    """Size the smallest cylindrical riser that meets every rule.

    The riser must pass its alloy's rule set: the modulus rule, Caine's curve
    (where the alloy has constants) and the feed-volume rule, the largest of
    the minimum diameters governing; for ductile iron, pressure control
    (the riser outlasts a neck that freezes as graphite expansion starts, and
    holds the liquid contraction). The output says which rule set judged it.

    Numbers are typed and shown in the log's unit system (with --db or
    --pattern), else metric; --units us takes and gives inches, in², in³,
    lb and °F (--volume-in3, --area-in2, --step-in ...).

    Example:

        pourback size --alloy steel --volume-cm3 2000 --area-cm2 1100 --placement side

        pourback size --pattern P-1004 --zone body --step-mm 10

        pourback size --units us --alloy steel --volume-in3 122 --area-in2 170 --step-in 0.5
    """
    with contextlib.ExitStack() as stack:
        # the log is read for its unit system where it is there; a missing one is an
        # error only where the command needs it (after the checks of the options)
        store = stack.enter_context(open_store(db_path)) if log_exists(db_path) else None
        system = resolve_units(store, units_override)
        m = take_measures(system, measures, *SIZE_MEASURES)
        _check_size_options(pattern, zone, alloy, m, {k: units.option_name(k, system) for k in SIZE_MEASURES})
        step = units.value_in("step_mm", m.pop("step_mm"), system)
        opts: dict[str, Any] = dict(
            placement=placement, h_over_d=h_over_d, sleeve_factor=sleeve_factor, modulus_factor=modulus_factor,
            efficiency=efficiency, shrinkage=shrinkage, mould=mould, pour_temp_c=m["pour_temp_c"],
            thickness_mm=m["thickness_mm"], width_mm=m["width_mm"], length_mm=m["length_mm"], system=system,
            joined_faces=joined_faces)
        if pattern is not None or sleeve_code is not None:
            log = store if store is not None else stack.enter_context(open_store(db_path))  # says there is no log
            if sleeve_code is not None:
                opts["sleeve"] = log.sleeve(sleeve_code)
            if pattern is not None:
                r = size_zone(log, pattern, zone, alloy=alloy.lower() if alloy else None, **opts)
                if step is None:
                    step = units.value_in("step_mm", units.default_step_mm(system), system)
    if pattern is None:
        r = size_riser(m["volume_cm3"], m["area_cm2"], alloy.lower(), **opts)
    data = r.to_dict()
    if pattern is not None:
        data["pattern"], data["zone"] = pattern, zone
    if step is not None:
        data.update(round_up_to_step(r, step, system))
    data["caution"] = SAFETY_CAUTION
    data = units.convert_record(data, system)
    emit(data, as_json, lambda d: _format_size(d, system))


def _check_size_options(pattern: str | None, zone: str | None, alloy: str | None, m: dict,
                        opt: dict[str, str]) -> None:
    """A section from the log (--pattern and --zone) or from the options (--alloy, volume
    and area), never both; ``m`` the measures in metric, ``opt`` their option names."""
    if (pattern is None) != (zone is None):
        raise click.UsageError("give --pattern and --zone together")
    if pattern is None and (alloy is None or m["volume_cm3"] is None or m["area_cm2"] is None):
        raise click.UsageError(f"give --alloy, {opt['volume_cm3']} and {opt['area_cm2']}, "
                               "or --pattern and --zone")
    if pattern is not None and (m["volume_cm3"] is not None or m["area_cm2"] is not None):
        raise click.UsageError(f"{opt['volume_cm3']} and {opt['area_cm2']} come from the zone; leave them "
                               "out with --zone")


# Decimals per quantity shown by size: (metric, us)
_SIZE_DIGITS = {"section_modulus_cm": (3, 3), "riser_modulus_cm": (3, 3), "diameter_mm": (1, 2),
                "height_mm": (1, 2), "rounded_diameter_mm": (0, 2), "rounded_height_mm": (0, 2),
                "riser_volume_cm3": (0, 1), "riser_weight_kg": (2, 2), "neck_diameter_mm": (0, 2),
                "neck_modulus_cm": (2, 3), "pour_temp_c": (0, 0), "feeding_distance_mm": (0, 1)}


class _SizeText:
    """The figures of a size record converted to ``system``, as text in its usual decimals."""

    def __init__(self, d: dict, system: str):
        self.d, self.system = d, system

    def v(self, name: str) -> Any:
        """The value of a metric key in the converted record."""
        return self.d.get(units.column_name(name, self.system))

    def f(self, name: str) -> str:
        """The value as text in the system's usual decimals."""
        return f"{self.v(name):.{_SIZE_DIGITS[name][self.system == units.US]}f}"

    def u(self, name: str) -> str:
        return units.symbol(name, self.system)


def _format_size(d: dict, system: str = units.METRIC) -> str:
    t = _SizeText(d, system)
    rows = _size_rows(d, t)
    mins = _size_minimums(d, t)
    w = max([len(k) for k, _ in rows] + [len(k) + 2 for k, _ in mins])
    out = [f"{k:<{w}}  {val}" for k, val in rows]
    out.append("")
    out.append(f"Smallest diameter by rule ({t.u('diameter_mm')}):")
    digits = _SIZE_DIGITS["diameter_mm"][system == units.US]
    for (k, val), key in zip(mins, ("caine", "modulus", "feed_volume"), strict=False):
        shown = "not applied (no Caine constants for this alloy)" if val is None else f"{val:.{digits}f}"
        mark = "  <- governs" if key == d["governing_rule"] else ""
        out.append(f"  {k:<{w - 2}}  {shown}{mark}")
    for label, items in (("Warning", d.get("warnings") or []), ("Note", d.get("notes") or [])):
        out += [f"{label}: {text}" for text in items]
    out.append("")
    out.append(caution_text())
    return "\n".join(out)


def _size_rows(d: dict, t: _SizeText) -> list[tuple[str, str]]:
    """The (label, value) lines of the sized riser, in the order shown."""
    v, f, u = t.v, t.f, t.u
    rows = [("Pattern, zone", f"{d['pattern']}, {d['zone']}")] if d.get("pattern") else []
    rows += [
        ("Alloy", d["alloy"]),
        ("Rule set", d["rule_set_text"]),
        ("Placement", f"{d['placement']} riser, H/D {d['h_over_d']:g}"),
        ("Sleeve factor", f"{d['sleeve_factor']:g}" + (f" (sleeve {d['sleeve']})" if d.get("sleeve") else "")),
        (f"Section modulus ({u('section_modulus_cm')})", f("section_modulus_cm")),
        (f"Riser diameter ({u('diameter_mm')})", f("diameter_mm")),
    ]
    if v("rounded_diameter_mm") is not None:
        rows += [(f"Rounded up to the {v('step_mm'):g} {u('step_mm')} step ({u('diameter_mm')})",
                  f"{f('rounded_diameter_mm')} x {f('rounded_height_mm')} high")]
    rows += [
        (f"Riser height ({u('height_mm')})", f("height_mm")),
        (f"Riser volume ({u('riser_volume_cm3')})", f("riser_volume_cm3")),
        (f"Riser weight ({u('riser_weight_kg')})", f("riser_weight_kg")),
        (f"Riser modulus, effective ({u('riser_modulus_cm')})", f("riser_modulus_cm")),
        ("Freezing ratio X", f"{d['freezing_ratio']:.3f}"),
        ("Volume ratio Y", f"{d['volume_ratio']:.3f}"),
        ("Freezing time, riser / section", f"{d['freezing_time_ratio']:.2f}"),
    ]
    return rows + _size_extra_rows(d, t)


def _size_extra_rows(d: dict, t: _SizeText) -> list[tuple[str, str]]:
    """The lines shown only where they apply: the neck, the liquid contraction,
    the feeding distance, and a section that needs no riser."""
    v, f, u = t.v, t.f, t.u
    rows = []
    if v("neck_diameter_mm") is not None:
        rows.append((f"Neck diameter ({u('neck_diameter_mm')})" + (", round" if t.system != units.US else ""),
                     f"{f('neck_diameter_mm')} (modulus {f('neck_modulus_cm')} {u('neck_modulus_cm')})"))
    if v("pour_temp_c") is not None:
        rows.append(("Liquid contraction",
                     f"{d['liquid_contraction']:.2%} (pour {f('pour_temp_c')} {u('pour_temp_c')})"))
    if v("feeding_distance_mm") is not None:
        judged = ("not judged (no length)" if d["feeding_distance_ok"] is None
                  else ("passes" if d["feeding_distance_ok"] else "fails")
                  + f" for {v('feeding_length_mm'):g} {u('feeding_length_mm')}")
        rows.append((f"Feeding distance, {d['section_shape']} ({u('feeding_distance_mm')})",
                     f"{f('feeding_distance_mm')}, {judged}"))
    if not d.get("riser_needed", True):
        rows.append(("Riser needed", "no: may be cast without a riser (rigid mould, heavy section)"))
    return rows


def _size_minimums(d: dict, t: _SizeText) -> list[tuple[str, float | None]]:
    """(rule, smallest diameter it allows in the shown unit, None where not applied),
    in the order Caine, modulus, feed volume."""
    feed = f"eff. {d['efficiency']:.0%}, shrink {d['shrinkage']:.1%}"
    if d.get("liquid_contraction"):
        feed += f" + liquid {d['liquid_contraction']:.1%}"
    mod = (f"Modulus rule (x{d['modulus_factor']:g} the neck)" if d.get("rule_set") == "pressure_control"
           else f"Modulus rule (x{d['modulus_factor']:g})")
    return [
        ("Caine's curve", t.v("caine_min_diameter_mm")),
        (mod, t.v("modulus_min_diameter_mm")),
        (f"Feed volume ({feed})", t.v("feed_min_diameter_mm")),
    ]


@command()
@click.option("--pattern", default=None, help="Only this pattern.")
@click.option("--on", "on_date", default=None, help="Judge the revision in effect on this date (YYYY-MM-DD).")
@click.option("--modulus-factor", type=float, default=1.2, show_default=True,
              help="Modulus rule factor: M_riser >= factor x M_section.")
@click.option("--thermal", is_flag=True,
              help="Add the thermal check per riser (a solidification solve each): thermal_ok, thermal_verdict "
                   "(pass, fail or inconclusive), last_to_freeze.")
@units_option
@db_option
@json_option
@handle_errors
def check(pattern, on_date, modulus_factor, thermal, units_override, db_path, as_json):
    """Judge every riser of the current revision by the rules.

    For each riser: modulus ratio against the factor, Caine margin, feed
    volume, neck and feeding distance where given, pass or fail.

    Example:

        pourback check --pattern P-1042
    """
    from tracker.review.riser_check import check as run_check

    with open_store(db_path) as store:
        system = resolve_units(store, units_override)
        frame = run_check(store, pattern=pattern, on=on_date, modulus_factor=modulus_factor, system=system)
        if thermal:
            from tracker.thermal.checks import thermal_columns

            frame = thermal_columns(store, frame)
    frame = units.convert_frame(frame, system)
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
        (units.column_name("diameter_mm", system), f"D ({units.symbol('diameter_mm', system)})"),
        ("sleeve", "sleeve"), ("modulus_ratio", "M ratio"),
        ("caine_margin", "Caine margin"), ("feed_margin", "feed margin"), ("rule_set", "rule set"),
        ("passes", "passes"), ("failed_rules_text", "fails")]
        + ([("thermal_verdict", "thermal"), ("last_to_freeze", "last to freeze")] if thermal else [])))
    click.echo(f"\n{sum(r['passes'] for r in rows)} of {len(rows)} risers pass every rule "
               f"(modulus factor {modulus_factor:g}).")
    click.echo("\n" + caution_text())


@command()
@units_option
@db_option
@json_option
@handle_errors
def patterns(units_override, db_path, as_json):
    """List the patterns in the log with their alloy, weight and current riser revision.

    Example:

        pourback patterns
    """
    from tracker.design.assess import revision_in_effect

    with open_store(db_path) as store:
        system = resolve_units(store, units_override)
        frame = store.table("patterns")
        current = revision_in_effect(store.revisions_frame(), dt.date.today().isoformat())
    frame = units.convert_frame(frame, system)
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    rev = {r.pattern: (r.revision, r.effective_from) for r in current.itertuples()}
    for r in rows:
        r["revision"], r["effective_from"] = rev.get(r["pattern"], (None, None))
    emit(rows, as_json, lambda rs: table(rs, [
        ("pattern", "pattern"), ("description", "description"), ("alloy", "alloy"),
        (units.column_name("casting_weight_kg", system), f"casting ({units.symbol('casting_weight_kg', system)})"),
        ("castings_per_mold", "per mould"), ("mould", "mould"),
        ("revision", "riser revision"), ("effective_from", "since")]))
