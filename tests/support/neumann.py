"""Neumann's two-phase solution of a freezing slab, the outside reference of the
thermal solvers' front (Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed.,
§11.2; equal properties in both phases)."""

from __future__ import annotations

import math

from scipy import optimize


def neumann_lambda(alloy, t_wall: float, t_init: float) -> float:
    """Root of Neumann's two-phase equation (equal properties in both phases): the front
    stands at 2·λ·sqrt(α·t). ``alloy``: liquidus_c, specific_heat_j_kgk, latent_j_kg; °C."""
    tm = alloy.liquidus_c
    st = alloy.specific_heat_j_kgk * (tm - t_wall) / alloy.latent_j_kg
    sup = (t_init - tm) / (tm - t_wall)

    def f(lam):
        return (math.exp(-lam**2) / math.erf(lam) - sup * math.exp(-lam**2) / math.erfc(lam)
                - lam * math.sqrt(math.pi) / st)
    return optimize.brentq(f, 1e-6, 5.0)
