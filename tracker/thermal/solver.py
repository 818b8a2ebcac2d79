"""Transient 2-D heat conduction with latent heat by the enthalpy method.

The unknown in every cell is its enthalpy per volume H (J/m³); temperature
and liquid fraction follow from H through the alloy's curve (Voller and
Prakash, 1987: a fixed grid, no front tracking). Each time step is split
into an implicit step along x (or r) and one along z (locally
one-dimensional splitting, the order alternating between steps); each
split step is a set of tridiagonal systems solved together by LAPACK's
``gtsv``, with Newton iterations on H for the latent heat (the source
linearisation of Voller and Swaminathan, 1991, written for H). Implicit
steps have no stability limit, so the time step follows the freezing time,
not the metal's conductivity.

Finite volumes on a rectilinear grid, planar (per metre of depth) or
axisymmetric (r from the axis). Faces between cells conduct with the
series (harmonic) conductance of the two half cells; the outer faces are
adiabatic, so the heat the metal loses stays in the mould (the energy
balance is exact up to the Newton tolerance). Units: SI inside (m, s, K).
"""

from __future__ import annotations

import functools
import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage
from scipy.linalg import lapack

from tracker.errors import SolveTooLong

# region codes of the cells
MOULD, SLEEVE, SECTION, RISER, NECK, FIXED = 0, 1, 2, 3, 4, 5

NEWTON_TOL_K = 1e-3
NEWTON_MAX = 12
# Every solve stops here (wall-clock seconds); a case inside the limits of mesh.build takes
# well under a second at the default grid on an idle machine.
TIME_LIMIT_S = 60.0


@dataclass
class Grid:
    """Cell edges (m), the region of every cell, and whether r–z axisymmetric."""

    x_edges: np.ndarray
    z_edges: np.ndarray
    region: np.ndarray          # (nz, nx) int
    axisymmetric: bool

    @property
    def shape(self):
        """(nz, nx) cells."""
        return self.region.shape

    @property
    def xc(self):
        """Cell centres along x (or r), m."""
        return 0.5 * (self.x_edges[1:] + self.x_edges[:-1])

    @property
    def zc(self):
        """Cell centres along z, m."""
        return 0.5 * (self.z_edges[1:] + self.z_edges[:-1])

    def volumes(self) -> np.ndarray:
        """Cell volumes, m³ (per metre of depth where planar)."""
        dz = np.diff(self.z_edges)[:, None]
        if self.axisymmetric:
            return np.pi * np.diff(self.x_edges**2)[None, :] * dz
        return np.diff(self.x_edges)[None, :] * dz


@dataclass
class PhaseCurve:
    """The metal's H(T) as a piecewise-linear table, per volume."""

    t: np.ndarray   # ascending temperatures, °C
    h: np.ndarray   # enthalpy per volume at those temperatures, J/m³
    liquidus: float
    solidus: float
    volumetric_heat: float
    volumetric_latent: float

    @classmethod
    def from_alloy(cls, alloy) -> PhaseCurve:
        """The curve of a ``properties.ThermalAlloy`` (its solid fraction against temperature)."""
        pts = sorted(alloy.fs_curve, key=lambda p: (p[0], -p[1]))
        t = np.array([p[0] for p in pts], dtype=float)
        fl = 1.0 - np.array([p[1] for p in pts], dtype=float)
        c, lv = alloy.volumetric_heat, alloy.volumetric_latent
        lo, hi = -1e6, 1e6
        t = np.concatenate([[lo], t, [hi]])
        fl = np.concatenate([[0.0], fl, [1.0]])
        return cls(t, c * t + lv * fl, float(t[1:-1].max()), float(t[1:-1].min()), c, lv)

    @functools.cached_property
    def slopes(self) -> np.ndarray:
        """dT/dH of each segment of the table."""
        return np.diff(self.t) / np.diff(self.h)

    def temperature(self, h):
        """T (°C) at enthalpy per volume h (J/m³)."""
        return np.interp(h, self.h, self.t)

    def enthalpy(self, t):
        """H at temperature t (liquid side where the curve is isothermal)."""
        t = np.asarray(t, dtype=float)
        # np.interp takes the last of equal abscissae: the liquid end of a plateau
        return np.interp(t, self.t, self.h)

    def liquid_fraction(self, h):
        """Liquid fraction (0..1) at enthalpy per volume h (J/m³)."""
        c, lv = self.volumetric_heat, self.volumetric_latent
        return np.clip((h - c * self.temperature(h)) / lv, 0.0, 1.0)

    @property
    def h_solidus(self) -> float:
        """Enthalpy per volume at the solidus, J/m³ (all latent heat released)."""
        return self.volumetric_heat * self.solidus


@dataclass
class SolveOutput:
    """What one solve gives: times in s, positions in m, maps of (nz, nx) cells."""

    grid: Grid
    time_step_s: float
    steps: int
    end_time_s: float
    solid_time_s: np.ndarray        # (nz, nx), time each metal cell became solid (nan elsewhere)
    niyama: np.ndarray              # (nz, nx), Ny at the evaluation temperature, (°C·min)^0.5/cm
    temperature_c: np.ndarray       # final
    h_initial: np.ndarray
    h_final: np.ndarray
    isolated_share: float           # largest share of the section's volume cut off from the riser
    isolated_time_s: float | None
    isolated_at_m: tuple | None
    newton_max: int
    solve_s: float
    history: list = field(default_factory=list)
    arrest_time_s: np.ndarray | None = None    # (nz, nx), time each metal cell cooled through arrest_c
    cut_time_s: float | None = None            # the first time 0.5 % of the section was cut off from the riser


def conductances(grid: Grid, k: np.ndarray):
    """Face conductances G (W/K) across x faces (nz, nx+1) and z faces (nz+1, nx)."""
    xe, ze = grid.x_edges, grid.z_edges
    dx, dz = np.diff(xe), np.diff(ze)
    nz, nx = grid.shape
    gx = np.zeros((nz, nx + 1))
    gz = np.zeros((nz + 1, nx))
    rx = (dx / 2.0)[None, :] / k          # half-cell resistances (per unit face area)
    rz = (dz / 2.0)[:, None] / k
    if grid.axisymmetric:
        ax = 2.0 * np.pi * xe[1:-1][None, :] * dz[:, None]
        az = np.pi * np.diff(xe**2)[None, :]
    else:
        ax = np.broadcast_to(dz[:, None], (nz, nx - 1))
        az = dx[None, :]
    gx[:, 1:-1] = ax / (rx[:, :-1] + rx[:, 1:])
    gz[1:-1, :] = az / (rz[:-1, :] + rz[1:, :])
    return gx, gz


class _Sweep:
    """One direction's tridiagonal structure, flattened line after line."""

    def __init__(self, g_faces: np.ndarray, vol: np.ndarray, transpose: bool, fixed: np.ndarray,
                 metal: np.ndarray, heat: np.ndarray):
        # g_faces: (lines, n+1) conductances along each line (both ends zero); vol, fixed,
        # metal and heat are (nz, nx) cell arrays, taken in this direction's order
        self.transpose = transpose
        self.glo = g_faces[:, :-1].ravel().copy()
        self.ghi = g_faces[:, 1:].ravel().copy()
        self.vol = vol.ravel().copy()
        self.n = self.glo.size
        self.fixed = self.flat(fixed)
        self.metal_idx = np.flatnonzero(self.flat(metal))
        self.inv_heat = 1.0 / self.flat(heat)

    def flat(self, a):
        """A (nz, nx) array as this direction's lines, one after the other."""
        return (a.T if self.transpose else a).ravel()

    def unflat(self, v, shape):
        """The inverse of ``flat`` for an array of ``shape``."""
        if self.transpose:
            return v.reshape(shape[1], shape[0]).T
        return v.reshape(shape)


class _Watch:
    """What the solve records as the metal freezes: when each cell became solid, its
    Niyama value, and the largest share of the section cut off from the riser."""

    def __init__(self, grid: Grid, vol: np.ndarray, metal: np.ndarray, h: np.ndarray, curve: PhaseCurve,
                 niyama_share: float, feeding_fraction: float, arrest_c: float | None = None):
        c, lv = curve.volumetric_heat, curve.volumetric_latent
        self.metal = metal
        self.h_sol = curve.h_solidus
        t_eval = curve.solidus + niyama_share * (curve.liquidus - curve.solidus)
        self.h_eval = float(curve.enthalpy(t_eval))
        # the enthalpy below which a cell no longer feeds (solid fraction feeding_fraction), J/m³
        self.fs_feed_h = float(np.interp(1.0 - feeding_fraction, (curve.h - c * curve.t) / lv, curve.h)) \
            if lv > 0 else self.h_sol
        shape = grid.shape
        self.solid_time = np.full(shape, np.nan)
        self.niyama = np.full(shape, np.nan)
        self.solid_time[metal & (h < self.h_sol)] = 0.0
        self.vol = vol
        self.sec = grid.region == SECTION
        self.sec_vol = float(self.vol[self.sec].sum()) or 1.0
        self.feeder = np.isin(grid.region, (RISER,))
        self.xc, self.zc = grid.xc, grid.zc
        self.iso_share: float = 0.0
        self.iso_time: float | None = None
        self.iso_at: tuple | None = None
        self.cut_time: float | None = None     # the first time a share of the section was cut off
        self.cut_min_share = 0.005
        self.isolation = True
        self.h_arrest = None if arrest_c is None else float(curve.enthalpy(arrest_c))
        self.arrest_time = None if arrest_c is None else np.where(metal & (h < (self.h_arrest or 0.0)), 0.0,
                                                                   np.nan)

    def update(self, t: float, dt: float, h_prev: np.ndarray, h: np.ndarray, temp_prev: np.ndarray,
               temp: np.ndarray) -> None:
        """Record the step from ``t`` to ``t + dt`` s (enthalpy and temperature before and after)."""
        self._solid(t, dt, h_prev, h)
        if self.arrest_time is not None:
            self._crossed(self.arrest_time, self.h_arrest, t, dt, h_prev, h)
        self._niyama(dt, h_prev, h, temp_prev, temp)
        if self.isolation:
            self._isolated(t + dt, h)

    def _crossed(self, times, h_mark, t, dt, h_prev, h):
        # the time a cell's enthalpy first falls below h_mark, interpolated within the step
        m = self.metal & np.isnan(times) & (h < h_mark)
        if m.any():
            frac = (h_prev[m] - h_mark) / np.maximum(h_prev[m] - h[m], 1e-30)
            times[m] = t + dt * np.clip(frac, 0.0, 1.0)

    def _solid(self, t, dt, h_prev, h):
        # the time a cell crosses the solidus, interpolated within the step
        m = self.metal & np.isnan(self.solid_time) & (h < self.h_sol)
        if m.any():
            frac = (h_prev[m] - self.h_sol) / np.maximum(h_prev[m] - h[m], 1e-30)
            self.solid_time[m] = t + dt * np.clip(frac, 0.0, 1.0)

    def _niyama(self, dt, h_prev, h, temp_prev, temp):
        # Niyama's G/sqrt(R) in the step a cell passes the evaluation temperature
        m = self.metal & np.isnan(self.niyama) & (h_prev >= self.h_eval) & (h < self.h_eval)
        if m.any():
            gzz, gxx = _gradient(temp, self.zc, self.xc)
            grad = np.hypot(gxx[m], gzz[m]) / 100.0           # K/m -> °C/cm
            rate = (temp_prev[m] - temp[m]) / dt * 60.0       # °C/min
            self.niyama[m] = grad / np.sqrt(np.maximum(rate, 1e-12))

    def _isolated(self, t_new, h):
        # liquid of the section no longer joined to the riser's liquid
        liquid = self.metal & (h > self.fs_feed_h)
        if not (liquid & self.sec).any():
            return
        lab, n = ndimage.label(liquid)
        fed = np.zeros(n + 1, bool)
        fed[np.unique(lab[liquid & self.feeder])] = True
        fed[0] = True
        cut = self.sec & ~fed[lab]
        if not cut.any():
            return
        share = float(self.vol[cut].sum()) / self.sec_vol
        if self.cut_time is None and share >= self.cut_min_share:
            self.cut_time = t_new
        if share > self.iso_share:
            self.iso_share, self.iso_time = share, t_new
            w = self.vol[cut]
            zz, xx = np.nonzero(cut)
            self.iso_at = (float(np.average(self.xc[xx], weights=w)), float(np.average(self.zc[zz], weights=w)))


def solve(grid: Grid, k: np.ndarray, heat: np.ndarray, curve: PhaseCurve,
          t_init: np.ndarray, dt: float, t_max: float, *,
          track: bool = True, niyama_share: float = 0.1,
          feeding_fraction: float = 0.7, record_times=(), time_limit_s: float | None = TIME_LIMIT_S,
          arrest_c: float | None = None, isolation: bool = True) -> SolveOutput:
    """Run the solve until every metal cell is solid (or ``t_max`` s).

    k: conductivity W/(m·K) per cell; heat: rho·c J/(m³·K) per cell (the
    metal's is ``curve.volumetric_heat``); t_init: °C per cell. Metal cells
    are those whose region is SECTION, RISER or NECK; FIXED cells keep their
    temperature (a wall held at constant temperature).
    record_times: times (s) at which to keep a copy of the liquid fraction.
    time_limit_s: wall-clock bound; SolveTooLong past it (None: no bound).
    arrest_c: a temperature (°C) whose crossing time each metal cell records
    (``SolveOutput.arrest_time_s``; the eutectic arrest of a cast iron).
    isolation: track liquid cut off from the riser (a labelling per step; the
    error-estimate solves leave it out).
    """
    start = time.perf_counter()
    shape = grid.shape
    metal = np.isin(grid.region, (SECTION, RISER, NECK))
    fixed = grid.region == FIXED
    vol = grid.volumes()
    gx, gz = conductances(grid, k)
    sweeps = [_Sweep(gx, vol, False, fixed, metal, heat), _Sweep(gz.T, vol.T, True, fixed, metal, heat)]

    h = np.where(metal, curve.enthalpy(t_init), heat * t_init)
    h0 = h.copy()
    temp = np.where(metal, curve.temperature(h), h / heat)
    watch = _Watch(grid, vol, metal, h, curve, niyama_share, feeding_fraction, arrest_c)
    watch.isolation = isolation
    newton_max = 0
    history: list = []
    rec = sorted(record_times)

    t = 0.0
    step = 0
    while t < t_max - 1e-9:
        # the order of the two directions alternates from step to step
        order = sweeps if step % 2 == 0 else sweeps[::-1]
        h_prev, temp_prev = h, temp
        for s in order:
            hv, it = _implicit_1d(s, s.flat(h), dt, curve)
            newton_max = max(newton_max, it)
            h = s.unflat(hv, shape).copy()
        temp = np.where(metal, curve.temperature(h), h / heat)
        t_new = t + dt
        if track:
            watch.update(t, dt, h_prev, h, temp_prev, temp)
        while rec and rec[0] <= t_new + 1e-9:
            rec.pop(0)
            history.append((t_new, np.where(metal, curve.liquid_fraction(h), np.nan)))
        t = t_new
        step += 1
        if not (metal & (h >= watch.h_sol)).any():
            break
        if time_limit_s is not None and time.perf_counter() - start > time_limit_s:
            raise SolveTooLong(time_limit_s, step, int(math.ceil(t_max / dt)), int(metal.size))
    return SolveOutput(grid, dt, step, t, watch.solid_time, watch.niyama, temp, h0, h, watch.iso_share,
                       watch.iso_time, watch.iso_at, newton_max, time.perf_counter() - start, history,
                       watch.arrest_time, watch.cut_time)


def _gradient(temp, zc, xc):
    """dT/dz and dT/dx at cell centres (zero along an axis of one cell)."""
    gz = np.gradient(temp, zc, axis=0) if zc.size > 1 else np.zeros_like(temp)
    gx = np.gradient(temp, xc, axis=1) if xc.size > 1 else np.zeros_like(temp)
    return gz, gx


def _state(curve: PhaseCurve, h: np.ndarray, mi: np.ndarray, inv_heat: np.ndarray):
    """(segment of each metal cell, temperature, dT/dH) at enthalpy h."""
    hm = h[mi]
    seg = np.clip(np.searchsorted(curve.h, hm) - 1, 0, curve.h.size - 2)
    sm = curve.slopes[seg]
    temp = h * inv_heat
    temp[mi] = curve.t[seg] + sm * (hm - curve.h[seg])
    slope = inv_heat.copy()
    slope[mi] = sm
    return seg, temp, slope


def _secant(slope: np.ndarray, h: np.ndarray, h_last: np.ndarray, temp: np.ndarray, t_last: np.ndarray,
            mi: np.ndarray) -> None:
    """Set ``slope`` (dT/dH) of the metal cells ``mi`` that moved to the chord of their last two iterates.

    A cell that crossed a kink of T(H) takes that chord (a secant step): a
    tangent step can cycle across a kink.
    """
    dh_last = (h - h_last)[mi]
    moved = np.abs(dh_last) > 1e-9 * np.abs(h[mi])
    chord = (temp[mi] - t_last[mi])[moved] / dh_last[moved]
    sl = slope[mi]
    sl[moved] = np.maximum(chord, 0.0)
    slope[mi] = sl


def _implicit_1d(s: _Sweep, h_old: np.ndarray, dt: float, curve: PhaseCurve):
    """Backward-Euler step of dH/dt = div(k grad T) along one direction, Newton on H."""
    a = s.vol / dt
    glo, ghi = s.glo, s.ghi
    fixed, mi, inv_heat = s.fixed, s.metal_idx, s.inv_heat
    h = h_old.copy()
    seg, temp, slope = _state(curve, h, mi, inv_heat)
    h_last: np.ndarray | None = None
    t_last: np.ndarray | None = None
    has_fixed = bool(fixed.any())
    for it in range(1, NEWTON_MAX + 1):
        if h_last is not None and t_last is not None:
            _secant(slope, h, h_last, temp, t_last, mi)
        if has_fixed:
            slope[fixed] = 0.0
        flux = np.zeros_like(h)
        q = ghi[:-1] * np.diff(temp)    # heat from cell i+1 into cell i
        flux[:-1] += q
        flux[1:] -= q
        res = a * (h - h_old) - flux
        diag = a + (glo + ghi) * slope
        lower = -glo[1:] * slope[:-1]
        upper = -ghi[:-1] * slope[1:]
        if has_fixed:
            res[fixed] = 0.0
            lower[fixed[1:]] = 0.0
            upper[fixed[:-1]] = 0.0
        *_, dh, info = lapack.dgtsv(lower, diag, upper, -res, overwrite_b=True)
        if info != 0:  # pragma: no cover - a singular system means a bad grid
            raise RuntimeError(f"tridiagonal solve failed (info={info})")
        h_last, t_last = h, temp
        h = h + dh
        new_seg, temp, slope = _state(curve, h, mi, inv_heat)
        # T(H) is piecewise linear: once no metal cell changes segment after a
        # tangent step, the linearised system was the exact one.
        if it == 1 and np.array_equal(new_seg, seg):
            return h, it
        change = np.abs(temp - t_last)
        if has_fixed:
            change[fixed] = 0.0
        if change.max() < NEWTON_TOL_K:
            return h, it
        seg = new_seg
    return h, NEWTON_MAX
