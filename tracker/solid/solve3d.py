"""The 3-D enthalpy solve: implicit sweeps along x, y and z.

Each time step is split into three implicit (backward-Euler) steps, one per
direction, the order turning from step to step (locally one-dimensional
splitting, as in the 2-D check). Every split step is a set of tridiagonal
systems, one per line of cells, solved with Newton iterations on the
enthalpy by the 2-D check's own kernel (``tracker.thermal.solver``): the
same phase curve, the same properties, no stability limit on the step.
Outer faces are adiabatic; the sand layer is thick enough that the heat
does not reach them. SI inside (m, s, K); positions in the results in mm.

While the metal freezes the watch records for every metal cell: when it
passed the liquidus (its liquid contraction ended) and the solidus (it
froze), its Niyama value, and which risers its liquid was joined to when it
stopped feeding (its solid fraction passing the feeding limit): a bit per
riser, so that which hot spot a riser feeds, and what liquid no riser
reaches, are read off after the solve.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from tracker.thermal.solver import FIXED, MOULD, RISER, SECTION, PhaseCurve, _implicit_1d


@dataclass
class Sweep3:
    """One direction's lines (the axis moved last, flattened), as the 2-D kernel takes them."""

    axis: int
    glo: np.ndarray
    ghi: np.ndarray
    vol: np.ndarray
    fixed: np.ndarray
    metal_idx: np.ndarray
    inv_heat: np.ndarray
    n: int

    def flat(self, a: np.ndarray) -> np.ndarray:
        return np.ascontiguousarray(np.moveaxis(a, self.axis, -1)).ravel()

    def unflat(self, v: np.ndarray, shape) -> np.ndarray:
        moved = list(shape)
        moved.append(moved.pop(self.axis))
        return np.moveaxis(v.reshape(moved), -1, self.axis)


def sweeps(edges_m, k: np.ndarray, heat: np.ndarray, metal: np.ndarray, fixed: np.ndarray) -> list[Sweep3]:
    """The three directions' sweeps: face conductances (W/K) from the half cells in series."""
    d = [np.diff(e) for e in edges_m]
    vol = d[0][:, None, None] * d[1][None, :, None] * d[2][None, None, :]
    out = []
    for a in range(3):
        shape = [1, 1, 1]
        shape[a] = -1
        half = d[a].reshape(shape) / 2.0 / k                 # half-cell resistance per unit area
        others = [d[b] for b in range(3) if b != a]
        area = np.multiply.outer(others[0], others[1])       # face area of each line
        r = np.moveaxis(half, a, -1)                          # (.., .., n)
        g = np.zeros(r.shape[:-1] + (r.shape[-1] + 1,))
        g[..., 1:-1] = area[..., None] / (r[..., :-1] + r[..., 1:])
        sw = Sweep3(a, g[..., :-1].ravel().copy(), g[..., 1:].ravel().copy(), np.empty(0),
                    np.zeros(metal.size, bool), np.empty(0, int), np.empty(0), metal.size)
        sw.vol = sw.flat(vol)
        sw.fixed = sw.flat(fixed)
        sw.metal_idx = np.flatnonzero(sw.flat(metal))
        sw.inv_heat = 1.0 / sw.flat(heat)
        out.append(sw)
    return out


@dataclass
class Solve3Output:
    """Per-cell fields (nx, ny, nz): times in s (nan where it did not happen), Niyama in the
    2-D check's unit, ``fed`` the riser bits; and the run's figures."""

    solid_time_s: np.ndarray
    liquidus_time_s: np.ndarray
    niyama: np.ndarray
    fed: np.ndarray
    steps: int
    end_time_s: float
    time_step_s: float
    solve_s: float


class Watch3:
    """What the 3-D solve records as the metal freezes (see the module docstring)."""

    def __init__(self, region: np.ndarray, body: np.ndarray, centres_m, h: np.ndarray, curve: PhaseCurve,
                 niyama_share: float, feeding_fraction: float):
        c, lv = curve.volumetric_heat, curve.volumetric_latent
        self.metal = np.isin(region, (SECTION, RISER))
        self.body = body
        self.risers = int(body.max()) if body.size else 0
        self.h_sol = curve.h_solidus
        self.h_liq = float(c * curve.liquidus + lv)
        self.h_eval = float(curve.enthalpy(curve.solidus + niyama_share * (curve.liquidus - curve.solidus)))
        self.h_feed = float(np.interp(1.0 - feeding_fraction, (curve.h - c * curve.t) / lv, curve.h)) \
            if lv > 0 else self.h_sol
        self.centres = centres_m
        shape = region.shape
        self.solid = np.full(shape, np.nan)
        self.liquidus = np.full(shape, np.nan)
        self.niyama = np.full(shape, np.nan)
        self.fed = np.full(shape, -1, dtype=np.int64)      # -1: not yet recorded
        self.solid[self.metal & (h < self.h_sol)] = 0.0
        self.liquidus[self.metal & (h < self.h_liq)] = 0.0

    def update(self, t: float, dt: float, h_prev, h, temp_prev, temp) -> None:
        """Record the step from ``t`` to ``t + dt`` s."""
        for field_, level in ((self.solid, self.h_sol), (self.liquidus, self.h_liq)):
            m = self.metal & np.isnan(field_) & (h < level)
            if m.any():
                frac = (h_prev[m] - level) / np.maximum(h_prev[m] - h[m], 1e-30)
                field_[m] = t + dt * np.clip(frac, 0.0, 1.0)
        self._niyama(dt, h_prev, h, temp_prev, temp)
        self._fed(h_prev, h)

    def _niyama(self, dt, h_prev, h, temp_prev, temp) -> None:
        m = self.metal & np.isnan(self.niyama) & (h_prev >= self.h_eval) & (h < self.h_eval)
        if not m.any():
            return
        grads = np.gradient(temp, *self.centres)
        grad = np.sqrt(sum(g[m] ** 2 for g in grads)) / 100.0      # K/m -> °C/cm
        rate = (temp_prev[m] - temp[m]) / dt * 60.0                 # °C/min
        self.niyama[m] = grad / np.sqrt(np.maximum(rate, 1e-12))

    def _fed(self, h_prev, h) -> None:
        crossing = self.metal & (self.fed < 0) & (h <= self.h_feed)
        if not crossing.any():
            return
        liquid = self.metal & (h_prev > self.h_feed)
        lab, n = ndimage.label(liquid)
        bits = np.zeros(n + 1, dtype=np.int64)
        for r in range(1, self.risers + 1):
            labs = np.unique(lab[liquid & (self.body == r)])
            bits[labs] |= np.int64(1) << (r - 1)
        bits[0] = 0
        self.fed[crossing] = bits[lab[crossing]]


def solve3(edges_m, region: np.ndarray, body: np.ndarray, k: np.ndarray, heat: np.ndarray,
           curve: PhaseCurve, t_init: np.ndarray, dt: float, t_max: float, *, niyama_share: float,
           feeding_fraction: float) -> Solve3Output:
    """Run the 3-D solve until every metal cell is solid (or ``t_max`` s); see the module docstring.

    edges_m: cell edges along x, y, z (m); k W/(m·K), heat rho·c J/(m³·K) and t_init °C per cell;
    FIXED cells keep their temperature (a wall held at it)."""
    start = time.perf_counter()
    metal = np.isin(region, (SECTION, RISER))
    sw = sweeps(edges_m, k, heat, metal, region == FIXED)
    h = np.where(metal, curve.enthalpy(t_init), heat * t_init)
    temp = np.where(metal, curve.temperature(h), h / heat)
    centres = [0.5 * (e[1:] + e[:-1]) for e in edges_m]
    watch = Watch3(region, body, centres, h, curve, niyama_share, feeding_fraction)
    shape = region.shape
    t, step = 0.0, 0
    while t < t_max - 1e-9:
        order = sw if step % 2 == 0 else sw[::-1]
        h_prev, temp_prev = h, temp
        for s in order:
            hv, _ = _implicit_1d(s, s.flat(h), dt, curve)  # type: ignore[arg-type]  # Sweep3 holds what the kernel reads
            h = s.unflat(hv, shape)
        h = np.ascontiguousarray(h)
        temp = np.where(metal, curve.temperature(h), h / heat)
        watch.update(t, dt, h_prev, h, temp_prev, temp)
        t += dt
        step += 1
        if not (metal & (h >= watch.h_sol)).any():
            break
    watch.fed[watch.fed < 0] = 0
    return Solve3Output(watch.solid, watch.liquidus, watch.niyama, watch.fed, step, t, dt,
                        time.perf_counter() - start)


__all__ = ["MOULD", "SECTION", "RISER", "FIXED", "solve3", "sweeps", "Solve3Output"]
