"""The invented demo foundry: a seeded, reproducible pour and inspection history.

``generate(out_dir)`` writes six CSV files (patterns, zones, sleeves, risers,
lots, inspections) in the import formats, for an invented jobbing foundry,
"the demo foundry" (a made-up name; every pattern, inspector and heat in it
is invented). It pours 30 patterns -- 13 steel, 9 ductile iron, 8 aluminium --
over 26 ISO weeks ending at ``end_week``.

Geometry. Every zone is a plate or block of invented dimensions (cm); its
volume is L·W·T and its cooling area the block's surface less the faces joined
to other metal. Every zone is fed by exactly one cylindrical riser. Most risers
are designed properly, by the alloy's own rule set (pressure control for ductile
iron, the liquid contraction at the alloy's default superheat): sized with
:func:`tracker.design.sizing.size_riser` and rounded up to 10 mm steps (finer where
10 mm would make a ductile-iron riser oversized), or fitted with the cheapest
sleeve of the shop's catalogue that meets every rule. ``pourback check`` passes
every one of them.

Reject law. Reject counts are not written per pattern. One law is applied to
every zone of every lot (:func:`riser_margins`, :func:`shrinkage_rate`):

- the riser's margins are the ones ``pourback check`` gives
  (:func:`tracker.design.assess.assess_frame`: the modulus ratio against what the
  rule set asks, Caine's margin X - X_curve(Y) where the alloy has Caine
  constants, the feed-volume margin with the liquid contraction, the neck,
  and for steel the feeding distance where the zone gives it);
- each margin is turned into a shortfall on a linear-size scale (0 when the
  rule passes; e.g. 1 - ratio/1.2 for the modulus rule, 1 - cbrt(give/need)
  for feed volume) and the worst one is taken (an oversized riser costs
  yield, not soundness);
- shrinkage reject probability per casting in the zone is
  ``base + p_max · s² / (s² + s0²)`` (base 0.35 %, p_max 20 %, s0 0.15), times a
  small pour-temperature factor (hotter metal shrinks more);
- lot-to-lot noise: each lot draws its rate from a beta distribution around
  that mean (beta-binomial counts);
- every pattern also has small background rates of other defects (sand, slag,
  misrun, cold shut, dimensional, ... each well under 1 %).

The story that emerges from the geometry (for the default window, 2026-W22 to
2026-W47; see ``sample_data/README.md`` and :func:`story`):

- three undersized risers, shrinkage rejects concentrated in their zone:
  P-1017 (steel valve body 200) riser R3 on zone flange-B, a bare side riser of
  100 mm where its twin R2 on the identical zone flange-A has 130 mm (fails the
  modulus rule, Caine's curve, feed volume and the neck); P-1036 (steel bearing
  housing 90) riser R2 on zone boss, fitted with too small an exothermic sleeve, XS-90
  (fails Caine's curve and the modulus rule); P-3014 (aluminium gearbox
  cover) riser R2 on zone boss, a bare 70 mm top riser, under three quarters
  of the 96 mm the rules ask (fails all three rules).
- P-1009 (steel impeller 300): every riser passes with margin, yet about 8 % of
  castings are rejected for gas porosity (x-ray category A) -- a core-venting
  problem, not a riser problem.
- P-1031 (steel pump casing 150): riser R1 on zone volute was a bare 140 mm
  top riser in revision 1 (fails all three rules); revision 2, effective on the
  Monday of the 14th week (2026-08-24, 2026-W35, by default), fits an XS-160
  exothermic sleeve (160 x 200 mm) that passes every rule, and its shrinkage
  rejects fall by the same law.
- the other patterns run at low background rates.

Units inside: cm, cm², cm³; diameters and heights in mm at the CSV edges.
"""

from __future__ import annotations

import csv
import datetime as dt
import math
import pathlib
import sys
from dataclasses import dataclass

import numpy as np
import pandas as pd

from tracker.design import geometry, rules
from tracker.design.alloys import Alloy, get_alloy
from tracker.design.sizing import size_riser, suggested_neck_mm

SCENARIO_NAME = "the demo foundry (invented)"

COLUMNS: dict[str, tuple[str, ...]] = {
    "patterns": ("pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                 "metal_cost_per_kg", "processing_cost_per_casting"),
    "zones": ("pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm",
              "required_xray_level"),
    "sleeves": ("sleeve", "kind", "inner_diameter_mm", "height_mm", "modulus_factor",
                "feeding_efficiency", "unit_cost"),
    "risers": ("pattern", "revision", "effective_from", "riser", "zone", "placement", "top",
               "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm"),
    "lots": ("lot", "pattern", "poured_on", "heat", "molds", "pour_temp_c"),
    "inspections": ("lot", "inspected_on", "method", "quantity", "result", "defect", "zone",
                    "xray_category", "severity", "serial", "inspector", "notes"),
}
FILES = tuple(COLUMNS)

# --- the reject law -----------------------------------------------------------------

BASE_SHRINKAGE_RATE = 0.0035   # per casting and zone, with a sound riser
MAX_EXCESS_RATE = 0.20         # ceiling of the excess for a badly undersized riser
SHORTFALL_SCALE = 0.15         # shortfall at which the excess reaches half its ceiling
TEMP_COEFF = 0.25              # log-rate change per 20 °C above the alloy's usual pour
LOT_CONCENTRATION = 60.0       # beta concentration of lot-to-lot noise (larger = less noise)
BACKGROUND_CONCENTRATION = 150.0

POUR_TEMP_C = {"steel": (1600.0, 1580.0, 1620.0),
               "ductile_iron": (1400.0, 1380.0, 1420.0),
               "aluminum": (720.0, 700.0, 740.0)}
METAL_COST_PER_KG = {"steel": 2.60, "ductile_iron": 1.45, "aluminum": 3.40}

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

INSPECTORS = ("QE-ML", "QE-TR", "QE-AK", "QE-JS")
RADIOGRAPHERS = ("RT-PW", "RT-DN")


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


# --- the sleeve catalogue -----------------------------------------------------------

@dataclass(frozen=True)
class Sleeve:
    """One sleeve the shop stocks. Diameters and heights in mm; f and eps fractions."""

    sleeve: str
    kind: str
    inner_diameter_mm: float
    height_mm: float
    modulus_factor: float
    feeding_efficiency: float
    unit_cost: float


# Invented catalogue; f and eps inside the typical ranges of DOMAIN.md (from memory).
SLEEVES: tuple[Sleeve, ...] = (
    Sleeve("IS-60", "insulating", 60, 80, 1.22, 0.28, 2.40),
    Sleeve("IS-80", "insulating", 80, 100, 1.25, 0.30, 3.60),
    Sleeve("IS-100", "insulating", 100, 130, 1.25, 0.32, 5.20),
    Sleeve("IS-130", "insulating", 130, 160, 1.28, 0.33, 7.80),
    Sleeve("XS-90", "exothermic", 90, 110, 1.35, 0.36, 6.50),
    Sleeve("XS-120", "exothermic", 120, 150, 1.40, 0.38, 9.80),
    Sleeve("XS-160", "exothermic", 160, 200, 1.42, 0.40, 15.50),
    Sleeve("XS-200", "exothermic", 200, 240, 1.45, 0.42, 22.00),
)
SLEEVE_BY_CODE = {s.sleeve: s for s in SLEEVES}


# --- riser margins (the library's rules applied to one riser) ----------------------

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
    from tracker.design.assess import assess_frame

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
    out["feeding_distance_ok"] = None if fd_ok is None or fd_ok != fd_ok else bool(fd_ok)
    out["passes"] = bool(out["passes"])
    out["shortfall"] = shortfall(out)
    return out


# --- the scenario ------------------------------------------------------------------

_FACES = ("lw", "lt", "wt")


@dataclass(frozen=True)
class ZoneSpec:
    """A plate or block section fed by one riser. Dimensions in cm.

    ``joined`` names faces joined to other metal (each removes one face of that
    pair from the cooling area). ``design`` is ("scale", k): a bare riser k times
    the size :func:`size_riser` requires (k >= 1 rounded up to 10 mm, k < 1
    rounded to the nearest 10 mm), ("sleeve", None): the cheapest catalogue
    sleeve meeting every rule, or ("sleeve", code): that sleeve.
    """

    zone: str
    length_cm: float
    width_cm: float
    thickness_cm: float
    joined: tuple[str, ...] = ()
    placement: str = "top"
    top: str = "open"
    h_over_d: float = 1.0
    design: tuple = ("scale", 1.0)
    xray_level: int | None = None

    def __post_init__(self):
        bad = [j for j in self.joined if j not in _FACES]
        if bad:
            raise ValueError(f"joined: got {bad!r}; faces are named {', '.join(_FACES)}")

    @property
    def volume_cm3(self) -> float:
        return self.length_cm * self.width_cm * self.thickness_cm

    @property
    def cooling_area_cm2(self) -> float:
        face = {"lw": self.length_cm * self.width_cm, "lt": self.length_cm * self.thickness_cm,
                "wt": self.width_cm * self.thickness_cm}
        return 2.0 * sum(face.values()) - sum(face[j] for j in self.joined)

    @property
    def thickness_mm(self) -> float:
        return self.thickness_cm * 10.0

    @property
    def length_mm(self) -> float:
        """Feeding length: the riser sits at the middle of the section, so the
        farthest point lies half the longest side away."""
        return max(self.length_cm, self.width_cm) / 2.0 * 10.0


@dataclass(frozen=True)
class PatternSpec:
    code: str
    description: str
    alloy: str
    castings_per_mold: int
    cadence: str                 # "weekly", "often" or "seldom"
    molds: tuple[int, int]
    zones: tuple[ZoneSpec, ...]
    gas_rate: float | None = None          # a process (not riser) gas problem
    resize: dict | None = None             # zone -> design of revision 2
    background_factor: float = 1.0


Z = ZoneSpec
_SIDE = {"placement": "side", "top": "blind"}

PATTERNS: tuple[PatternSpec, ...] = (
    # --- steel -------------------------------------------------------------------
    PatternSpec("P-1004", "gate valve body 100", "steel", 2, "weekly", (4, 12), (
        Z("body", 26, 18, 7, ("wt",), "top", "blind", 1.0, ("sleeve", None), 2),
        Z("end-A", 16, 16, 5, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3),
        Z("end-B", 16, 16, 5, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3))),
    PatternSpec("P-1009", "impeller 300", "steel", 1, "weekly", (6, 14), (
        Z("hub", 18, 18, 10, (), "top", "open", 1.5, ("scale", 1.1), 2),
        Z("shroud", 30, 30, 3.5, ("lt",), **_SIDE, design=("scale", 1.1), xray_level=2)),
        gas_rate=0.085),
    PatternSpec("P-1012", "flange adaptor 250", "steel", 2, "often", (4, 10), (
        Z("ring", 28, 28, 4.5, (), "top", "open", 1.0, ("sleeve", None), 3),)),
    PatternSpec("P-1017", "valve body 200", "steel", 1, "weekly", (5, 12), (
        Z("body", 34, 24, 9, ("wt",), "top", "blind", 1.0, ("sleeve", None), 2),
        Z("flange-A", 30, 10, 6, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=2),
        Z("flange-B", 30, 10, 6, ("wt",), **_SIDE, design=("scale", 0.8), xray_level=2))),
    PatternSpec("P-1021", "lever arm 40", "steel", 4, "seldom", (3, 8), (
        Z("boss", 8, 8, 5, (), "top", "open", 1.0, ("scale", 1.0), 3),)),
    PatternSpec("P-1023", "crusher jaw 600", "steel", 1, "often", (2, 5), (
        Z("jaw", 48, 40, 15, ("wt",), "top", "open", 1.0, ("scale", 1.0), 3),
        Z("heel", 30, 20, 10, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3))),
    PatternSpec("P-1028", "valve bonnet 150", "steel", 2, "weekly", (4, 12), (
        Z("crown", 20, 20, 6, ("wt",), "top", "blind", 1.0, ("sleeve", None), 2),
        Z("flange", 28, 8, 5, ("wt",), **_SIDE, design=("sleeve", None), xray_level=3))),
    PatternSpec("P-1031", "pump casing 150", "steel", 1, "weekly", (4, 10), (
        Z("volute", 36, 26, 8, ("wt",), "top", "blind", 1.0, ("scale", 0.8), 2),
        Z("suction-flange", 24, 8, 5.5, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3),
        Z("discharge-flange", 22, 8, 5, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3),
        Z("foot", 20, 12, 4, ("lt",), **_SIDE, design=("scale", 1.0), xray_level=3)),
        resize={"volute": ("sleeve", None)}),
    PatternSpec("P-1036", "bearing housing 90", "steel", 2, "weekly", (4, 12), (
        Z("base", 30, 20, 5, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3),
        Z("boss", 16, 16, 8, ("wt",), "top", "blind", 1.0, ("sleeve", "XS-90"), 2))),
    PatternSpec("P-1042", "pipe tee 100", "steel", 2, "often", (4, 10), (
        Z("run", 30, 14, 5, ("lt",), "top", "open", 1.0, ("sleeve", None), 3),
        Z("branch", 20, 12, 5, ("wt",), **_SIDE, design=("sleeve", None), xray_level=3))),
    PatternSpec("P-1047", "pulley hub 220", "steel", 1, "seldom", (3, 8), (
        Z("hub", 22, 22, 9, ("wt",), "top", "open", 1.0, ("scale", 1.0), 3),)),
    PatternSpec("P-1053", "track shoe 500", "steel", 2, "weekly", (6, 16), (
        Z("grouser", 40, 10, 6, ("lt",), "top", "open", 1.0, ("sleeve", None), 3),)),
    PatternSpec("P-1058", "coupling half 180", "steel", 2, "often", (4, 10), (
        Z("hub", 18, 18, 8, ("wt",), "top", "blind", 1.0, ("sleeve", None), 2),
        Z("flange", 30, 30, 4, ("lt",), **_SIDE, design=("scale", 1.0), xray_level=3))),
    # --- ductile iron ------------------------------------------------------------
    PatternSpec("P-2003", "manhole frame 600", "ductile_iron", 1, "weekly", (8, 20), (
        Z("frame-N", 60, 10, 4, ("wt",), **_SIDE, design=("scale", 1.0)),
        Z("frame-S", 60, 10, 4, ("wt",), **_SIDE, design=("scale", 1.0)))),
    PatternSpec("P-2008", "hydrant bonnet", "ductile_iron", 2, "often", (4, 12), (
        Z("dome", 18, 18, 3, ("lt",), "top", "open", 1.0, ("scale", 1.0)),)),
    PatternSpec("P-2011", "gear blank 250", "ductile_iron", 2, "weekly", (4, 14), (
        Z("rim", 25, 25, 6, ("lt",), **_SIDE, design=("scale", 1.0)),
        Z("hub", 12, 12, 8, (), "top", "open", 1.0, ("sleeve", None)))),
    PatternSpec("P-2015", "brake drum 400", "ductile_iron", 1, "weekly", (6, 16), (
        Z("drum", 40, 30, 2.5, ("lt",), **_SIDE, design=("scale", 1.0)),
        Z("flange", 40, 12, 3, ("lt",), **_SIDE, design=("scale", 1.0)),
        Z("hub", 16, 16, 5, ("wt",), "top", "open", 1.0, ("scale", 1.0)))),
    PatternSpec("P-2019", "mounting bracket 60", "ductile_iron", 4, "often", (4, 12), (
        Z("pad", 12, 10, 3, ("wt",), "top", "open", 1.0, ("scale", 1.0)),)),
    PatternSpec("P-2024", "pulley 300", "ductile_iron", 1, "seldom", (4, 10), (
        Z("rim", 30, 30, 3, ("lt",), **_SIDE, design=("scale", 1.0)),
        Z("hub", 14, 14, 7, (), "top", "open", 1.0, ("sleeve", None)))),
    PatternSpec("P-2030", "differential carrier", "ductile_iron", 1, "weekly", (4, 12), (
        Z("bowl", 30, 26, 5, ("wt",), "top", "blind", 1.0, ("sleeve", None)),
        Z("neck", 20, 12, 4, ("wt",), **_SIDE, design=("scale", 1.0)),
        Z("ear-L", 10, 8, 4, ("wt",), **_SIDE, design=("scale", 1.0)),
        Z("ear-R", 10, 8, 4, ("wt",), **_SIDE, design=("scale", 1.0)))),
    PatternSpec("P-2034", "counterweight block", "ductile_iron", 1, "seldom", (2, 6), (
        Z("block", 40, 30, 12, ("wt",), "top", "open", 1.0, ("scale", 1.0)),)),
    PatternSpec("P-2039", "valve wedge 150", "ductile_iron", 2, "often", (4, 12), (
        Z("wedge", 20, 18, 5, (), "top", "open", 1.0, ("sleeve", None)),
        Z("stem-boss", 8, 8, 4, ("wt",), **_SIDE, design=("scale", 1.0)))),
    # --- aluminium ---------------------------------------------------------------
    PatternSpec("P-3002", "motor end shield", "aluminum", 4, "weekly", (6, 16), (
        Z("shield", 22, 22, 1.2, ("lt",), **_SIDE, design=("scale", 1.0)),)),
    PatternSpec("P-3006", "pump cover", "aluminum", 4, "often", (6, 16), (
        Z("cover", 18, 16, 1.5, (), "top", "open", 1.0, ("sleeve", None)),
        Z("boss", 8, 8, 3, ("wt",), **_SIDE, design=("scale", 1.0)))),
    PatternSpec("P-3010", "mounting bracket 25", "aluminum", 8, "weekly", (6, 18), (
        Z("web", 10, 8, 1.5, ("wt",), "top", "open", 1.0, ("scale", 1.0)),)),
    PatternSpec("P-3014", "gearbox cover", "aluminum", 2, "weekly", (6, 16), (
        Z("rim", 36, 6, 2, ("wt",), **_SIDE, design=("scale", 1.0)),
        Z("boss", 12, 12, 4, ("wt",), "top", "open", 1.0, ("scale", 0.8)),
        Z("flange", 30, 6, 1.8, ("wt",), **_SIDE, design=("scale", 1.0)))),
    PatternSpec("P-3018", "intake manifold", "aluminum", 2, "often", (6, 14), (
        Z("plenum", 30, 14, 1.2, (), "top", "open", 1.0, ("scale", 1.0)),
        Z("runner-flange", 28, 6, 1.5, ("wt",), **_SIDE, design=("scale", 1.0)))),
    PatternSpec("P-3025", "heat sink housing", "aluminum", 4, "often", (6, 16), (
        Z("base", 20, 14, 1.5, ("wt",), **_SIDE, design=("scale", 1.0)),)),
    PatternSpec("P-3029", "valve handle", "aluminum", 8, "seldom", (4, 12), (
        Z("grip", 14, 4, 2, ("wt",), "top", "open", 1.0, ("scale", 1.0)),)),
    PatternSpec("P-3033", "compressor housing", "aluminum", 2, "weekly", (6, 14), (
        Z("barrel", 26, 20, 2.5, ("wt",), "top", "blind", 1.0, ("sleeve", None), 3),
        Z("mount-foot", 16, 8, 3, ("wt",), **_SIDE, design=("scale", 1.0), xray_level=3))),
)

_CADENCE = {"weekly": (0.95, (1, 2, 3, 4), (0.30, 0.35, 0.25, 0.10)),
            "often": (0.70, (1, 2, 3), (0.50, 0.35, 0.15)),
            "seldom": (0.40, (1, 2), (0.75, 0.25))}


@dataclass(frozen=True)
class RiserRow:
    pattern: str
    revision: int
    effective_from: dt.date
    riser: str
    zone: str
    placement: str
    top: str
    diameter_mm: float
    height_mm: float
    sleeve: str
    neck_diameter_mm: float | None


def _ceil_to(x: float, step: float) -> float:
    return math.ceil(x / step - 1e-9) * step


def _neck_mm(section_modulus_cm: float, riser_modulus_cm: float) -> float:
    """A neck with M_neck about 1.1 · M_section (Wlodawer; common practice),
    rounded up to 5 mm while it stays below the riser's modulus."""
    target = rules.NECK_FACTOR * section_modulus_cm * 4.0 * 10.0
    d = _ceil_to(target, 5.0)
    if d / 40.0 >= riser_modulus_cm:
        d = math.ceil(target)
    return float(d)


def _design(alloy: Alloy, z: ZoneSpec, design: tuple) -> tuple[float, float, str, float | None]:
    """(diameter mm, height mm, sleeve code or "", neck mm or None) for one zone,
    designed by the alloy's own rule set (pressure control for ductile iron)."""
    kind, arg = design
    vc, ac = z.volume_cm3, z.cooling_area_cm2
    mc = vc / ac
    pc = alloy.rule_set == "pressure_control"

    def neck(d, h, sleeve):
        if z.placement != "side":
            return None
        if pc:  # the middle of the 0.5-0.8 x M_s window, to the mm
            return float(round(float(suggested_neck_mm(alloy, mc))))
        f = 1.0 if sleeve is None else sleeve.modulus_factor
        mr = f * float(geometry.cylinder_modulus(d / 10, h / 10, "side"))
        return _neck_mm(mc, mr)

    def check(d, h, sleeve):
        n = neck(d, h, sleeve)
        return _margins(alloy, z, d, h, sleeve, n)["passes"], n

    if kind == "sleeve":
        choices = [SLEEVE_BY_CODE[arg]] if arg else sorted(SLEEVES, key=lambda s: s.unit_cost)
        for s in choices:
            ok, n = check(s.inner_diameter_mm, s.height_mm, s)
            if ok or arg:
                return s.inner_diameter_mm, s.height_mm, s.sleeve, n
        kind, arg = "scale", 1.0  # no catalogue sleeve fits: a bare riser
    r = size_riser(vc, ac, alloy, z.placement, z.h_over_d)
    if arg >= 1.0:
        # up to the shop's 10 mm step; under pressure control a finer step where 10 mm
        # would make the riser oversized (a steel riser's size)
        for step in (10.0, 5.0, 1.0):
            d = _ceil_to(r.diameter_mm * arg, step)
            h = _ceil_to(d * z.h_over_d, step)
            if not pc or check(d, h, None)[0]:
                break
    else:
        d = round(r.diameter_mm * arg / 10.0) * 10.0
        h = round(d * z.h_over_d / 10.0) * 10.0
    return d, h, "", neck(d, h, None)


def _margins(alloy: Alloy, z: ZoneSpec, d: float, h: float, sleeve: Sleeve | None, neck: float | None) -> dict:
    """:func:`riser_margins` of a riser on ``z``, the zone as the zones file gives it
    (thickness for cast irons and steel, feeding length for steel only)."""
    return riser_margins(alloy, z.volume_cm3, z.cooling_area_cm2, z.placement, d, h, sleeve, neck,
                         z.thickness_mm if alloy.key != "aluminum" else None,
                         z.length_mm if alloy.key == "steel" else None)


def _weeks(weeks: int, end_week: str) -> list[dt.date]:
    """Mondays of the ``weeks`` ISO weeks ending at ``end_week`` ("YYYY-Www")."""
    try:
        year, week = str(end_week).upper().split("-W")
        end = dt.date.fromisocalendar(int(year), int(week), 1)
    except ValueError:
        raise ValueError(f"end_week: got {end_week!r}; must be an ISO week like 2026-W47") from None
    if int(weeks) < 2:
        raise ValueError(f"weeks: got {weeks!r}; must be a whole number of 2 or more")
    return [end - dt.timedelta(weeks=weeks - 1 - i) for i in range(int(weeks))]


def _iso_week(d: dt.date) -> str:
    y, w, _ = d.isocalendar()
    return f"{y}-W{w:02d}"


@dataclass
class _Scenario:
    mondays: list[dt.date]
    resize_date: dt.date
    risers: list[RiserRow]
    margins: dict           # (pattern, revision, zone) -> margins dict


def _scenario(weeks: int, end_week: str) -> _Scenario:
    """The deterministic part: patterns, zones and riser revisions."""
    mondays = _weeks(weeks, end_week)
    resize_date = mondays[weeks // 2]
    risers: list[RiserRow] = []
    margins: dict = {}
    for i, p in enumerate(PATTERNS):
        alloy = get_alloy(p.alloy)
        rev1 = mondays[0] - dt.timedelta(days=120 + (53 * i) % 420)
        revisions = [(1, rev1, {})]
        if p.resize:
            revisions.append((2, resize_date, p.resize))
        for rev, eff, changes in revisions:
            for k, z in enumerate(p.zones, start=1):
                d, h, sleeve, neck = _design(alloy, z, changes.get(z.zone, z.design))
                risers.append(RiserRow(p.code, rev, eff, f"R{k}", z.zone, z.placement, z.top,
                                       d, h, sleeve, neck))
                margins[(p.code, rev, z.zone)] = _margins(alloy, z, d, h, SLEEVE_BY_CODE.get(sleeve), neck)
    return _Scenario(mondays, resize_date, risers, margins)


def story(weeks: int = 26, end_week: str = "2026-W47") -> dict:
    """What the demo's review and suggestions should find, from its own configuration.

    Keys: ``undersized`` [(pattern, riser, zone)] failing a rule in their only
    revision; ``gas`` the pattern with a process gas problem; ``resized``
    (pattern, riser, zone, revision, effective_from ISO date); ``sound_examples``
    patterns whose risers pass every rule with low expected rejects; ``window``
    (first ISO week, last ISO week).
    """
    sc = _scenario(weeks, end_week)
    resized_codes = {p.code for p in PATTERNS if p.resize}
    undersized, resized = [], None
    for r in sc.risers:
        m = sc.margins[(r.pattern, r.revision, r.zone)]
        if r.pattern in resized_codes:
            if r.revision == 1 and not m["passes"]:
                resized = (r.pattern, r.riser, r.zone, 2, sc.resize_date.isoformat())
        elif not m["passes"]:
            undersized.append((r.pattern, r.riser, r.zone))
    flagged = {u[0] for u in undersized} | resized_codes
    gas = next(p.code for p in PATTERNS if p.gas_rate)
    sound = [p.code for p in PATTERNS
             if p.code not in flagged and p.code != gas and p.cadence == "weekly"
             and all(sc.margins[(p.code, 1, z.zone)]["passes"] for z in p.zones)]
    return {"undersized": undersized, "gas": gas, "resized": resized,
            "sound_examples": sound,
            "window": (_iso_week(sc.mondays[0]), _iso_week(sc.mondays[-1]))}


# --- writing the history -------------------------------------------------------------

def _fmt(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return f"{v:.10g}" if v != int(v) else str(int(v))
    return str(v)


def _write(path: pathlib.Path, name: str, rows: list[dict]) -> pathlib.Path:
    cols = COLUMNS[name]
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(cols)
        for r in rows:
            w.writerow([_fmt(r.get(c)) for c in cols])
    return path


def _pattern_rows() -> list[dict]:
    rows = []
    for p in PATTERNS:
        alloy = get_alloy(p.alloy)
        # Fed sections plus about 8 % of unfed detail (ribs, bosses, fillets).
        kg = sum(z.volume_cm3 for z in p.zones) * 1.08 * alloy.density_kg_dm3 / 1000.0
        fixed, per_kg = {"steel": (25.0, 1.8), "ductile_iron": (12.0, 0.9),
                         "aluminum": (8.0, 3.0)}[p.alloy]
        rows.append({"pattern": p.code, "description": p.description, "alloy": p.alloy,
                     "casting_weight_kg": round(kg, 1), "castings_per_mold": p.castings_per_mold,
                     "metal_cost_per_kg": METAL_COST_PER_KG[p.alloy],
                     "processing_cost_per_casting": round(fixed + per_kg * kg, 2)})
    return rows


def _zone_rows() -> list[dict]:
    rows = []
    for p in PATTERNS:
        for z in p.zones:
            rows.append({"pattern": p.code, "zone": z.zone,
                         "volume_cm3": round(z.volume_cm3, 1),
                         "cooling_area_cm2": round(z.cooling_area_cm2, 1),
                         "thickness_mm": z.thickness_mm if p.alloy != "aluminum" else None,
                         "length_mm": z.length_mm if p.alloy == "steel" else None,
                         "required_xray_level": z.xray_level})
    return rows


def _sleeve_rows() -> list[dict]:
    return [{"sleeve": s.sleeve, "kind": s.kind, "inner_diameter_mm": float(s.inner_diameter_mm),
             "height_mm": float(s.height_mm), "modulus_factor": s.modulus_factor,
             "feeding_efficiency": s.feeding_efficiency, "unit_cost": s.unit_cost}
            for s in SLEEVES]


def _riser_rows(sc: _Scenario) -> list[dict]:
    return [{"pattern": r.pattern, "revision": r.revision,
             "effective_from": r.effective_from.isoformat(), "riser": r.riser, "zone": r.zone,
             "placement": r.placement, "top": r.top, "diameter_mm": float(r.diameter_mm),
             "height_mm": float(r.height_mm), "sleeve": r.sleeve,
             "neck_diameter_mm": r.neck_diameter_mm} for r in sc.risers]


def _lots(rng: np.random.Generator, sc: _Scenario) -> list[dict]:
    planned = []
    temp_offset = {p.code: float(rng.uniform(-6, 6)) for p in PATTERNS}
    for monday in sc.mondays:
        for p in PATTERNS:
            prob, counts, weights = _CADENCE[p.cadence]
            if rng.random() > prob:
                continue
            n = int(rng.choice(counts, p=weights))
            days = np.sort(rng.choice(5, size=n, replace=True))
            for day in days:
                nominal, lo, hi = POUR_TEMP_C[p.alloy]
                t = float(np.clip(rng.normal(nominal + temp_offset[p.code], 7.0), lo, hi))
                planned.append({"pattern": p.code, "alloy": p.alloy,
                                "poured_on": monday + dt.timedelta(days=int(day)),
                                "molds": int(rng.integers(p.molds[0], p.molds[1] + 1)),
                                "pour_temp_c": round(t)})
    order = {p.code: i for i, p in enumerate(PATTERNS)}
    planned.sort(key=lambda r: (r["poured_on"], order[r["pattern"]]))
    # Lot codes run within each ISO week; heats run within each year, one heat
    # pouring one to three lots of the same alloy on the same day.
    seq: dict[str, int] = {}
    heat_no: dict[int, int] = {}
    open_heat: dict[tuple, list] = {}
    for r in planned:
        d = r["poured_on"]
        y, w, _ = d.isocalendar()
        key = f"{y % 100:02d}{w:02d}"
        seq[key] = seq.get(key, 0) + 1
        r["lot"] = f"L{key}-{seq[key]:03d}"
        hk = (d, r["alloy"])
        cur = open_heat.get(hk)
        if cur is None or cur[1] <= 0:
            heat_no[d.year] = heat_no.get(d.year, 400 if d.year == sc.mondays[0].year else 0) + 1
            cur = [f"H{d.year % 100:02d}-{heat_no[d.year]:04d}", int(rng.integers(1, 4))]
            open_heat[hk] = cur
        r["heat"] = cur[0]
        cur[1] -= 1
    return planned


def _revision_on(sc_revs: dict, pattern: str, day: dt.date) -> int:
    revs = [rev for rev, eff in sc_revs[pattern] if eff <= day]
    return max(revs)


def _method(rng, alloy: str, defect: str) -> str:
    if defect in ("misrun", "cold_shut", "other"):
        return "visual"
    if defect == "dimensional":
        return "dimensional"
    if alloy == "steel":
        if defect in ("shrinkage", "gas"):
            return "xray" if rng.random() < 0.9 else "visual"
        if defect in ("sand", "slag"):
            return "xray" if rng.random() < 0.5 else "visual"
        if defect == "hot_tear":
            return "xray" if rng.random() < 0.5 else "mt"
        return "mt"
    if alloy == "ductile_iron":
        if defect == "shrinkage":
            return str(rng.choice(["ut", "xray", "visual"], p=[0.6, 0.25, 0.15]))
        if defect == "crack":
            return "mt"
        return "visual"
    if defect in ("shrinkage", "gas"):
        return str(rng.choice(["xray", "pt"], p=[0.7, 0.3]))
    if defect in ("hot_tear", "crack"):
        return "pt"
    return "visual"


_XRAY_CAT = {"gas": "A", "sand": "B", "slag": "B", "crack": "D", "hot_tear": "E"}


def _xray(rng, defect: str, level: int | None) -> tuple[str, int | None]:
    if defect == "shrinkage":
        cat = str(rng.choice(["CA", "CB", "CC", "CD"], p=[0.3, 0.3, 0.25, 0.15]))
    else:
        cat = _XRAY_CAT.get(defect, "B")
    if cat in ("D", "E"):
        return cat, None  # cracks and hot tears are not graded
    lowest = min((level or 2) + 1, 5)  # a reject is graded above the required level
    return cat, int(lowest + rng.binomial(5 - lowest, 0.35))


_NOTES = {
    ("shrinkage", "rework"): "weld repaired, re-shot",
    ("gas", "reject"): "porosity near core print",
    ("sand", "rework"): "ground out, re-inspected",
    ("dimensional", "rework"): "straightened in press",
    ("hot_tear", "rework"): "excavated and welded",
}


def _inspections(rng: np.random.Generator, sc: _Scenario, lots: list[dict]) -> list[dict]:
    specs = {p.code: p for p in PATTERNS}
    revs: dict[str, list] = {}
    for r in sc.risers:
        if (r.revision, r.effective_from) not in revs.setdefault(r.pattern, []):
            revs[r.pattern].append((r.revision, r.effective_from))
    last_day = sc.mondays[-1] + dt.timedelta(days=6)
    factor = {p.code: p.background_factor * float(rng.uniform(0.6, 1.4)) for p in PATTERNS}
    rows = []
    for lot in lots:
        p = specs[lot["pattern"]]
        n = lot["molds"] * p.castings_per_mold
        rev = _revision_on(revs, p.code, lot["poured_on"])
        delta_t = lot["pour_temp_c"] - POUR_TEMP_C[p.alloy][0]
        vols = np.array([z.volume_cm3 for z in p.zones])
        cats, probs = [], []
        for z in p.zones:
            mean = shrinkage_rate(sc.margins[(p.code, rev, z.zone)]["shortfall"], delta_t)
            cats.append(("shrinkage", z))
            probs.append(rng.beta(mean * LOT_CONCENTRATION, (1 - mean) * LOT_CONCENTRATION))
        for defect, base in BACKGROUND[p.alloy].items():
            mean, conc = base * factor[p.code], BACKGROUND_CONCENTRATION
            if defect == "gas" and p.gas_rate:
                mean, conc = p.gas_rate, LOT_CONCENTRATION
            z = p.zones[int(rng.choice(len(p.zones), p=vols / vols.sum()))]
            cats.append((defect, z))
            probs.append(rng.beta(mean * conc, (1 - mean) * conc))
        probs = np.array(probs)
        if probs.sum() > 0.9:
            probs *= 0.9 / probs.sum()
        counts = rng.multinomial(n, np.append(probs, 1.0 - probs.sum()))
        inspected = min(lot["poured_on"] + dt.timedelta(days=int(rng.integers(
            *{"steel": (3, 8), "ductile_iron": (2, 5), "aluminum": (1, 4)}[p.alloy]))), last_day)
        inspector = str(rng.choice(INSPECTORS))
        radiographer = str(rng.choice(RADIOGRAPHERS))
        accepted = int(counts[-1])
        if accepted:
            method = "xray" if p.alloy == "steel" else "visual"
            rows.append({"lot": lot["lot"], "inspected_on": inspected.isoformat(),
                         "method": method, "quantity": accepted, "result": "accept",
                         "inspector": radiographer if method == "xray" else inspector,
                         "notes": "first-off approved" if rng.random() < 0.02 else None})
        serials = iter(rng.permutation(n) + 1)
        for (defect, z), c in zip(cats, counts[:-1], strict=False):
            for _ in range(int(c)):
                result = "rework" if rng.random() < REWORK_SHARE[defect] else "reject"
                method = _method(rng, p.alloy, defect)
                cat, sev = _xray(rng, defect, z.xray_level) if method == "xray" else (None, None)
                note = _NOTES.get((defect, result)) if rng.random() < 0.3 else None
                rows.append({"lot": lot["lot"], "inspected_on": inspected.isoformat(),
                             "method": method, "quantity": 1, "result": result,
                             "defect": defect, "zone": z.zone, "xray_category": cat,
                             "severity": sev,
                             "serial": f"{lot['lot']}/{next(serials):03d}"
                             if p.alloy == "steel" else None,
                             "inspector": radiographer if method == "xray" else inspector,
                             "notes": note})
    return rows


def generate(out_dir, seed: int = 2026, weeks: int = 26,
             end_week: str = "2026-W47") -> dict[str, pathlib.Path]:
    """Write the demo foundry's six CSV files into ``out_dir``; returns name -> path.

    Same ``seed``, ``weeks`` and ``end_week`` give byte-identical files. The
    patterns, zones, sleeves and risers do not depend on the seed; the lots and
    inspections do.
    """
    out = pathlib.Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    sc = _scenario(int(weeks), end_week)
    rng = np.random.default_rng(int(seed))
    lots = _lots(rng, sc)
    inspections = _inspections(rng, sc, lots)
    lot_rows = [{k: r[k] for k in COLUMNS["lots"]} | {"poured_on": r["poured_on"].isoformat()}
                for r in lots]
    tables = {"patterns": _pattern_rows(), "zones": _zone_rows(), "sleeves": _sleeve_rows(),
              "risers": _riser_rows(sc), "lots": lot_rows, "inspections": inspections}
    return {name: _write(out / f"{name}.csv", name, rows) for name, rows in tables.items()}


def default_out_dir() -> pathlib.Path:
    """The repository's ``sample_data`` folder."""
    return pathlib.Path(__file__).resolve().parents[1] / "sample_data"


if __name__ == "__main__":
    generate(sys.argv[1] if len(sys.argv) > 1 else default_out_dir())
