"""The published rules a riser is judged by.

Units: modulus in cm, volume in cm³, time in the unit of the mould constant
(min with B in min/cm², s with B in s/cm²). Everything accepts numpy arrays.

- Chvorinov's rule (Chvorinov, 1940): t = B · M^n, n about 2.
- Modulus rule (Wlodawer, 1966; common practice): M_riser >= 1.2 · M_section.
- Caine's method (Caine, 1949): freezing ratio X = M_r / M_c, volume ratio
  Y = V_r / V_c; sound when X lies above X = a / (Y - b) + c.
- Feed volume: eps · V_r >= beta · (V_c + V_r).
- Feed volume adds the liquid contraction from the pour temperature to the
  liquidus to the solidification shrinkage.
- Neck of a side riser: the modulus sequence section : neck : riser =
  1 : 1.1 : 1.2 (Wlodawer; common practice) for steel and the non-graphitic
  alloys; M_section < M_neck < M_riser for grey iron.
- Feeding distance, steel (Bishop and Pellini's rules, US Naval Research
  Laboratory, about 1950; figures from memory): plates and bars, with the end
  zone where the section ends and the shorter reach between two risers.
- Ductile iron: pressure-control risering (Karsay's published approach;
  figures from memory), see ``pressure_control``.
"""

from __future__ import annotations

import math

import numpy as np

from tracker import units
from tracker.design.alloys import CaineConstants
from tracker.errors import BadInput
from tracker.numbers import missing

DEFAULT_MODULUS_FACTOR = 1.2
DEFAULT_CHVORINOV_N = 2.0
NECK_FACTOR = 1.1  # M_neck about 1.1 · M_section for a side riser (Wlodawer; common practice)
FEEDING_DISTANCE_FACTOR = 4.5  # plate: 2 T riser zone + 2.5 T end zone (Bishop-Pellini, from memory)
PLATE_RISER_ZONE_T = 2.0       # plate: a riser feeds 2 T each way by itself (Bishop-Pellini, from memory)
PLATE_END_ZONE_T = 2.5         # plate: end effect where the plate ends (Bishop-Pellini, from memory)
BAR_END_COEFF_IN = 6.0         # square bar: 6 · sqrt(T) inches to a free end, T in inches (Bishop-Pellini, from memory)
PLATE_WIDTH_RATIO = 5.0        # a plate is at least about 5 T wide (Bishop-Pellini, from memory)
MM_PER_INCH = units.MM_PER_IN  # exact (tracker.units holds every factor)
# Pressure control (Karsay's ductile-iron risering; figures from memory): the neck
# freezes when graphite expansion starts, at a modulus of about 0.5-0.8 of the
# casting's significant modulus; rigid moulds let heavy sections (modulus above
# about 2.5 cm) be cast without a riser.
PC_NECK_RATIO = (0.5, 0.8)
PC_RISERLESS_MODULUS_CM = 2.5
MOULDS = ("green_sand", "rigid")
DEFAULT_MOULD = "green_sand"   # the less rigid mould: the safe side where the foundry does not say


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


def neck_ok(neck_modulus, section_modulus, riser_modulus, factor=1.0):
    """factor · M_section <= M_neck < M_riser, the neck freezing between the two.

    ``factor`` is NECK_FACTOR (1.1, the modulus sequence 1 : 1.1 : 1.2) for
    steel and the non-graphitic alloys; 1.0 (strictly above the section) for
    grey iron. Array-valued ``factor`` is allowed.
    """
    n = np.asarray(neck_modulus, dtype=float)
    f = np.asarray(factor, dtype=float)
    lower = np.where(f > 1.0, n >= f * np.asarray(section_modulus) * (1 - 1e-9),
                     n > np.asarray(section_modulus))
    return lower & (n < np.asarray(riser_modulus))


def neck_factor(alloy) -> float:
    """The neck's ratio to the section modulus: 1.1 for non-graphitic alloys, else 1.0."""
    return 1.0 if alloy.graphitic else NECK_FACTOR


# --- pressure control (ductile iron) -------------------------------------------

def check_mould(mould) -> str:
    m = DEFAULT_MOULD if missing(mould) else str(mould).strip().lower().replace(" ", "_").replace("-", "_")
    if m == "":
        m = DEFAULT_MOULD
    if m not in MOULDS:
        raise BadInput("mould", mould, "must be green_sand or rigid (chemically bonded, "
                       "no-bake or other rigid moulds)")
    return m


def pc_neck_window(section_modulus):
    """(lowest, highest) neck modulus for pressure control, cm (0.5-0.8 · M_s)."""
    m = np.asarray(section_modulus, dtype=float)
    return PC_NECK_RATIO[0] * m, PC_NECK_RATIO[1] * m


def pc_neck_ok(neck_modulus, section_modulus):
    """The neck freezes as expansion starts: 0.5 · M_s <= M_neck <= 0.8 · M_s."""
    lo, hi = pc_neck_window(section_modulus)
    n = np.asarray(neck_modulus, dtype=float)
    return (n >= lo * (1 - 1e-9)) & (n <= hi * (1 + 1e-9))


def pc_required_riser_modulus(section_modulus, neck_modulus=np.nan, factor=DEFAULT_MODULUS_FACTOR):
    """Riser modulus pressure control needs, cm: the riser outlasts its neck,
    factor · M_neck, with the neck at the top of its window where none is given."""
    n = np.asarray(neck_modulus, dtype=float)
    top = PC_NECK_RATIO[1] * np.asarray(section_modulus, dtype=float)
    return np.asarray(factor, dtype=float) * np.where(np.isnan(n), top, n)


def riserless_possible(section_modulus, mould):
    """Rigid mould and a heavy section (M_s >= 2.5 cm): may be cast without a riser."""
    rigid = np.asarray(mould) == "rigid"
    return rigid & (np.asarray(section_modulus, dtype=float) >= PC_RISERLESS_MODULUS_CM)


def oversized(riser_modulus, section_modulus, least_riser_modulus, factor=DEFAULT_MODULUS_FACTOR):
    """Pressure control: a riser at or above factor · the larger of the section's
    modulus and the least riser the rules need outlasts the section as a steel
    riser must; it costs yield and, with a wide neck, lets the expansion push
    metal back into the riser."""
    ref = np.maximum(np.asarray(section_modulus, dtype=float), np.asarray(least_riser_modulus, dtype=float))
    return np.asarray(riser_modulus, dtype=float) >= np.asarray(factor) * ref * (1 - 1e-9)


def feed_fraction(alloy, mould=None, pour_temp_c=None, shrinkage=None):
    """(solidification part, liquid part) of the metal a riser must supply, fractions.

    Liquid contraction from the pour temperature (else liquidus + the alloy's
    default superheat) to the liquidus. The solidification part is the
    alloy's shrinkage (``shrinkage`` overrides it); under pressure control it
    is 0 in a rigid mould (graphite expansion feeds it) and the alloy's
    shrinkage (or ``shrinkage``), read as the green-sand mould-wall
    allowance, otherwise.
    """
    beta = alloy.shrinkage if shrinkage is None else float(shrinkage)
    if alloy.rule_set == "pressure_control" and check_mould(mould) == "rigid":
        beta = 0.0
    return beta, liquid_contraction(alloy, pour_temp_c)


def liquid_contraction(alloy, pour_temp_c=None):
    """Volumetric liquid contraction from pour temperature to liquidus, fraction.

    0 where the alloy has no figure; the alloy's default superheat where
    ``pour_temp_c`` is None or NaN. Accepts arrays of temperatures.
    """
    if alloy.liquid_contraction_per_100k is None or alloy.liquidus_c is None:
        return 0.0 if np.ndim(pour_temp_c) == 0 else np.zeros(np.shape(pour_temp_c))
    default = alloy.liquidus_c + (alloy.default_superheat_k or 0.0)
    t = default if pour_temp_c is None else np.where(np.isnan(np.asarray(pour_temp_c, dtype=float)),
                                                      default, pour_temp_c)
    out = alloy.liquid_contraction_per_100k * np.maximum(np.asarray(t, dtype=float) - alloy.liquidus_c, 0.0) / 100.0
    return float(out) if np.ndim(out) == 0 else out


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

def check_efficiency(efficiency, shrinkage, liquid=0.0):
    """Refuse an efficiency that cannot feed ``shrinkage`` + ``liquid`` (fractions)."""
    if not (0 < efficiency <= 1):
        raise BadInput("efficiency", efficiency, "must be a fraction above 0 and at most 1 (0.14 = 14 %)")
    if not (-0.5 < shrinkage < 0.5):
        raise BadInput("shrinkage", shrinkage, "must be a fraction between -0.5 and 0.5 (0.035 = 3.5 %)")
    need = max(shrinkage, 0.0) + liquid
    if efficiency <= need:
        what = (f"the shrinkage {shrinkage:g}" if not liquid else
                f"the metal to feed {need:.4g} (shrinkage {shrinkage:g} + liquid contraction {liquid:.4g})")
        raise BadInput("efficiency", efficiency,
                       f"must be above {what}; a riser that can give less "
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

def plate_feeding_distance_mm(thickness_mm, between_risers=False):
    """Steel plate (width >= 5 T), mm: 4.5 T from the riser to a free end
    (2 T riser zone + 2.5 T end zone); between two risers each feeds its
    2 T riser zone, 4 T apart (Bishop-Pellini, from memory)."""
    t = np.asarray(thickness_mm, dtype=float)
    zone = np.where(np.asarray(between_risers, dtype=bool), PLATE_RISER_ZONE_T,
                    PLATE_RISER_ZONE_T + PLATE_END_ZONE_T)
    return zone * t


def bar_feeding_distance_in(thickness_in):
    """Square steel bar to a free end, in its published form: 6 · sqrt(T) inches,
    T in inches (Bishop-Pellini, from memory)."""
    return BAR_END_COEFF_IN * np.sqrt(np.asarray(thickness_in, dtype=float))


def bar_feeding_distance_mm(thickness_mm, between_risers=False):
    """Square steel bar, mm: 6 · sqrt(T) inches to a free end (T in inches;
    Bishop-Pellini, from memory), never more than a plate of the same T.

    The bar rule was found on bars of about 2 in and up; below about 45 mm it
    would reach further than the plate rule, which no bar does, so the plate
    value caps it. Between two risers: the same share of the reach as in a
    plate, 2 T of 4.5 T (an assumption made here, not a published figure).
    """
    t = np.asarray(thickness_mm, dtype=float)
    # computed in the published form (inches), then converted back exactly
    published = units.value_from("length_mm", bar_feeding_distance_in(units.value_in("length_mm", t, units.US)),
                                 units.US)
    end = np.minimum(published, plate_feeding_distance_mm(t))
    share = PLATE_RISER_ZONE_T / (PLATE_RISER_ZONE_T + PLATE_END_ZONE_T)
    return np.where(np.asarray(between_risers, dtype=bool), share * end, end)


def feeding_distance_mm(thickness_mm, width_mm, risers_on_zone=1):
    """Reach of one riser along a steel section of cross-section T x W, mm.

    The section is a bar at W/T = 1 and a plate from W/T = 5 (the smaller of
    the two sizes is taken as T); in between the reach is interpolated
    linearly on W/T. With one riser on the zone the reach runs to the
    section's end (end zone included); with two or more it is the riser's own
    zone, half the distance between two risers. NaN (not judged) where T or W
    is missing.
    """
    a = np.asarray(thickness_mm, dtype=float)
    b = np.asarray(width_mm, dtype=float)
    t, w = np.fmin(a, b), np.fmax(a, b)
    t = np.where(np.isnan(a) | np.isnan(b), np.nan, t)
    between = np.asarray(risers_on_zone, dtype=float) > 1
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.clip((w / t - 1.0) / (PLATE_WIDTH_RATIO - 1.0), 0.0, 1.0)
    out = (1 - s) * bar_feeding_distance_mm(t, between) + s * plate_feeding_distance_mm(t, between)
    return out if out.ndim else float(out)


def section_shape(thickness_mm, width_mm) -> np.ndarray:
    """'bar', 'plate', 'between bar and plate' or '' (unknown) by W/T."""
    a = np.asarray(thickness_mm, dtype=float)
    b = np.asarray(width_mm, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.maximum(a, b) / np.minimum(a, b)  # NaN where either size is missing
    return np.where(np.isnan(r), "", np.where(r <= 1 + 1e-9, "bar",
                                              np.where(r >= PLATE_WIDTH_RATIO - 1e-9, "plate",
                                                       "between bar and plate")))
