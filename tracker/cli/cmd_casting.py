"""The casting command: keep a pattern's STL model in the log, see its hot spots."""

from __future__ import annotations

from pathlib import Path

import click

from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import db_option, json_option, open_store
from tracker.cli.output import emit
from tracker.cli.solid_thermal import format_solid


@command()
@click.argument("pattern")
@click.option("--stl", "stl_path", required=True, type=click.Path(exists=True, dir_okay=False),
              help="STL of the whole casting (binary or ASCII), without risers.")
@click.option("--units", "stl_units", type=click.Choice(["mm", "in"], case_sensitive=False), default="mm",
              show_default=True, help="The STL's unit (STL files carry none).")
@click.option("--write-zones", type=click.Path(dir_okay=False), default=None,
              help="Write a zones import (CSV) from the casting's hot spots: volume, cooling area, thickness, "
                   "modulus, position.")
@click.option("--cell-mm", type=float, default=None,
              help="3-D cell size for the hot spots, mm (default: the thinnest section in 4 cells).")
@db_option
@json_option
@handle_errors
def casting(pattern, stl_path, stl_units, write_zones, cell_mm, db_path, as_json):
    """Store a pattern's casting model (STL) with its SHA-256 digest and unit.

    The model is checked (closed, outward-facing, not intersecting itself)
    before it is kept; a stored model is replaced. With --write-zones the
    casting is solved in 3-D without risers and its hot spots are written as
    a zones import (zone H1, H2, ... hottest first) to review and import.

    Example:

        pourback casting P-1004 --stl sample_data/castings/plate.stl --write-zones plate-zones.csv --cell-mm 25
    """
    from tracker.solid.pattern import store_casting, zone_rows
    from tracker.solid.run import run

    data = Path(stl_path).read_bytes()
    with open_store(db_path) as store:
        model = store_casting(store, pattern, data, Path(stl_path).name, stl_units.lower())
        alloy = store.pattern(pattern)["alloy"]
    out = {"pattern": pattern, "file": model.name, "units": model.units, "digest": model.digest,
           "volume_cm3": model.volume_cm3, "surface_area_cm2": model.surface_area_cm2, "bbox": model.bbox_text()}
    result = None
    if write_zones:
        result = run(model, None, alloy, cell_mm=cell_mm, keep_maps=False)
        rows = zone_rows(pattern, result)
        _write_csv(write_zones, rows)
        out["zones_written"] = len(rows)
    if as_json:
        emit(out, True)
        return
    click.echo(f"Stored {model.name} with {pattern}: {model.bbox_text()}, {model.volume_cm3:,.1f} cm³, "
               f"{model.units}, sha256 {model.digest[:16]}...")
    if result is not None:
        click.echo(format_solid(result, model.name))
        click.echo(f"\nWrote {out['zones_written']} zone(s) to {write_zones}; review them, then "
                   f"`pourback import zones {write_zones}`.")


def _write_csv(path: str, rows: list[dict]) -> None:
    import pandas as pd

    from tracker.csvsafe import csv_bytes
    from tracker.solid.pattern import ZONE_COLUMNS

    Path(path).write_bytes(csv_bytes(pd.DataFrame(rows, columns=list(ZONE_COLUMNS))))
