"""The 3-D path of ``pourback thermal``: the options it adds and what it prints.

Kept apart from cmd_thermal.py (the 2-D check) so that the two grow
separately: the command calls :func:`run_solid` when ``--stl`` or
``--whole`` is given.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

from tracker import units
from tracker.cli.output import caution_text, emit, table
from tracker.errors import BadInput

STL_UNITS = {"mm": "mm", "in": "in", units.METRIC: "mm", units.US: "in"}


def solid_options(fn: Callable[..., Any]) -> Any:
    """``--stl``, ``--riser-stl`` and ``--cell-mm`` (the 3-D solve of a whole casting)."""
    fn = click.option("--cell-mm", type=float, default=None,
                      help="3-D cell size, mm (default: the thinnest section in 4 cells, within the memory "
                           "bound).")(fn)
    fn = click.option("--whole", is_flag=True, default=False,
                      help="With --pattern: solve the pattern's stored casting (`pourback casting`) with the "
                           "risers of its current revision, in 3-D.")(fn)
    fn = click.option("--riser-stl", type=click.Path(dir_okay=False), default=None,
                      help="STL of the risers, each closed shell one riser (with --stl).")(fn)
    return click.option("--stl", "stl_path", type=click.Path(dir_okay=False), default=None,
                        help="STL of the whole casting: a 3-D solve of it (with its risers) instead of "
                             "one riser in 2-D.")(fn)


thermal_units_option = click.option(
    "--units", "units_override", type=click.Choice([*units.SYSTEMS, "mm", "in"], case_sensitive=False),
    default=None,
    help="Unit system numbers are typed and shown in: metric (mm, cm³, kg, °C) or us (in, in³, lb, °F) "
         "(default: the log's setting). With --stl: the STL's unit, mm (metric) or in (us).")


def split_units(units_override: str | None, stl_given: bool) -> tuple[str | None, str]:
    """(unit system for the 2-D options, the STL's unit) from ``--units``."""
    u = None if units_override is None else units_override.lower()
    stl_unit = STL_UNITS.get(u or "mm", "mm")
    system = {"mm": units.METRIC, "in": units.US}.get(u, u) if u else None
    return (None if stl_given else system), stl_unit


def run_solid(alloy: str | None, stl_path: str, riser_stl: str | None, stl_unit: str, cell_mm: float | None,
              mould: str, pour_temp_c: float | None, as_json: bool) -> None:
    """Read the models, solve them together and print the result."""
    from tracker.solid import stl
    from tracker.solid.run import run

    if alloy is None:
        raise BadInput("alloy", None, "give the casting's alloy with --alloy")
    casting = stl.read(stl_path, stl_unit)
    risers = stl.read(riser_stl, stl_unit) if riser_stl else None
    result = run(casting, risers, alloy.strip().lower(), mould=mould, pour_temp_c=pour_temp_c, cell_mm=cell_mm,
                 keep_maps=False)
    if as_json:
        emit(result.to_dict(), True)
    else:
        click.echo(format_solid(result, casting.name))


def run_whole(db_path: str | None, pattern: str | None, zone: str | None, cell_mm: float | None,
              as_json: bool) -> None:
    """``--pattern P --whole``: the stored casting with the current revision's risers."""
    from tracker.cli.options import open_store
    from tracker.solid.pattern import whole

    if pattern is None:
        raise BadInput("whole", True, "--whole needs --pattern (a pattern whose casting is stored)")
    if zone is not None:
        raise BadInput("zone", zone, "--whole solves every zone at once; leave --zone out")
    with open_store(db_path) as store:
        result = whole(store, pattern, cell_mm)
        name = (store.casting(pattern) or {}).get("file", pattern)
    if as_json:
        emit(result.to_dict(), True)
    else:
        click.echo(format_solid(result, name))


def format_solid(r: Any, name: str) -> str:
    """The 3-D result for people: the figures, the hot spots, the risers, the cautions."""
    from tracker.solid.run import SOLID_CAUTION

    iso = "-" if r.isolated_share is None else (
        ("yes" if r.isolated_liquid else "no") + f" ({r.isolated_share:.1%} of the casting"
        + (f", around x {r.isolated_at_mm[0]:.0f}, y {r.isolated_at_mm[1]:.0f}, z {r.isolated_at_mm[2]:.0f} mm"
           if r.isolated_at_mm and r.isolated_liquid else "") + ")")
    rows = [
        ("Casting", f"{name}: {r.bbox}"),
        ("Volume (cm³)", f"{r.volume_cm3:,.1f}"),
        ("Surface area (cm²)", f"{r.surface_area_cm2:,.1f}"),
        ("Model", f"{r.model}: {r.cells:,} cells of {r.cell_mm:.1f} mm, memory bound {r.memory_mb:,.0f} MB"),
        ("Alloy, mould, pour (°C)", f"{r.alloy}, {r.mould}, {r.pour_temp_c:.0f}"),
        ("Time step (s)", f"{r.time_step_s:.2f} ({r.steps} steps)"),
        ("Casting freezing time (s)", f"{r.casting_freeze_s:,.0f} ({r.casting_freeze_s / 60:.1f} min)"),
        ("Isolated liquid", iso),
        ("Minimum Niyama", "-" if r.min_niyama is None else f"{r.min_niyama:.2f} (threshold "
                                                              f"{r.niyama_threshold:g})"),
        ("Thermal check", "pass" if r.thermal_ok else "FAIL: " + "; ".join(r.reasons)),
        ("Solve time (s)", f"{r.solve_s:.1f}"),
    ]
    w = max(len(k) for k, _ in rows)
    out = [f"{k:<{w}}  {v}" for k, v in rows]
    spots = [{"n": i + 1, **s, "fed_by": ", ".join(s.get("fed_by", [])) or "-"} for i, s in enumerate(r.hot_spots)]
    out += ["", "Hot spots, hottest first:", table(spots, [
        ("n", "#"), ("x_mm", "x (mm)"), ("y_mm", "y (mm)"), ("z_mm", "z (mm)"), ("freeze_s", "freezes (s)"),
        ("modulus_cm", "modulus (cm)"), ("volume_cm3", "region (cm³)"), ("fed_by", "fed by")])]
    if r.risers:
        risers = [{**x, "feeds": ", ".join(f"#{n}" for n in x["feeds"]) or "none"} for x in r.risers]
        out += ["", "Risers:", table(risers, [("riser", "riser"), ("freeze_s", "freezes (s)"),
                                             ("contact_freeze_s", "contact freezes (s)"), ("feeds", "feeds")])]
    out += [f"Note: {n}" for n in r.notes]
    out += ["", "THERMAL: " + SOLID_CAUTION, caution_text()]
    return "\n".join(out)
