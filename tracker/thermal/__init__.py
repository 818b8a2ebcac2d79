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
from tracker.design.alloys import get_alloy
from tracker.thermal import pressure_control
from tracker.thermal.figures import error_shares, figures, niyama_extrapolated
from tracker.thermal.mesh import (
    DEFAULT_CELLS_ACROSS,
    MIN_CELLS_ACROSS,
    STEPS_PER_SECTION,
    ThermalCase,
    build,
    model_kind,
    neck_note,
    validate,
)
from tracker.thermal.properties import FEEDING_SOLID_FRACTION, NIYAMA_EVAL_SHARE, NIYAMA_UNIT
from tracker.thermal.solver import SECTION, TIME_LIMIT_S, solve

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
JSON_KEYS = ("section_freeze_s", "junction_freeze_s", "riser_freeze_s", "freeze_ratio", "last_to_freeze",
             "isolated_liquid", "min_niyama", "niyama_uncertainty", "niyama_threshold", "niyama_unit",
             "thermal_ok", "verdict", "solver_error_share", "rule_set", "neck_freeze_s", "arrest_s", "model",
             "cells", "solve_s")
VERDICTS = ("pass", "fail", "inconclusive")


@dataclass
class ThermalResult:
    """One judged solve: freezing times in s, positions in mm, the Niyama value in NIYAMA_UNIT.

    section_freeze_s is the section's own time (beyond the riser's footprint plus one
    section thickness), junction_freeze_s that of the metal under and beside the riser,
    freeze_ratio riser / section's own. verdict: pass, fail or inconclusive (a margin
    inside ``solver_error_share``, the error from two grids and two steps); thermal_ok
    is verdict == "pass". min_niyama is extrapolated from two grids, ± niyama_uncertainty.
    Pressure control (ductile iron) only: neck_freeze_s when the neck closes, arrest_s when
    the whole section has reached its eutectic arrest (None otherwise).
    """

    case: ThermalCase
    model: str
    section_freeze_s: float
    junction_freeze_s: float
    riser_freeze_s: float
    freeze_ratio: float
    last_to_freeze: str
    last_point_mm: tuple
    isolated_liquid: bool
    isolated_share: float
    isolated_at_mm: tuple | None
    min_niyama: float | None
    niyama_uncertainty: float | None
    min_niyama_at_mm: tuple | None
    niyama_threshold: float | None
    niyama_unit: str
    niyama_source: str
    thermal_ok: bool
    verdict: str
    reasons: list
    solver_error_share: float | None
    rule_set: str
    cells: int
    grid: tuple
    cell_mm: float
    time_step_s: float
    steps: int
    pour_temp_c: float
    solve_s: float
    neck_freeze_s: float | None = None
    arrest_s: float | None = None
    niyama_default_grid: float | None = None
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


def _niyama_words(value: float, thr: float, system: str) -> tuple[str, str]:
    if system == units.US:
        return units.number("niyama", value, system), units.show("niyama", thr, system)
    return f"{value:.2f}", f"{thr:g} {NIYAMA_UNIT}"


def _reasons(f: _Judged, system: str = "metric") -> list[str]:
    """Why a solve fails or is inconclusive, in words (the Niyama in ``system``'s unit)."""
    if f.rule_set == "pressure_control":
        return list(f.pc_reasons)
    reasons = []
    margin, band = f.riser_margin, f.riser_band
    if margin < -band:
        reasons.append("the section freezes after the riser")
    elif band > 0 and margin <= band:
        reasons.append(f"riser against the section: margin {margin:+.1%}, inside the solver's error of "
                       f"±{band:.1%}")
    if f.isolated:
        reasons.append(f"liquid cut off from the riser in the section ({f.isolated_share:.1%} of its volume)")
    ny, unc, thr = f.min_ny, f.ny_unc or 0.0, f.thr
    if thr is not None and ny is not None:
        v, t = _niyama_words(ny, thr, system)
        if ny + unc < thr:
            reasons.append(f"Niyama {v} below {t} in the section")
        elif ny - unc < thr:
            u, _ = _niyama_words(unc, thr, system)
            reasons.append(f"Niyama {v} ± {u} against {t}: inside its uncertainty")
    return reasons


def _verdict(f: _Judged) -> str:
    """pass, fail or inconclusive from the judged figures."""
    if f.rule_set == "pressure_control":
        return f.pc_verdict
    ny, unc, thr = f.min_ny, f.ny_unc or 0.0, f.thr
    failed = f.riser_margin < -f.riser_band or f.isolated or (thr is not None and ny is not None and ny + unc < thr)
    if failed:
        return "fail"
    unsure = (f.riser_band > 0 and f.riser_margin <= f.riser_band) or \
        (thr is not None and ny is not None and ny - unc < thr)
    return "inconclusive" if unsure else "pass"


def reasons_text(result: ThermalResult, system: str = "metric") -> list[str]:
    """``result.reasons`` worded in ``system`` (tracker.units): the Niyama
    criterion in (°F·min)^0.5/in for ``us``."""
    if system == units.METRIC or result.rule_set == "pressure_control":
        return list(result.reasons)
    return _reasons(_Judged.of_result(result), system)


def notes_text(result: ThermalResult, system: str = "metric") -> list[str]:
    """``result.notes`` worded in ``system`` (tracker.units): the one note with a
    length in it, the neck wider than the riser, in inches for ``us``."""
    neck, riser = result.case.neck_diameter_mm, result.case.diameter_mm
    if neck is None or not neck > riser:
        return list(result.notes)
    metric = neck_note(neck, riser)
    return [neck_note(neck, riser, system) if n == metric else n for n in result.notes]


def _solve(b, time_limit_s, isolation: bool = True):
    """Solve built model ``b``; for pressure control, record when each cell starts to freeze
    (a near-eutectic iron's eutectic arrest: the end of its liquid contraction)."""
    arrest = b.alloy.liquidus_c if get_alloy(b.alloy.key).rule_set == "pressure_control" else None
    return solve(b.grid, b.k, b.heat, b.curve, b.t_init, b.dt, b.t_max, niyama_share=NIYAMA_EVAL_SHARE,
                 feeding_fraction=FEEDING_SOLID_FRACTION, arrest_c=arrest, time_limit_s=time_limit_s,
                 isolation=isolation)


def run(case: ThermalCase, cells_across: int | None = None, keep_maps: bool = True,
        steps_per_section: int | None = None, error_estimate: bool = True,
        time_limit_s: float | None = TIME_LIMIT_S) -> ThermalResult:
    """Solve one case and judge it (see the module docstring). ``error_estimate``: also solve
    at a coarser grid with the same and a doubled step (``figures``), for the verdict's
    error band and Niyama's extrapolation; ``time_limit_s`` bounds each solve."""
    n = cells_across or DEFAULT_CELLS_ACROSS
    sps = steps_per_section or STEPS_PER_SECTION
    b = build(case, n, sps)
    out = _solve(b, time_limit_s)
    extra = None
    if error_estimate:
        n_c = max(MIN_CELLS_ACROSS, n // 2)
        bc, bl = build(case, n_c, sps), build(case, n_c, max(sps // 2, 1))
        extra = (bc.cell_mm / b.cell_mm, figures(bc, _solve(bc, time_limit_s, False), case.thickness_mm),
                 figures(bl, _solve(bl, time_limit_s, False), case.thickness_mm))
    return judge(case, b, out, keep_maps, extra)


@dataclass
class _Judged:
    """The figures a verdict is drawn from (times s, shares, Niyama in its unit)."""

    rule_set: str
    riser_margin: float
    riser_band: float
    isolated: bool
    isolated_share: float
    min_ny: float | None
    ny_unc: float | None
    thr: float | None
    pc_verdict: str = "pass"
    pc_reasons: list = field(default_factory=list)

    @classmethod
    def of_result(cls, r: ThermalResult) -> _Judged:
        band = 2.0 * (r.solver_error_share or 0.0)
        return cls(r.rule_set, r.riser_freeze_s / max(r.section_freeze_s, r.junction_freeze_s) - 1.0, band,
                   r.isolated_liquid, r.isolated_share, r.min_niyama, r.niyama_uncertainty, r.niyama_threshold)


def judge(case, b, out, keep_maps: bool = True, extra: tuple | None = None) -> ThermalResult:  # size: one record
    """The result of one solve: ``b`` the built model (``mesh.Built``), ``out`` the
    solver's output, ``extra`` (cell ratio, coarse figures, coarse double-step figures)
    for the error estimate or None; times in s, positions in mm. ``keep_maps``: keep the cell maps."""
    g = b.grid
    f = figures(b, out, case.thickness_mm)
    alloy = b.alloy
    rule_set = get_alloy(case.alloy).rule_set
    err, ny, ny_unc = None, f.min_niyama, None
    if extra is not None:
        ratio, coarse, long = extra
        shares = error_shares(f, coarse, long, ratio)
        keys = ("section_all_s", "riser_s") + (("arrest_s", "section_own_s")
                                                 if rule_set == "pressure_control" else ())
        err = max(shares[k] for k in keys)
        ny, ny_unc = niyama_extrapolated(f, coarse, long, ratio)
    band = 2.0 * (err or 0.0)
    thr = alloy.niyama_threshold
    isolated = f.isolated_share >= ISOLATED_MIN_SHARE
    notes = list(b.notes) + f.notes
    j = _Judged(rule_set, f.riser_s / f.section_all_s - 1.0 if f.section_all_s > 0 else math.inf, band,
                isolated, f.isolated_share, ny, ny_unc, thr)
    if rule_set == "pressure_control":
        pc = pressure_control.judge(f.arrest_s or f.section_own_s, f.neck_s or f.section_all_s, f.riser_s,
                                    f.section_own_s, err or 0.0)
        j.pc_verdict, j.pc_reasons, j.isolated = pc.verdict, pc.reasons, False
        notes.append(f"judged by {pressure_control.SOURCE}; {pressure_control.MOULD_ASSUMED}; liquid sealed "
                     "behind the frozen neck is expected there, not a fault")
        if case.neck_diameter_mm is None:
            notes.append("no neck given: the riser joins the section directly (pressure control sizes a neck)")
    verdict = _verdict(j)
    reasons = _reasons(j)
    maps = {}
    if keep_maps:
        maps = {"x_edges_mm": g.x_edges * 1000.0, "z_edges_mm": g.z_edges * 1000.0,
                "region": g.region, "solid_time_s": out.solid_time_s,
                "niyama": np.where(g.region == SECTION, out.niyama, np.nan), "axisymmetric": g.axisymmetric}
    iso_at = None if out.isolated_at_m is None else tuple(v * 1000.0 for v in out.isolated_at_m)
    return ThermalResult(
        case=case, model=b.model, section_freeze_s=f.section_own_s, junction_freeze_s=f.junction_s,
        riser_freeze_s=f.riser_s, freeze_ratio=f.riser_s / f.section_own_s if f.section_own_s > 0 else math.inf,
        last_to_freeze="riser" if f.riser_s >= f.section_all_s else "section", last_point_mm=f.last_point_mm,
        isolated_liquid=bool(isolated), isolated_share=f.isolated_share, isolated_at_mm=iso_at,
        min_niyama=ny, niyama_uncertainty=ny_unc, min_niyama_at_mm=f.min_niyama_at_mm, niyama_threshold=thr,
        niyama_unit=NIYAMA_UNIT, niyama_source=alloy.niyama_source, thermal_ok=verdict == "pass",
        verdict=verdict, reasons=reasons, solver_error_share=err, rule_set=rule_set,
        cells=int(g.region.size), grid=(int(g.region.shape[1]), int(g.region.shape[0])), cell_mm=b.cell_mm,
        time_step_s=b.dt, steps=out.steps, pour_temp_c=b.pour_temp_c, solve_s=out.solve_s,
        neck_freeze_s=f.neck_s if rule_set == "pressure_control" else None,
        arrest_s=f.arrest_s if rule_set == "pressure_control" else None, niyama_default_grid=f.min_niyama,
        notes=notes, maps=maps)


__all__ = ["ThermalCase", "ThermalResult", "run", "reasons_text", "notes_text", "build", "model_kind",
           "validate", "THERMAL_CAUTION", "JSON_KEYS", "ISOLATED_MIN_SHARE", "VERDICTS"]
