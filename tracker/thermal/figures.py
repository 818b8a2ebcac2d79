"""The figures of one solve, and the solver's own error from two grids and two steps.

Regions of the section (the figure Chvorinov's rule speaks of is the
section's own time, not the metal the riser keeps hot):

- *junction*: the section's cells under the riser's footprint and within one
  section thickness of it (for a side riser, within one thickness of the
  neck);
- *own*: the section's cells beyond that.

The neck has frozen when the section's feeding liquid is first cut off from
the riser's (0.5 % of the section's volume, ``solver``); where that never
happens the neck stays open until the section's last liquid has frozen. The
arrest is the time the whole section has cooled to the arrest temperature
the solve was given (its start of freezing, for pressure control). Where the section is too short to
  have any, the cells beyond the footprint stand in (noted), else all of it.

The error estimate: the main solve (cell h, step dt) beside two cheaper ones
at a coarser grid (about 2h), one at dt and one at 2·dt. The grid's share of
the error is |f(h) − f(2h)| (first order taken, the safe side for a scheme
of second order in space), the step's |f(2h, dt) − f(2h, 2dt)| (backward
Euler is first order in time: the error at dt is about the change from 2·dt).
The neck's closing is an event of the grid (a cell passing the feeding
solid fraction cuts the path), so it takes the error of the other times.
Niyama's minimum is extrapolated from the two grids (Richardson, first
order, as its values fall about linearly with the cell size) with the
correction and the step's change as its uncertainty.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from tracker.thermal.solver import NECK, RISER, SECTION

TIMES = ("section_all_s", "section_own_s", "junction_s", "riser_s", "neck_s", "arrest_s")


@dataclass
class Figures:
    """What one solve gives: times in s, positions in mm, Niyama in its unit."""

    section_all_s: float
    section_own_s: float
    junction_s: float
    riser_s: float
    neck_s: float | None
    arrest_s: float | None
    last_point_mm: tuple
    min_niyama: float | None
    min_niyama_at_mm: tuple | None
    isolated_share: float
    notes: list = field(default_factory=list)


def _max(times: np.ndarray, mask: np.ndarray) -> float | None:
    return float(np.max(times[mask])) if mask.any() else None


def figures(b, out, thickness_mm: float) -> Figures:
    """The figures of solve ``out`` of built model ``b`` (``mesh.Built``); ``thickness_mm``
    the section's thickness, the band beyond the footprint that still counts as junction."""
    g = b.grid
    region = g.region
    metal = np.isin(region, (SECTION, RISER, NECK))
    st = np.where(metal & np.isnan(out.solid_time_s), np.inf, out.solid_time_s)   # liquid at the end: "after"
    sec, ris = region == SECTION, region == RISER
    xe = g.x_edges * 1000.0
    xc, zc = g.xc * 1000.0, g.zc * 1000.0
    cols = np.nonzero(ris.any(axis=0))[0]
    foot = max(0.0, float(xe[cols.max() + 1])) if cols.size else 0.0
    x = np.broadcast_to(xc[None, :], region.shape)
    own = sec & (x > foot + thickness_mm)
    notes = []
    if not own.any():
        own = sec & (x > foot)
        notes.append("the section ends within one thickness of the riser: its own time is taken beyond the "
                     "riser's footprint")
        if not own.any():
            own = sec
            notes.append("the section lies under the riser: its own time is that of all of it")
    junction = sec & ~own
    masked = np.where(metal, st, -np.inf)
    iz, ix = np.unravel_index(np.argmax(masked), masked.shape)
    ny = np.where(sec, out.niyama, np.nan)
    min_ny, ny_at = None, None
    if np.isfinite(ny).any():
        jz, jx = np.unravel_index(np.nanargmin(ny), ny.shape)
        min_ny, ny_at = float(ny[jz, jx]), (float(xc[jx]), float(zc[jz]))
    arrest = None
    if out.arrest_time_s is not None:
        arrest = _max(np.where(np.isnan(out.arrest_time_s), np.inf, out.arrest_time_s), sec)
    t_sec = float(np.max(st[sec]))
    neck = out.cut_time_s if out.cut_time_s is not None else t_sec
    return Figures(section_all_s=t_sec, section_own_s=float(np.max(st[own])),
                   junction_s=_max(st, junction) or t_sec, riser_s=float(np.max(st[ris])),
                   neck_s=neck, arrest_s=arrest, last_point_mm=(float(xc[ix]), float(zc[iz])),
                   min_niyama=min_ny, min_niyama_at_mm=ny_at, isolated_share=float(out.isolated_share), notes=notes)


def _share(f: float | None, c: float | None, long: float | None, ratio: float) -> float:
    """The error share of one time ``f`` from its coarse-grid ``c`` and coarse-grid, double-step ``long``."""
    if f is None or c is None or long is None:
        return 0.0
    if not all(math.isfinite(v) for v in (f, c, long)) or f <= 0:
        return math.inf
    return (abs(f - c) / max(ratio - 1.0, 1e-9) + abs(c - long)) / f


def error_shares(main: Figures, coarse: Figures, long: Figures, ratio: float) -> dict:
    """Each time's error as a share of it (see the module docstring); ``ratio`` the coarse cell / main cell."""
    return {k: _share(getattr(main, k), getattr(coarse, k), getattr(long, k), ratio) for k in TIMES}


def niyama_extrapolated(main: Figures, coarse: Figures, long: Figures, ratio: float) -> tuple:
    """(Niyama's minimum extrapolated to a fine grid, its uncertainty), in the solve's unit; (None, None)
    where the section has no value. First-order Richardson from the two grids; never below 0."""
    f, c, lg = main.min_niyama, coarse.min_niyama, long.min_niyama
    if f is None or c is None:
        return None, None
    corr = (f - c) / max(ratio - 1.0, 1e-9)
    ext = max(f + corr, 0.0)
    unc = abs(corr) + (abs(c - lg) if lg is not None else 0.0)
    return ext, unc
