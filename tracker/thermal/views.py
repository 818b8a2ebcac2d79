"""Display-ready frames of a thermal result: the cells of the freezing-time
and Niyama maps, the outlines of the bodies, the last point to freeze."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker.thermal import THERMAL_CAUTION, ThermalResult
from tracker.thermal.solver import NECK, RISER, SECTION, SLEEVE

REGION_NAMES = {SECTION: "section", RISER: "riser", NECK: "neck", SLEEVE: "sleeve"}


def cells_frame(result: ThermalResult) -> pd.DataFrame:
    """One row per metal cell: its rectangle (mm), body, freezing time (min) and Niyama."""
    m = result.maps
    xe, ze, region = m["x_edges_mm"], m["z_edges_mm"], m["region"]
    iz, ix = np.nonzero(np.isin(region, (SECTION, RISER, NECK)))
    st = m["solid_time_s"][iz, ix]
    ny = m["niyama"][iz, ix]
    return pd.DataFrame({
        "x0": xe[ix], "x1": xe[ix + 1], "z0": ze[iz], "z1": ze[iz + 1],
        "body": [REGION_NAMES[int(v)] for v in region[iz, ix]],
        "freeze_min": np.round(st / 60.0, 2),
        "niyama": np.where(np.isfinite(ny), np.round(ny, 2), np.nan),
    })


def outline_frame(result: ThermalResult) -> pd.DataFrame:
    """Line segments (mm) where the body changes between neighbouring cells (metal and sleeve outlines)."""
    m = result.maps
    xe, ze = m["x_edges_mm"], m["z_edges_mm"]
    body = np.where(np.isin(m["region"], (SECTION, RISER, NECK, SLEEVE)), m["region"], 0)
    segs = []
    pad = np.pad(body, 1)
    # vertical edges: between columns j-1 and j
    dz = np.nonzero(pad[1:-1, :-1] != pad[1:-1, 1:])
    for i, j in zip(*dz):
        segs.append((xe[j], ze[i], xe[j], ze[i + 1]))
    dx = np.nonzero(pad[:-1, 1:-1] != pad[1:, 1:-1])
    for i, j in zip(*dx):
        segs.append((xe[j], ze[i], xe[j + 1], ze[i]))
    return pd.DataFrame(segs, columns=["x", "z", "x2", "z2"])


def summary(result: ThermalResult) -> dict:
    """The figures a page shows beside the maps."""
    d = result.to_dict()
    d.update(reasons=result.reasons, grid=result.grid, cell_mm=result.cell_mm, time_step_s=result.time_step_s,
             steps=result.steps, pour_temp_c=result.pour_temp_c, last_point_mm=result.last_point_mm,
             min_niyama_at_mm=result.min_niyama_at_mm, niyama_source=result.niyama_source,
             isolated_share=result.isolated_share, notes=result.notes, caution=THERMAL_CAUTION,
             x_label="r (mm) from the riser's axis" if result.model == "axisymmetric"
             else "x (mm) along the section, from its fed end")
    return d


def view(result: ThermalResult) -> dict:
    """Everything the dashboard's thermal view draws, as plain frames and values."""
    return {"summary": summary(result), "cells": cells_frame(result), "outline": outline_frame(result)}


def pattern_thermal(store, pattern: str) -> list[dict]:
    """The thermal view of each riser of ``pattern``'s current revision."""
    from tracker.thermal.cases import case_from_row, current_risers, pour_temp_for
    from tracker.thermal.checks import solve_case

    rows = current_risers(store, pattern)
    out = []
    for row in rows.to_dict("records"):
        res = solve_case(case_from_row(row, pour_temp_for(store, pattern, row["alloy"])))
        out.append({"riser": row["riser"], "zone": row["zone"], **view(res)})
    return out


def what_if_view(store, result: dict) -> dict:
    """The thermal view of a what-if's changed riser (``tracker.advise.what_if``'s result)."""
    from tracker.thermal.checks import solve_case, what_if_fields
    from tracker.thermal.model import ThermalCase

    return view(solve_case(ThermalCase(**what_if_fields(store, result)["thermal_case"])))
