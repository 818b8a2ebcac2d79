"""The thermal check command: a solidification solve of one riser and its section."""

from __future__ import annotations

import click

from tracker.alloys import ALLOYS
from tracker.cli import caution_text, db_option, emit, handle_errors, json_option, main, open_store
from tracker.errors import BadInput

_EXPLICIT = ("alloy", "length_mm", "width_mm", "thickness_mm", "diameter_mm", "height_mm", "placement")


@main.command()
@click.option("--pattern", default=None, help="Pattern in the log (with --zone).")
@click.option("--zone", default=None, help="Zone of the pattern fed by the riser.")
@click.option("--riser", default=None, help="Riser feeding the zone (needed where several feed it).")
@click.option("--alloy", default=None, metavar="ALLOY", help="Alloy family: " + ", ".join(sorted(ALLOYS)) + ".")
@click.option("--length-mm", type=float, default=None, help="Section length, mm (side riser: from the riser to the far end).")
@click.option("--width-mm", type=float, default=None, help="Section width, mm.")
@click.option("--thickness-mm", type=float, default=None, help="Section thickness, mm.")
@click.option("--diameter-mm", type=float, default=None, help="Riser diameter, mm.")
@click.option("--height-mm", type=float, default=None, help="Riser height, mm.")
@click.option("--placement", type=click.Choice(["top", "side"]), default=None, help="Top or side riser.")
@click.option("--neck-diameter-mm", type=float, default=None, help="Neck diameter, mm (none: the riser joins directly).")
@click.option("--sleeve", default=None, help="Sleeve code from the log's catalogue (its modulus extension factor).")
@click.option("--sleeve-factor", type=float, default=None, help="Sleeve modulus extension factor (1.0 bare sand).")
@click.option("--pour-temp-c", type=float, default=None,
              help="Pouring temperature, °C (default: the pattern's latest lot, else the alloy's default).")
@click.option("--mould", type=click.Choice(["silica_sand", "chemically_bonded"]), default="silica_sand",
              show_default=True, help="Mould material.")
@click.option("--cells-across", type=click.IntRange(4, 40), default=None,
              help="Cells across the section thickness (default 8; finer is slower).")
@db_option
@json_option
@handle_errors
def thermal(pattern, zone, riser, alloy, length_mm, width_mm, thickness_mm, diameter_mm, height_mm,
            placement, neck_diameter_mm, sleeve, sleeve_factor, pour_temp_c, mould, cells_across,
            db_path, as_json):
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
    """
    from tracker.thermal import run
    from tracker.thermal.cases import case_from_log
    from tracker.thermal.model import ThermalCase

    explicit = dict(alloy=alloy, length_mm=length_mm, width_mm=width_mm, thickness_mm=thickness_mm,
                    diameter_mm=diameter_mm, height_mm=height_mm, placement=placement)
    given = [k for k, v in explicit.items() if v is not None]
    if pattern is not None or zone is not None:
        if pattern is None or zone is None:
            raise BadInput("pattern" if pattern is None else "zone", None,
                           "--pattern and --zone go together; give both")
        if given or neck_diameter_mm is not None or sleeve or sleeve_factor is not None:
            raise BadInput("--" + (given[0] if given else "sleeve").replace("_", "-"), None,
                           "the geometry comes from the log with --pattern/--zone; leave the geometry options out")
        with open_store(db_path) as store:
            case = case_from_log(store, pattern, zone, riser, mould)
        if pour_temp_c is not None:
            case = _replace(case, pour_temp_c=pour_temp_c)
    else:
        if riser is not None:
            raise BadInput("riser", riser, "--riser needs --pattern and --zone")
        missing = [k for k in _EXPLICIT if explicit[k] is None]
        if missing:
            raise BadInput("--" + missing[0].replace("_", "-"), None,
                           "give --pattern and --zone, or all of --alloy, --length-mm, --width-mm, "
                           "--thickness-mm, --diameter-mm, --height-mm and --placement")
        if sleeve and sleeve_factor is not None:
            raise BadInput("sleeve-factor", sleeve_factor, "give --sleeve or --sleeve-factor, not both")
        if neck_diameter_mm is not None and neck_diameter_mm > diameter_mm:
            raise BadInput("neck-diameter-mm", neck_diameter_mm,
                           f"a neck wider than the riser ({diameter_mm:g} mm) is not a neck; "
                           "give at most the riser diameter")
        factor = 1.0 if sleeve_factor is None else sleeve_factor
        if sleeve:
            with open_store(db_path) as store:
                factor = float(store.sleeve(sleeve)["modulus_factor"])
        case = ThermalCase(alloy=alloy.strip().lower(), placement=placement, thickness_mm=thickness_mm,
                           length_mm=length_mm, width_mm=width_mm, diameter_mm=diameter_mm,
                           height_mm=height_mm, neck_diameter_mm=neck_diameter_mm,
                           sleeve_factor=factor, pour_temp_c=pour_temp_c, mould=mould)
    result = run(case, cells_across=cells_across, keep_maps=False)
    if as_json:
        emit(result.to_dict(), True)
    else:
        click.echo(format_thermal(result))


def _replace(case, **kw):
    from dataclasses import replace

    return replace(case, **kw)


def _mm(p) -> str:
    return "-" if p is None else f"x {p[0]:.0f} mm, z {p[1]:.0f} mm"


def format_thermal(r) -> str:
    from tracker.thermal import THERMAL_CAUTION

    ny = "-" if r.min_niyama is None else f"{r.min_niyama:.2f} at {_mm(r.min_niyama_at_mm)}"
    thr = "none (see source)" if r.niyama_threshold is None else f"{r.niyama_threshold:g}"
    rows = [
        ("Case", r.case.label or f"{r.case.alloy}, {r.case.placement} riser"),
        ("Model", f"{r.model} ({'r' if r.model == 'axisymmetric' else 'x'}, z in mm)"),
        ("Grid (cells)", f"{r.grid[0]} x {r.grid[1]} = {r.cells}, {r.cell_mm:.1f} mm in the section"),
        ("Time step (s)", f"{r.time_step_s:.2f} ({r.steps} steps)"),
        ("Pouring temperature (°C)", f"{r.pour_temp_c:.0f}"),
        ("Section freezing time (s)", f"{r.section_freeze_s:,.0f} ({r.section_freeze_s / 60:.1f} min)"),
        ("Riser freezing time (s)", f"{r.riser_freeze_s:,.0f} ({r.riser_freeze_s / 60:.1f} min)"),
        ("Freezing ratio riser / section", f"{r.freeze_ratio:.2f}"),
        ("Last to freeze", f"{r.last_to_freeze} ({_mm(r.last_point_mm)})"),
        ("Isolated liquid in the section", ("yes" if r.isolated_liquid else "no")
         + (f" ({r.isolated_share:.1%} of its volume at {_mm(r.isolated_at_mm)})" if r.isolated_share else "")),
        (f"Minimum Niyama {r.niyama_unit}", ny),
        ("Niyama threshold", thr),
        ("Thermal check", "pass" if r.thermal_ok else "FAIL: " + "; ".join(r.reasons)),
        ("Solve time (s)", f"{r.solve_s:.2f}"),
    ]
    w = max(len(k) for k, _ in rows)
    out = [f"{k:<{w}}  {v}" for k, v in rows]
    out.append(f"Niyama threshold source: {r.niyama_source}")
    out += [f"Note: {n}" for n in r.notes]
    out += ["", "THERMAL: " + THERMAL_CAUTION, caution_text()]
    return "\n".join(out)
