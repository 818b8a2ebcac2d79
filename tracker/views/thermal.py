"""Display-ready frames of a thermal result: the cells of the freezing-time
and Niyama maps, the outlines of the bodies, the last point to freeze.

Lengths are in ``system``'s unit (mm, or in for ``us``), the Niyama values in
(°C·min)^0.5/cm or (°F·min)^0.5/in, the pouring temperature in °C or °F; the
solve itself is metric (``tracker.units`` converts at this edge)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker import units
from tracker.thermal import THERMAL_CAUTION, ThermalResult, notes_text, reasons_text
from tracker.thermal.solver import NECK, RISER, SECTION, SLEEVE

REGION_NAMES = {SECTION: "section", RISER: "riser", NECK: "neck", SLEEVE: "sleeve"}


def _length(values, system: str):
    return units.to_system("length_mm", values, system)


def cells_frame(result: ThermalResult, system: str = units.METRIC) -> pd.DataFrame:
    """One row per metal cell: its rectangle (mm or in), body, freezing time (min) and Niyama."""
    m = result.maps
    xe, ze, region = _length(m["x_edges_mm"], system), _length(m["z_edges_mm"], system), m["region"]
    iz, ix = np.nonzero(np.isin(region, (SECTION, RISER, NECK)))
    st = m["solid_time_s"][iz, ix]
    ny = units.value_in("niyama", m["niyama"][iz, ix], system)
    return pd.DataFrame({
        "x0": xe[ix], "x1": xe[ix + 1], "z0": ze[iz], "z1": ze[iz + 1],
        "body": [REGION_NAMES[int(v)] for v in region[iz, ix]],
        "freeze_min": np.round(st / 60.0, 2),
        "niyama": np.where(np.isfinite(ny), np.round(ny, 2), np.nan),
    })


def outline_frame(result: ThermalResult, system: str = units.METRIC) -> pd.DataFrame:
    """Line segments (mm or in) where the body changes between neighbouring cells (metal and sleeve outlines)."""
    m = result.maps
    xe, ze = _length(m["x_edges_mm"], system), _length(m["z_edges_mm"], system)
    body = np.where(np.isin(m["region"], (SECTION, RISER, NECK, SLEEVE)), m["region"], 0)
    segs = []
    pad = np.pad(body, 1)
    # vertical edges: between columns j-1 and j
    dz = np.nonzero(pad[1:-1, :-1] != pad[1:-1, 1:])
    for i, j in zip(*dz, strict=False):
        segs.append((xe[j], ze[i], xe[j], ze[i + 1]))
    dx = np.nonzero(pad[:-1, 1:-1] != pad[1:, 1:-1])
    for i, j in zip(*dx, strict=False):
        segs.append((xe[j], ze[i], xe[j + 1], ze[i]))
    return pd.DataFrame(segs, columns=["x", "z", "x2", "z2"])


def summary(result: ThermalResult, system: str = units.METRIC) -> dict:
    """The figures a page shows beside the maps. The result's own keys stay metric;
    the keys a page shows in ``system`` are: ``length_unit``, ``cell_size``,
    ``last_point`` (x, z), ``pour_temp`` with ``temp_unit``, ``min_niyama_shown``,
    ``niyama_threshold_shown`` and ``niyama_unit_shown``, ``reasons`` (words),
    ``x_label`` and ``z_label`` (axis titles)."""
    d = result.to_dict()
    u = units.symbol("length_mm", system)
    ny = lambda v: None if v is None else float(units.value_in("niyama", v, system))  # noqa: E731 (a one-line local helper)
    d.update(reasons=reasons_text(result, system),
             grid=result.grid, cell_mm=result.cell_mm, time_step_s=result.time_step_s,
             steps=result.steps, pour_temp_c=result.pour_temp_c, last_point_mm=result.last_point_mm,
             min_niyama_at_mm=result.min_niyama_at_mm, niyama_source=result.niyama_source,
             isolated_share=result.isolated_share, notes=notes_text(result, system), caution=THERMAL_CAUTION,
             length_unit=u, cell_size=float(_length(result.cell_mm, system)),
             last_point=tuple(float(_length(v, system)) for v in result.last_point_mm),
             pour_temp=float(units.to_system("pour_temp_c", result.pour_temp_c, system)),
             temp_unit=units.symbol("pour_temp_c", system),
             min_niyama_shown=ny(result.min_niyama), niyama_threshold_shown=ny(result.niyama_threshold),
             niyama_uncertainty_shown=ny(result.niyama_uncertainty),
             niyama_unit_shown=units.symbol("niyama", system),
             x_label=f"r ({u}) from the riser's axis" if result.model == "axisymmetric"
             else f"x ({u}) along the section, from its fed end",
             z_label=f"z ({u}), height")
    return d


def view(result: ThermalResult, system: str = units.METRIC) -> dict:
    """Everything the dashboard's thermal view draws, as plain frames and values, in ``system``."""
    return {"summary": summary(result, system), "cells": cells_frame(result, system),
            "outline": outline_frame(result, system)}


def pattern_thermal(store, pattern: str, system: str = units.METRIC) -> list[dict]:
    """The thermal view of each riser of ``pattern``'s current revision."""
    from tracker.thermal.cases import case_from_row, current_risers, pour_temp_for
    from tracker.thermal.checks import solve_case

    rows = current_risers(store, pattern)
    out = []
    for row in rows.to_dict("records"):
        res = solve_case(case_from_row(row, pour_temp_for(store, pattern, row["alloy"])))
        out.append({"riser": row["riser"], "zone": row["zone"], **view(res, system)})
    return out


def what_if_view(store, result: dict, system: str = units.METRIC) -> dict:
    """The thermal view of a what-if's changed riser (``tracker.advice.suggest.what_if``'s result)."""
    from tracker.thermal.checks import solve_case, what_if_fields
    from tracker.thermal.mesh import ThermalCase

    return view(solve_case(ThermalCase(**what_if_fields(store, result)["thermal_case"])), system)
