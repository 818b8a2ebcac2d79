"""The thermal check command: a solidification solve of one riser and its section."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import click

from tracker import units
from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import (
    db_option,
    json_option,
    log_exists,
    measure_option,
    open_store,
    take_measures,
)
from tracker.cli.output import caution_text, emit
from tracker.cli.solid_thermal import run_solid, run_whole, solid_options, split_units, thermal_units_option
from tracker.design.alloys import ALLOYS
from tracker.errors import BadInput
from tracker.limits import RANGES
from tracker.log.settings import resolve_units

_EXPLICIT = ("alloy", "length_mm", "width_mm", "thickness_mm", "diameter_mm", "height_mm", "placement")
_LENGTHS = ("length_mm", "width_mm", "thickness_mm", "diameter_mm", "height_mm", "neck_diameter_mm")
_MEASURES = (*_LENGTHS, "pour_temp_c")


@command()
@click.option("--pattern", default=None, help="Pattern in the log (with --zone).")
@click.option("--zone", default=None, help="Zone of the pattern fed by the riser.")
@click.option("--riser", default=None, help="Riser feeding the zone (needed where several feed it).")
@click.option("--alloy", default=None, metavar="ALLOY", help="Alloy family: " + ", ".join(sorted(ALLOYS)) + ".")
@measure_option("length_mm", "Section length, {unit} (side riser: from the riser to the far end).")
@measure_option("width_mm", "Section width, {unit}.")
@measure_option("thickness_mm", "Section thickness, {unit}.")
@measure_option("diameter_mm", "Riser diameter, {unit}.")
@measure_option("height_mm", "Riser height, {unit}.")
@click.option("--placement", type=click.Choice(["top", "side"]), default=None, help="Top or side riser.")
@measure_option("neck_diameter_mm", "Neck diameter, {unit} (none: the riser joins directly).")
@click.option("--sleeve", default=None, help="Sleeve code from the log's catalogue (its modulus extension factor).")
@click.option("--sleeve-factor", type=float, default=None, help="Sleeve modulus extension factor (1.0 bare sand).")
@measure_option("pour_temp_c", "Pouring temperature, {unit} (default: the pattern's latest lot, else the "
                "alloy's default).")
@click.option("--mould", type=click.Choice(["silica_sand", "chemically_bonded"]), default="silica_sand",
              show_default=True, help="Mould material.")
@click.option("--cells-across", type=click.IntRange(4, 40), default=None,
              help="Cells across the section thickness (default 8; finer is slower).")
@click.option("--joined-faces", default=None, metavar="FACES",
              help="Faces of the section joined to the rest of the casting, insulated in the model: any of top, "
                   "bottom, edges, separated by ';' (with --pattern/--zone: the zone's joined_faces).")
@solid_options
@thermal_units_option
@db_option
@json_option
@handle_errors
def thermal(pattern, zone, riser, alloy, placement, sleeve, sleeve_factor, mould, cells_across, joined_faces,
            stl_path, riser_stl, whole, cell_mm, units_override, db_path, as_json, **measures):
    """Solidification solve of one riser and the section it feeds.

    A 2-D transient conduction solve with latent heat (enthalpy method):
    axisymmetric for a top riser, planar for a side riser or a long plate.
    Gives the freezing times of section and riser, the last point to
    freeze, liquid cut off from the riser, and Niyama's criterion against
    the alloy family's threshold. A screening solve, not a validated casting
    simulation.

    Example:

        pourback thermal --pattern P-1004 --zone body

        pourback thermal --alloy steel --length-mm 300 --width-mm 300 --thickness-mm 50 --diameter-mm 155 --height-mm 155 --placement top

        pourback thermal --alloy steel --stl sample_data/castings/plate.stl --riser-stl sample_data/castings/plate-riser.stl --cell-mm 20
    """  # noqa: E501 (an example stays on one line, to paste and run)
    from tracker.thermal import run

    units_override, stl_unit = split_units(units_override, stl_path is not None)
    if whole:
        run_whole(db_path, pattern, zone, cell_mm, as_json)
        return
    if stl_path is not None or riser_stl is not None or cell_mm is not None:
        _solid_only(stl_path, pattern, zone, riser, placement, measures)
        run_solid(alloy, stl_path, riser_stl, stl_unit, cell_mm, mould, _pour_c(measures), as_json)
        return

    if units_override is None and log_exists(db_path):
        with open_store(db_path) as store:
            system = resolve_units(store, units_override)
    else:  # a missing log is an error only where the command needs it
        system = resolve_units(None, units_override)
    m = take_measures(system, measures, *_MEASURES)
    opt = {k: units.option_name(k, system) for k in _MEASURES}
    for k in _LENGTHS:
        if m[k] is not None and not m[k] > 0:
            raise BadInput(opt[k], units.value_in(k, m[k], system),
                           f"must be a length above 0 {units.symbol(k, system)}")
    explicit = {"alloy": alloy, **{k: m[k] for k in _LENGTHS[:-1]}, "placement": placement}
    given = _Given(explicit, m, sleeve, sleeve_factor, opt, system, joined_faces)
    if pattern is not None or zone is not None:
        case = _case_from_log(db_path, pattern, zone, riser, mould, given)
    else:
        case = _case_from_options(db_path, riser, mould, given)
    result = run(case, cells_across=cells_across, keep_maps=False)
    if as_json:
        emit(thermal_record(result, system), True)
    else:
        click.echo(format_thermal(result, system))


def _solid_only(stl_path, pattern, zone, riser, placement, measures) -> None:
    """The 3-D path takes its geometry from the STL: refuse the 2-D options beside it."""
    if stl_path is None:
        raise BadInput("stl", None, "--riser-stl and --cell-mm go with --stl (the casting's STL)")
    given = [("pattern", pattern), ("zone", zone), ("riser", riser), ("placement", placement),
             *((k.replace("_", "-"), v) for k, v in measures.items() if not k.startswith("pour_temp"))]
    for name, value in given:
        if value is not None:
            raise BadInput(name, value, "the geometry comes from the STL with --stl; leave this option out")


def _pour_c(measures) -> float | None:
    """The pouring temperature given, in °C (from --pour-temp-c or its US twin)."""
    us = units.column_name("pour_temp_c", units.US)
    if measures.get(us) is not None:
        return units.to_metric("pour_temp_c", measures[us], units.US)
    return measures.get("pour_temp_c")


@dataclass(frozen=True)
class _Given:
    """What the options give of the case: ``explicit`` the geometry options by
    name (alloy, lengths in mm, placement), ``m`` every measure in metric, the
    sleeve options, ``opt`` the measures' option names in ``system``."""

    explicit: dict
    m: dict
    sleeve: str | None
    sleeve_factor: float | None
    opt: dict[str, str]
    system: str
    joined_faces: str | None = None

    def refuse(self, key: str, value: Any, rule: str) -> BadInput:
        """The error for option ``key`` (a measure's metric name or an option's
        name) given ``value`` (a measure in metric)."""
        if key in self.opt:
            return BadInput(self.opt[key], units.value_in(key, value, self.system), rule)
        return BadInput("--" + key, value, rule)


def _case_from_log(db_path: str | None, pattern: str | None, zone: str | None, riser: str | None, mould: str,
                   given: _Given) -> Any:
    """The case of a pattern's zone in the log; no geometry option may be given with it."""
    from tracker.thermal.cases import case_from_log

    if pattern is None or zone is None:
        raise BadInput("pattern" if pattern is None else "zone", None,
                       "--pattern and --zone go together; give both")
    extra = [(k, v) for k, v in (*given.explicit.items(), ("neck_diameter_mm", given.m["neck_diameter_mm"]),
                                 ("sleeve", given.sleeve or None), ("sleeve-factor", given.sleeve_factor),
                                 ("joined-faces", given.joined_faces))
             if v is not None]
    if extra:
        raise given.refuse(*extra[0], "the geometry comes from the log with --pattern/--zone; leave the "
                           "geometry options out")
    with open_store(db_path) as store:
        case = case_from_log(store, pattern, zone, riser, mould)
    if given.m["pour_temp_c"] is not None:
        case = replace(case, pour_temp_c=given.m["pour_temp_c"])
    return case


def _case_from_options(db_path: str | None, riser: str | None, mould: str, given: _Given) -> Any:
    """The case the geometry options describe; every one of them is needed."""
    from tracker.thermal.mesh import ThermalCase, length_rule

    if riser is not None:
        raise BadInput("riser", riser, "--riser needs --pattern and --zone")
    explicit, m, opt, system = given.explicit, given.m, given.opt, given.system
    for k in _LENGTHS:      # every length in its range before a grid is built
        lo, hi, _ = RANGES[k]
        if m[k] is not None and not lo <= m[k] <= hi:
            raise BadInput(opt[k], units.value_in(k, m[k], system), length_rule(k, system))
    missing = [k for k in _EXPLICIT if explicit[k] is None]
    if missing:
        raise BadInput(opt.get(missing[0], "--" + missing[0]), None,
                       f"give --pattern and --zone, or all of --alloy, {opt['length_mm']}, {opt['width_mm']}, "
                       f"{opt['thickness_mm']}, {opt['diameter_mm']}, {opt['height_mm']} and --placement")
    if given.sleeve and given.sleeve_factor is not None:
        raise BadInput("sleeve-factor", given.sleeve_factor, "give --sleeve or --sleeve-factor, not both")
    neck, diameter = m["neck_diameter_mm"], m["diameter_mm"]
    if neck is not None and neck > diameter:
        raise BadInput(opt["neck_diameter_mm"].lstrip("-"), units.value_in("diameter_mm", neck, system),
                       f"a neck wider than the riser ({units.value_in('diameter_mm', diameter, system):g} "
                       f"{units.symbol('diameter_mm', system)}) is not a neck; give at most the riser diameter")
    factor = 1.0 if given.sleeve_factor is None else given.sleeve_factor
    if given.sleeve:
        with open_store(db_path) as store:
            factor = float(store.sleeve(given.sleeve)["modulus_factor"])
    return ThermalCase(alloy=explicit["alloy"].strip().lower(), placement=explicit["placement"],
                       thickness_mm=m["thickness_mm"], length_mm=m["length_mm"], width_mm=m["width_mm"],
                       diameter_mm=diameter, height_mm=m["height_mm"], neck_diameter_mm=neck,
                       sleeve_factor=factor, pour_temp_c=m["pour_temp_c"], mould=mould,
                       joined_faces=given.joined_faces)


def thermal_record(result, system: str) -> dict:
    """``result.to_dict()`` in ``system``: the Niyama figures and unit converted."""
    d = result.to_dict()
    if system == units.US:
        for k in ("min_niyama", "niyama_threshold"):
            d[k] = units.value_in("niyama", d[k], system)
        d["niyama_unit"] = units.symbol("niyama", system)
    return d


def _at(p, system: str = units.METRIC) -> str:
    """A point (x, z) in mm, in ``system``."""
    if p is None:
        return "-"
    if system != units.US:
        return f"x {p[0]:.0f} mm, z {p[1]:.0f} mm"
    return f"x {units.show('length_mm', p[0], system, 1)}, z {units.show('length_mm', p[1], system, 1)}"


def format_thermal(r, system: str = units.METRIC) -> str:
    from tracker.thermal import THERMAL_CAUTION, notes_text, reasons_text

    us = system == units.US
    ny_value = units.value_in("niyama", r.min_niyama, system) if us else r.min_niyama
    unc = "" if r.niyama_uncertainty is None else \
        f" ± {units.value_in('niyama', r.niyama_uncertainty, system) if us else r.niyama_uncertainty:.2f}"
    ny = "-" if r.min_niyama is None else \
        f"{ny_value:.2f}{unc} at {_at(r.min_niyama_at_mm, system)} (extrapolated from two grids)"
    thr = ("none (see source)" if r.niyama_threshold is None else
           units.number("niyama", r.niyama_threshold, system) if us else f"{r.niyama_threshold:g}")
    length = units.symbol("length_mm", system)
    rows = [
        ("Case", r.case.label or f"{r.case.alloy}, {r.case.placement} riser"),
        ("Model", f"{r.model} ({'r' if r.model == 'axisymmetric' else 'x'}, z in {length})"),
        ("Grid (cells)", f"{r.grid[0]} x {r.grid[1]} = {r.cells}, "
                         + (units.show("length_mm", r.cell_mm, system, 2) if us else f"{r.cell_mm:.1f} mm")
                         + " in the section"),
        ("Time step (s)", f"{r.time_step_s:.2f} ({r.steps} steps)"),
        (f"Pouring temperature ({units.symbol('pour_temp_c', system)})",
         f"{units.value_in('pour_temp_c', r.pour_temp_c, system):.0f}"),
        ("Section's own freezing time (s)", f"{r.section_freeze_s:,.0f} ({r.section_freeze_s / 60:.1f} min), "
                                            "beyond the riser's footprint plus one thickness"),
        ("Junction freezing time (s)", f"{r.junction_freeze_s:,.0f} ({r.junction_freeze_s / 60:.1f} min), "
                                       "under and beside the riser"),
        ("Riser freezing time (s)", f"{r.riser_freeze_s:,.0f} ({r.riser_freeze_s / 60:.1f} min)"),
        ("Freezing ratio riser / section's own", f"{r.freeze_ratio:.2f}"),
        ("Solver error (two grids, two steps)", "-" if r.solver_error_share is None
         else f"±{r.solver_error_share:.1%} of each time"),
        *([("Section at its eutectic arrest (s)", f"{r.arrest_s:,.0f} (its liquid contraction ends)"),
           ("Neck closes (s)", f"{r.neck_freeze_s:,.0f}")] if r.rule_set == "pressure_control" else []),
        ("Last to freeze", f"{r.last_to_freeze} ({_at(r.last_point_mm, system)})"),
        ("Isolated liquid in the section", ("yes" if r.isolated_liquid else "no")
         + (f" ({r.isolated_share:.1%} of its volume at {_at(r.isolated_at_mm, system)})" if r.isolated_share else "")),
        (f"Minimum Niyama {units.symbol('niyama', system) if us else r.niyama_unit}", ny),
        ("Niyama threshold", thr),
        ("Thermal check", "pass" if r.verdict == "pass" else
         ("FAIL: " if r.verdict == "fail" else "INCONCLUSIVE: ") + "; ".join(reasons_text(r, system))),
        ("Solve time (s)", f"{r.solve_s:.2f}"),
    ]
    w = max(len(k) for k, _ in rows)
    out = [f"{k:<{w}}  {v}" for k, v in rows]
    out.append(f"Niyama threshold source: {r.niyama_source}")
    out += [f"Note: {n}" for n in notes_text(r, system)]
    out += ["", "THERMAL: " + THERMAL_CAUTION, caution_text()]
    return "\n".join(out)
