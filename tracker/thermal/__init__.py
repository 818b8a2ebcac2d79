"""Thermal check: a solidification solve of one riser and the section it feeds.

``run(case)`` builds the 2-D model (``mesh.build``), solves it
(``solver.solve``) and judges it: freezing times of section and riser, the
last point to freeze, liquid in the section cut off from the riser's, and
Niyama's criterion against the alloy family's threshold. A screening solve,
not a validated casting simulation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from tracker import units
from tracker.thermal.mesh import ThermalCase, build, model_kind, neck_note, validate
from tracker.thermal.properties import FEEDING_SOLID_FRACTION, NIYAMA_EVAL_SHARE, NIYAMA_UNIT
from tracker.thermal.solver import NECK, RISER, SECTION, solve

# A pocket of cut-off liquid smaller than this share of the section's volume is
# not reported (it is one or two cells of the grid, not a resolved hot spot).
ISOLATED_MIN_SHARE = 0.005

THERMAL_CAUTION = (
    "Screening solve, not a validated casting simulation: 2-D conduction with "
    "constant properties and simplified geometry, no mould filling, fluid flow or "
    "air gap. Confirm by a full solidification simulation or trial pours; local "
    "codes, customer specifications and licensed practice prevail."
)

# The keys of ``pourback thermal --json``, in order (the contract).
JSON_KEYS = ("section_freeze_s", "riser_freeze_s", "freeze_ratio", "last_to_freeze",
             "isolated_liquid", "min_niyama", "niyama_threshold", "niyama_unit", "thermal_ok",
             "model", "cells", "solve_s")


@dataclass
class ThermalResult:
    """One judged solve: freezing times in s, positions in mm, the Niyama value in NIYAMA_UNIT."""

    case: ThermalCase
    model: str
    section_freeze_s: float
    riser_freeze_s: float
    freeze_ratio: float
    last_to_freeze: str
    last_point_mm: tuple
    isolated_liquid: bool
    isolated_share: float
    isolated_at_mm: tuple | None
    min_niyama: float | None
    min_niyama_at_mm: tuple | None
    niyama_threshold: float | None
    niyama_unit: str
    niyama_source: str
    thermal_ok: bool
    reasons: list
    cells: int
    grid: tuple
    cell_mm: float
    time_step_s: float
    steps: int
    pour_temp_c: float
    solve_s: float
    notes: list = field(default_factory=list)
    maps: dict = field(default_factory=dict, repr=False)

    def to_dict(self) -> dict:
        """The keys of ``pourback thermal --json``."""
        return {k: getattr(self, k) for k in JSON_KEYS}

    def details(self) -> dict:
        """Everything but the maps (for tables and the dashboard)."""
        d = {k: v for k, v in self.__dict__.items() if k not in ("maps", "case")}
        d["case"] = self.case.to_dict()
        return d


def _reasons(last: str, isolated: bool, isolated_share: float, min_ny, thr, system: str = "metric") -> list[str]:
    """Why a solve fails the thermal check, in words (the Niyama in ``system``'s unit)."""
    reasons = []
    if last != "riser":
        reasons.append("the section freezes after the riser")
    if isolated:
        reasons.append(f"liquid cut off from the riser in the section ({isolated_share:.1%} of its volume)")
    if thr is not None and min_ny is not None and min_ny < thr:
        if system == units.US:
            reasons.append(f"Niyama {units.number('niyama', min_ny, system)} below "
                           f"{units.show('niyama', thr, system)} in the section")
        else:
            reasons.append(f"Niyama {min_ny:.2f} below {thr:g} {NIYAMA_UNIT} in the section")
    return reasons


def reasons_text(result: ThermalResult, system: str = "metric") -> list[str]:
    """``result.reasons`` worded in ``system`` (tracker.units): the Niyama
    criterion in (°F·min)^0.5/in for ``us``."""
    return _reasons(result.last_to_freeze, result.isolated_liquid, result.isolated_share, result.min_niyama,
                    result.niyama_threshold, system)


def notes_text(result: ThermalResult, system: str = "metric") -> list[str]:
    """``result.notes`` worded in ``system`` (tracker.units): the one note with a
    length in it, the neck wider than the riser, in inches for ``us``."""
    neck, riser = result.case.neck_diameter_mm, result.case.diameter_mm
    if neck is None or not neck > riser:
        return list(result.notes)
    metric = neck_note(neck, riser)
    return [neck_note(neck, riser, system) if n == metric else n for n in result.notes]


def run(case: ThermalCase, cells_across: int | None = None, keep_maps: bool = True) -> ThermalResult:
    """Solve one case and judge it (see the module docstring)."""
    kw = {} if cells_across is None else {"cells_across": cells_across}
    b = build(case, **kw)
    out = solve(b.grid, b.k, b.heat, b.curve, b.t_init, b.dt, b.t_max,
                niyama_share=NIYAMA_EVAL_SHARE, feeding_fraction=FEEDING_SOLID_FRACTION)
    return judge(case, b, out, keep_maps)


def judge(case, b, out, keep_maps: bool = True) -> ThermalResult:
    """The result of one solve: ``b`` the built model (``mesh.Built``), ``out`` the
    solver's output; times in s, positions in mm. ``keep_maps``: keep the cell maps."""
    g = b.grid
    region = g.region
    st = out.solid_time_s
    sec = region == SECTION
    ris = region == RISER
    metal = np.isin(region, (SECTION, RISER, NECK))
    not_done = metal & np.isnan(st)
    st = np.where(not_done, np.inf, st)        # still liquid at t_max: freezes "after"
    t_sec = float(np.max(st[sec]))
    t_ris = float(np.max(st[ris]))
    xc, zc = g.xc * 1000.0, g.zc * 1000.0
    masked = np.where(metal, st, -np.inf)
    iz, ix = np.unravel_index(np.argmax(masked), masked.shape)
    last = "riser" if t_ris >= t_sec else "section"
    ny = np.where(sec, out.niyama, np.nan)
    alloy = b.alloy
    if np.isfinite(ny).any():
        jz, jx = np.unravel_index(np.nanargmin(ny), ny.shape)
        min_ny, ny_at = float(ny[jz, jx]), (float(xc[jx]), float(zc[jz]))
    else:
        min_ny, ny_at = None, None
    isolated = out.isolated_share >= ISOLATED_MIN_SHARE
    thr = alloy.niyama_threshold
    reasons = _reasons(last, isolated, out.isolated_share, min_ny, thr)
    ratio = t_ris / t_sec if t_sec > 0 else math.inf
    maps = {}
    if keep_maps:
        maps = {"x_edges_mm": g.x_edges * 1000.0, "z_edges_mm": g.z_edges * 1000.0,
                "region": region, "solid_time_s": out.solid_time_s, "niyama": ny,
                "axisymmetric": g.axisymmetric}
    iso_at = None if out.isolated_at_m is None else tuple(v * 1000.0 for v in out.isolated_at_m)
    return ThermalResult(
        case=case, model=b.model, section_freeze_s=t_sec, riser_freeze_s=t_ris, freeze_ratio=ratio,
        last_to_freeze=last, last_point_mm=(float(xc[ix]), float(zc[iz])),
        isolated_liquid=bool(isolated), isolated_share=out.isolated_share, isolated_at_mm=iso_at,
        min_niyama=min_ny, min_niyama_at_mm=ny_at, niyama_threshold=thr, niyama_unit=NIYAMA_UNIT,
        niyama_source=alloy.niyama_source, thermal_ok=not reasons, reasons=reasons,
        cells=int(region.size), grid=(int(region.shape[1]), int(region.shape[0])), cell_mm=b.cell_mm,
        time_step_s=b.dt, steps=out.steps, pour_temp_c=b.pour_temp_c, solve_s=out.solve_s,
        notes=list(b.notes), maps=maps)


__all__ = ["ThermalCase", "ThermalResult", "run", "reasons_text", "notes_text", "build", "model_kind",
           "validate", "THERMAL_CAUTION", "JSON_KEYS", "ISOLATED_MIN_SHARE"]
