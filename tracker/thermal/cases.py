"""Thermal cases from the log: the risers of a pattern's current revision.

A zone in the log has a volume, a cooling area and, where given, a
thickness and a length (the feeding length, from the riser to the farthest
point it feeds). A side riser's section is that long; a top riser stands at
the middle of a section twice that long. The width is volume / (length ×
thickness) where the log gives none and the length is known; the thickness,
where missing, is that of a plate of the zone's modulus (2·V/A). A zone fed
by several risers gives each an equal share of its volume, as the rule
check does. The pattern's mould (green sand or rigid) is silica sand or
chemically bonded sand. The pouring temperature is that of the pattern's
latest lot that records one, else the alloy's default.
"""

from __future__ import annotations

import datetime as dt

import pandas as pd

from tracker.design.assess import revision_in_effect
from tracker.errors import BadInput, NotFound
from tracker.numbers import finite
from tracker.thermal.mesh import ThermalCase
from tracker.thermal.properties import thermal_alloy

# The log's mould (rigidity, ``tracker.design.rules.MOULDS``) as a thermal mould: a rigid
# mould is taken as chemically bonded sand, green sand as silica sand (common practice).
MOULD_OF_RIGIDITY = {"green_sand": "silica_sand", "rigid": "chemically_bonded"}
LENGTH_RULE = "must be a length above 0 mm"     # validate()'s words for a missing diameter or height


def _required(row: dict, key: str, reason: str) -> float:
    """``row[key]`` as a finite float; BadInput (named as the option) where it is missing."""
    v = finite(row.get(key))
    if v is None:
        raise BadInput(key.replace("_", "-"), None, reason)
    return v


def case_from_row(row: dict, pour_temp_c: float | None = None, mould: str = "silica_sand") -> ThermalCase:
    """The thermal case of one row of ``Store.risers_frame`` (or ``assess`` input)."""
    share = max(finite(row.get("risers_on_zone")) or 1.0, 1.0)
    vol = _required(row, "volume_cm3", "give the zone's volume (cm³)") / share
    area = _required(row, "cooling_area_cm2", "give the zone's cooling area (cm²)") / share
    thick = finite(row.get("thickness_mm")) or 20.0 * vol / area
    length = finite(row.get("length_mm"))
    if length and str(row["placement"]) == "top":
        length *= 2.0      # the log's length runs from the riser to the far end; the riser sits mid-section
    width = finite(row.get("width_mm")) or (vol * 1000.0 / (length * thick) if length else None)
    mould = MOULD_OF_RIGIDITY.get(str(row.get("mould") or "").strip().lower(), mould)
    return ThermalCase(
        alloy=str(row["alloy"]), placement=str(row["placement"]), thickness_mm=thick,
        length_mm=length, width_mm=width, diameter_mm=_required(row, "diameter_mm", LENGTH_RULE),
        height_mm=_required(row, "height_mm", LENGTH_RULE), neck_diameter_mm=finite(row.get("neck_diameter_mm")),
        sleeve_factor=finite(row.get("sleeve_factor")) or 1.0, pour_temp_c=pour_temp_c, mould=mould,
        volume_cm3=vol, area_cm2=area, joined_faces=_joined(row),
        label=f"{row.get('pattern', '')} {row.get('zone', '')} {row.get('riser', '')}".strip())


def _joined(row: dict) -> str | None:
    v = row.get("joined_faces")
    return v if isinstance(v, str) and v else None


def current_risers(store, pattern: str, on: str | None = None) -> pd.DataFrame:
    """The risers of ``pattern``'s revision in effect on ``on`` (default today)."""
    on = on or dt.date.today().isoformat()
    store.pattern(pattern)
    risers = store.risers_frame(pattern=pattern)
    current = revision_in_effect(store.revisions_frame(pattern), on)
    keep = risers.merge(current[["pattern", "revision"]], on=["pattern", "revision"])
    if keep.empty:
        raise NotFound("riser revision", pattern, f"no revision of {pattern} is in effect on {on}")
    return keep


def case_from_log(store, pattern: str, zone: str, riser: str | None = None,
                  mould: str = "silica_sand", on: str | None = None) -> ThermalCase:
    """The case of the riser feeding ``zone`` in ``pattern``'s current revision."""
    rows = current_risers(store, pattern, on)
    rows = rows[rows["zone"] == zone]
    if rows.empty:
        raise NotFound("zone", zone, f"no riser of {pattern}'s current revision feeds a zone of that name")
    if riser is not None:
        rows = rows[rows["riser"] == riser]
        if rows.empty:
            raise NotFound("riser", riser, f"no riser of that name feeds {pattern} zone {zone}")
    elif len(rows) > 1:
        raise BadInput("riser", None, f"zone {zone} of {pattern} is fed by risers "
                       + ", ".join(rows["riser"]) + "; choose one with --riser")
    row = rows.iloc[0].to_dict()
    return case_from_row(row, pour_temp_for(store, pattern, row["alloy"]), mould)


def pour_temp_for(store, pattern: str, alloy: str) -> float | None:
    """The latest lot's pouring temperature, or None (the alloy's default) where the
    log has none or it does not lie above the alloy's liquidus."""
    t = store.latest_pour_temps([pattern]).get(pattern)
    a = thermal_alloy(alloy)
    return t if t is not None and a.liquidus_c < t < a.liquidus_c + 500 else None
