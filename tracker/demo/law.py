"""The demo's reject law: one law for every zone of every lot, from the riser's
margins against the rules (see the package's docstring)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from tracker.demo.foundry import Sleeve
from tracker.design.alloys import Alloy, get_alloy
from tracker.design.assess import assess_frame
from tracker.numbers import missing

BASE_SHRINKAGE_RATE = 0.0035   # per casting and zone, with a sound riser
MAX_EXCESS_RATE = 0.20         # ceiling of the excess for a badly undersized riser
SHORTFALL_SCALE = 0.15         # shortfall at which the excess reaches half its ceiling
TEMP_COEFF = 0.25              # log-rate change per 20 °C above the alloy's usual pour
LOT_CONCENTRATION = 60.0       # beta concentration of lot-to-lot noise (larger = less noise)
BACKGROUND_CONCENTRATION = 150.0

# Background rates per casting (fraction), before each pattern's own multiplier.
BACKGROUND = {
    "steel": {"gas": 0.0015, "sand": 0.0030, "slag": 0.0020, "misrun": 0.0010,
              "cold_shut": 0.0008, "hot_tear": 0.0012, "crack": 0.0005,
              "dimensional": 0.0020, "other": 0.0005},
    "ductile_iron": {"gas": 0.0012, "sand": 0.0035, "slag": 0.0025, "misrun": 0.0010,
                     "cold_shut": 0.0010, "crack": 0.0003, "dimensional": 0.0020,
                     "other": 0.0005},
    "aluminum": {"gas": 0.0030, "sand": 0.0020, "slag": 0.0010, "misrun": 0.0015,
                 "cold_shut": 0.0015, "hot_tear": 0.0008, "dimensional": 0.0020,
                 "other": 0.0005},
}
# Share of each defect that is reworked (weld repair, grinding) rather than scrapped.
REWORK_SHARE = {"shrinkage": 0.12, "gas": 0.15, "sand": 0.50, "slag": 0.30, "misrun": 0.0,
                "cold_shut": 0.20, "hot_tear": 0.30, "crack": 0.0, "dimensional": 0.60,
                "other": 0.30}


def shortfall(margins: dict) -> float:
    """The worst shortfall of a riser against the rules, on a linear-size scale.

    0 when every rule passes. Modulus rule: 1 - ratio / the ratio the rule set
    asks (1.2 for the modulus sequence; 1.2 x the neck's under pressure
    control); Caine: 1 - X / X_curve(Y) (1 where Y lies below b, the curve
    never reached); feed volume: 1 - cbrt(give / need), the need counting the
    liquid contraction; neck: 1 - M_neck / the least the rule set asks where
    the neck freezes too early, and under pressure control M_neck / the most
    it allows - 1 where it freezes too late (the expansion pushes metal back
    into the riser); feeding distance (steel): 1 - distance / length. An
    oversized riser costs yield, not soundness: no shortfall.
    """
    s = [0.0]
    if margins["modulus_required_ratio"] > 0:
        s.append(max(0.0, 1.0 - margins["modulus_ratio"] / margins["modulus_required_ratio"]))
    if margins["caine_x_curve"] is not None:
        xc = margins["caine_x_curve"]
        s.append(1.0 if not math.isfinite(xc) else max(0.0, 1.0 - margins["freezing_ratio"] / xc))
    if margins["riser_needed"]:
        give_over_need = max(margins["feed_margin"] + 1.0, 0.0)
        s.append(max(0.0, 1.0 - give_over_need ** (1.0 / 3.0)))
    if margins["neck_modulus_cm"] is not None:
        s.append(max(0.0, 1.0 - margins["neck_modulus_cm"] / margins["neck_min_modulus_cm"]))
        if margins["rule_set"] == "pressure_control":
            s.append(max(0.0, margins["neck_modulus_cm"] / margins["neck_max_modulus_cm"] - 1.0))
    if margins["feeding_distance_ok"] is False:
        s.append(max(0.0, 1.0 - margins["feeding_distance_mm"] / margins["length_mm"]))
    return float(max(s))


def shrinkage_rate(worst_shortfall: float, pour_temp_delta_c: float = 0.0) -> float:
    """Mean shrinkage reject probability per casting in one zone (fraction).

    ``base + p_max · s² / (s² + s0²)``, smooth and flat at s = 0, rising
    steeply once the riser is undersized, times exp(0.25 · ΔT / 20 °C) for a
    pour ΔT hotter than the alloy's usual.
    """
    s = max(float(worst_shortfall), 0.0)
    excess = MAX_EXCESS_RATE * s * s / (s * s + SHORTFALL_SCALE**2)
    return (BASE_SHRINKAGE_RATE + excess) * math.exp(TEMP_COEFF * pour_temp_delta_c / 20.0)


def riser_margins(alloy, section_volume_cm3: float, section_area_cm2: float, placement: str,
                  diameter_mm: float, height_mm: float, sleeve: Sleeve | None = None,
                  neck_diameter_mm: float | None = None, thickness_mm: float | None = None,
                  length_mm: float | None = None) -> dict:
    """Every rule's verdict on one cylindrical riser feeding one section, as
    ``pourback check`` gives it (:func:`tracker.design.assess.assess_frame`: the
    alloy's rule set, liquid contraction at the alloy's default superheat, a
    green-sand mould).

    Section volume cm³ and cooling area cm²; riser diameter and height mm;
    ``thickness_mm`` and ``length_mm`` as the zones file gives them (None where
    it leaves them out). Returns the check's columns (moduli in cm, ratios,
    Caine's X, Y, X_curve and margin, the feed margin give / need - 1, the
    neck's window, ``passes``), ``caine_x_curve`` None where the alloy has no
    Caine row, ``neck_modulus_cm`` None without a neck, ``length_mm``, and
    ``shortfall``.
    """
    alloy = alloy if isinstance(alloy, Alloy) else get_alloy(alloy)
    cn = alloy.caine
    row = {"pattern": "", "revision": 1, "riser": "", "zone": "", "alloy": alloy.key, "placement": placement,
           "top": "open", "diameter_mm": diameter_mm, "height_mm": height_mm,
           "volume_cm3": section_volume_cm3, "cooling_area_cm2": section_area_cm2,
           "shrinkage": alloy.shrinkage, "bare_efficiency": alloy.bare_efficiency,
           "caine_a": cn.a if cn else np.nan, "caine_b": cn.b if cn else np.nan,
           "caine_c": cn.c if cn else np.nan, "density_kg_dm3": alloy.density_kg_dm3,
           "sleeve": sleeve.sleeve if sleeve else None, "sleeve_kind": sleeve.kind if sleeve else None,
           "sleeve_factor": sleeve.modulus_factor if sleeve else np.nan,
           "sleeve_efficiency": sleeve.feeding_efficiency if sleeve else np.nan,
           "neck_diameter_mm": np.nan if neck_diameter_mm is None else neck_diameter_mm,
           "thickness_mm": np.nan if thickness_mm is None else thickness_mm,
           "length_mm": np.nan if length_mm is None else length_mm}
    r = assess_frame(pd.DataFrame([row])).iloc[0].to_dict()
    out = {k: (v.item() if isinstance(v, np.generic) else v) for k, v in r.items()}
    out["caine_x_curve"] = out.pop("caine_curve_x") if out["caine_applied"] else None
    out["neck_modulus_cm"] = None if neck_diameter_mm is None else out["neck_modulus_cm"]
    out["length_mm"] = length_mm
    fd_ok = out["feeding_distance_ok"]
    out["feeding_distance_ok"] = None if missing(fd_ok) else bool(fd_ok)
    out["passes"] = bool(out["passes"])
    out["shortfall"] = shortfall(out)
    return out
