"""The published rules a riser is judged by.

Units: modulus in cm, volume in cm³, time in the unit of the mould constant
(min with B in min/cm², s with B in s/cm²). Everything accepts numpy arrays.

- Chvorinov's rule (Chvorinov, 1940): t = B · M^n, n about 2.
- Modulus rule (Wlodawer, 1966; common practice): M_riser >= 1.2 · M_section.
- Caine's method (Caine, 1949): freezing ratio X = M_r / M_c, volume ratio
  Y = V_r / V_c; sound when X lies above X = a / (Y - b) + c.
- Feed volume: eps · V_r >= beta · (V_c + V_r).
- Feeding distance, steel plates (Bishop-Pellini type rule, from memory):
  about 4.5 T from the riser to a free end.
"""

from __future__ import annotations

import math

import numpy as np

from tracker.alloys import CaineConstants
from tracker.errors import BadInput

DEFAULT_MODULUS_FACTOR = 1.2
DEFAULT_CHVORINOV_N = 2.0
NECK_FACTOR = 1.1  # M_neck about 1.1 · M_section for a side riser (Wlodawer; common practice)
FEEDING_DISTANCE_FACTOR = 4.5  # 2 T riser zone + 2.5 T end zone (from memory)


# --- Chvorinov ----------------------------------------------------------------

def chvorinov_time(modulus, b, n: float = DEFAULT_CHVORINOV_N):
    """Freezing time t = B · M^n."""
    return b * np.asarray(modulus, dtype=float) ** n


def mould_constant_from_time(time, modulus, n: float = DEFAULT_CHVORINOV_N):
    """The shop's B fitted from one measured freezing time: B = t / M^n."""
    return np.asarray(time, dtype=float) / np.asarray(modulus, dtype=float) ** n


def fit_mould_constant(times, moduli, n: float | None = None):
    """Fit B (and n unless given) to a shop's measured freezing times.

    A least-squares line through log t = log B + n log M. Returns (B, n).
    """
    t = np.asarray(times, dtype=float)
    m = np.asarray(moduli, dtype=float)
    if t.size < 1 or np.any(t <= 0) or np.any(m <= 0):
        raise BadInput("times", list(t), "need positive times and moduli")
    if n is None:
        if t.size < 2:
            raise BadInput("times", list(t), "fitting n needs two or more measurements")
        n, logb = np.polyfit(np.log(m), np.log(t), 1)
        return float(np.exp(logb)), float(n)
    return float(np.exp(np.mean(np.log(t) - n * np.log(m)))), float(n)


def mould_constant_from_properties(
    metal_density, latent_heat, liquid_specific_heat, superheat,
    melting_point, mould_initial_temp,
    mould_conductivity, mould_density, mould_specific_heat,
):
    """B from thermal properties, s/cm².

    B = [rho_m · L' / (T_m - T_0)]² · pi / (4 · k · rho · c), with
    L' = L + c_liquid · superheat (DOMAIN.md). SI inputs: kg/m³, J/kg,
    J/(kg·K), K, °C or K (only differences count), W/(m·K), kg/m³, J/(kg·K).
    """
    l_eff = latent_heat + liquid_specific_heat * superheat
    dt = melting_point - mould_initial_temp
    if dt <= 0:
        raise BadInput("melting_point", melting_point, "must be above the mould's initial temperature")
    b_si = (metal_density * l_eff / dt) ** 2 * math.pi / (
        4.0 * mould_conductivity * mould_density * mould_specific_heat)
    return b_si * 1e-4  # s/m² -> s/cm²


def modulus_for_time(time, b, n: float = DEFAULT_CHVORINOV_N):
    """Modulus that freezes in ``time``: M = (t / B)^(1/n)."""
    return (np.asarray(time, dtype=float) / b) ** (1.0 / n)


# --- modulus rule --------------------------------------------------------------

def effective_modulus(geometric_modulus, sleeve_factor=1.0):
    """Riser modulus with a sleeve's extension factor: M_eff = f · M_geom."""
    return np.asarray(geometric_modulus, dtype=float) * np.asarray(sleeve_factor, dtype=float)


def modulus_ratio(riser_modulus, section_modulus):
    return np.asarray(riser_modulus, dtype=float) / np.asarray(section_modulus, dtype=float)


def modulus_ok(riser_modulus, section_modulus, factor=DEFAULT_MODULUS_FACTOR):
    """True where M_riser >= factor · M_section (tolerates round-off)."""
    return modulus_ratio(riser_modulus, section_modulus) >= np.asarray(factor) * (1 - 1e-9)


def neck_ok(neck_modulus, section_modulus, riser_modulus):
    """M_section < M_neck < M_riser, the neck freezing between the two."""
    n = np.asarray(neck_modulus, dtype=float)
    return (n > np.asarray(section_modulus)) & (n < np.asarray(riser_modulus))


# --- Caine ----------------------------------------------------------------------

def caine_margin(freezing_ratio, volume_ratio, caine: CaineConstants):
    """X - X_curve(Y): how far the design point lies above Caine's curve.

    Negative below the curve; -inf where Y <= b (the curve is never reached).
    """
    x = np.asarray(freezing_ratio, dtype=float)
    xc = np.asarray(caine.x_curve(volume_ratio), dtype=float)
    out = np.where(np.isfinite(xc), x - xc, -np.inf)
    return out if out.ndim else float(out)


def caine_ok(freezing_ratio, volume_ratio, caine: CaineConstants):
    return np.asarray(caine_margin(freezing_ratio, volume_ratio, caine)) >= -1e-9


# --- feed volume ----------------------------------------------------------------

def check_efficiency(efficiency, shrinkage):
    if not (0 < efficiency <= 1):
        raise BadInput("efficiency", efficiency, "must be a fraction above 0 and at most 1 (0.14 = 14 %)")
    if not (-0.5 < shrinkage < 0.5):
        raise BadInput("shrinkage", shrinkage, "must be a fraction between -0.5 and 0.5 (0.035 = 3.5 %)")
    if efficiency <= shrinkage:
        raise BadInput("efficiency", efficiency,
                       f"must be above the shrinkage {shrinkage}; a riser that can give less "
                       "than the metal shrinks can never feed")


def feed_min_volume(section_volume, shrinkage, efficiency):
    """Smallest riser volume that holds the section's feed metal, cm³.

    eps · V_r >= beta · (V_c + V_r)  =>  V_r >= beta · V_c / (eps - beta).
    Zero where the alloy does not shrink (beta <= 0, as grey iron may).
    """
    beta = np.maximum(np.asarray(shrinkage, dtype=float), 0.0)
    eps = np.asarray(efficiency, dtype=float)
    return beta * np.asarray(section_volume, dtype=float) / (eps - beta)


def feed_margin(riser_volume, section_volume, shrinkage, efficiency):
    """Metal the riser can give over metal needed, minus one (>= 0 passes)."""
    beta = np.maximum(np.asarray(shrinkage, dtype=float), 0.0)
    vr = np.asarray(riser_volume, dtype=float)
    need = beta * (np.asarray(section_volume, dtype=float) + vr)
    give = np.asarray(efficiency, dtype=float) * vr
    with np.errstate(divide="ignore"):
        out = np.where(need > 0, give / np.where(need > 0, need, 1.0) - 1.0, np.inf)
    return out if out.ndim else float(out)


# --- feeding distance -----------------------------------------------------------

def feeding_distance_mm(thickness_mm):
    """Distance a riser feeds along a steel plate of thickness T, mm (4.5 T)."""
    return FEEDING_DISTANCE_FACTOR * np.asarray(thickness_mm, dtype=float)
