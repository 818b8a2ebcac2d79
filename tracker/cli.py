"""The ``pourback`` command line: parse, call the library, format.

No computation lives here; every command is a thin layer over ``tracker``.
"""

from __future__ import annotations

import functools
import json
import math
import sys

import click
import numpy as np

from tracker import __version__
from tracker.alloys import ALLOYS
from tracker.cautions import SAFETY_CAUTION
from tracker.errors import PourbackError


# --- output -----------------------------------------------------------------------

def _jsonable(obj):
    if isinstance(obj, dict):
        return {k: _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (np.floating, float)):
        f = float(obj)
        return f if math.isfinite(f) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    if hasattr(obj, "isoformat"):
        return obj.isoformat()
    return obj


def emit(data, as_json: bool, human=None):
    """The one place output is written: JSON for machines, text for people."""
    if as_json:
        click.echo(json.dumps(_jsonable(data), indent=2, ensure_ascii=False))
    else:
        click.echo(human(data) if human else str(data))


def table(rows: list[dict], columns: list[tuple[str, str]] | None = None) -> str:
    """A plain text table; ``columns`` is a list of (key, heading)."""
    if not rows:
        return "(none)"
    columns = columns or [(k, k) for k in rows[0]]
    cells = [[_cell(r.get(k)) for k, _ in columns] for r in rows]
    heads = [h for _, h in columns]
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(heads)]
    line = lambda vals: "  ".join(v.rjust(w) if _numeric(v) else v.ljust(w)  # noqa: E731
                                  for v, w in zip(vals, widths)).rstrip()
    out = [line(heads), "  ".join("-" * w for w in widths)]
    out += [line(c) for c in cells]
    return "\n".join(out)


def _numeric(s: str) -> bool:
    try:
        float(s.rstrip("%"))
        return True
    except ValueError:
        return False


def _cell(v) -> str:
    if v is None:
        return "-"
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        if not math.isfinite(v):
            return "-"
        return f"{v:.3g}" if abs(v) < 0.01 and v != 0 else f"{v:,.2f}"
    return str(v)


def caution_text() -> str:
    return "CAUTION: " + SAFETY_CAUTION


def handle_errors(fn):
    """Turn library errors into one clear line and a non-zero exit."""
    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        try:
            return fn(*args, **kwargs)
        except PourbackError as exc:
            raise click.ClickException(str(exc)) from None
    return wrapper


json_option = click.option("--json", "as_json", is_flag=True, help="Print JSON instead of a table.")


# --- commands ---------------------------------------------------------------------

@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="pourback")
def main():
    """Pourback: riser design tied to the scrap it causes.

    Judge and size risers by the published rules, log inspection results per
    pour lot, review scrap by pattern each week, and get riser suggestions.
    """


@main.command()
@click.option("--alloy", required=True, type=click.Choice(sorted(ALLOYS), case_sensitive=False),
              help="Alloy family.")
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


if __name__ == "__main__":  # pragma: no cover
    main(prog_name="pourback")
