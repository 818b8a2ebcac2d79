"""Thermal properties of the alloys, moulds and sleeves the solve uses.

Units: °C, J/kg, J/(kg·K), W/(m·K), kg/m³. Every value is a default written
down from general engineering knowledge (*from memory*) unless a source is
named beside it; confirm them against your own data before you rely on them.
Each property is taken as constant over the solve (one value for liquid and
solid); the solve's figures are screening estimates, not a validated
casting simulation.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from tracker.design.alloys import ALLOYS, alloy_key
from tracker.errors import BadInput, UnknownAlloy

# Niyama's criterion (Niyama, Uchida, Morikawa and Saito, 1982): Ny = G / sqrt(dT/dt)
# near the end of solidification, in the unit of their paper.
NIYAMA_UNIT = "(°C·min)^0.5/cm"

# Mass feeding stops once the mush holds about this share of solid (from memory:
# published values for the end of mass feeding lie near 0.5 to 0.7); liquid above
# it that is cut off from the riser's is counted as an isolated hot spot.
FEEDING_SOLID_FRACTION = 0.7

# Niyama is evaluated where the cell cools through the solidus plus this share of
# the freezing range (from memory: "near the end of solidification", commonly
# 10 % of the range above the solidus).
NIYAMA_EVAL_SHARE = 0.1

MOULD_INITIAL_C = 20.0  # room temperature mould (common practice)


@dataclass(frozen=True)
class ThermalAlloy:
    """Thermal properties of one alloy family.

    fs_curve: (temperature °C, solid fraction) points from liquidus (0) down
    to solidus (1), interpolated linearly between them.
    niyama_threshold: in NIYAMA_UNIT; None where no threshold applies.
    """

    key: str
    liquidus_c: float
    solidus_c: float
    latent_j_kg: float
    specific_heat_j_kgk: float
    conductivity_w_mk: float
    density_kg_m3: float
    pour_temp_c: float
    fs_curve: tuple[tuple[float, float], ...]
    niyama_threshold: float | None
    niyama_source: str
    source: str

    def __post_init__(self):
        if self.solidus_c > self.liquidus_c:
            raise BadInput("solidus_c", self.solidus_c, f"must not lie above the liquidus {self.liquidus_c} °C")

    @property
    def volumetric_heat(self) -> float:
        """rho·c, J/(m³·K)."""
        return self.density_kg_m3 * self.specific_heat_j_kgk

    @property
    def volumetric_latent(self) -> float:
        """rho·L, J/m³."""
        return self.density_kg_m3 * self.latent_j_kg

    def with_overrides(self, **kw) -> ThermalAlloy:
        """A copy with the given fields replaced (None leaves a field); a new liquidus or
        solidus gives a linear solid-fraction curve between them."""
        kw = {k: v for k, v in kw.items() if v is not None}
        out = replace(self, **kw)
        if "liquidus_c" in kw or "solidus_c" in kw:
            out = replace(out, fs_curve=((out.liquidus_c, 0.0), (out.solidus_c, 1.0)))
        return out


def _linear(tl, ts):
    return ((tl, 0.0), (ts, 1.0))


_STEEL_NY = ("Niyama et al. (1982): porosity in steel castings below about 1 (°C·min)^0.5/cm "
             "(from memory)")
_AL_NY = ("from memory: thresholds published for Al-Si alloys lie well below steel's and vary "
          "with the alloy and the grid; low reliability, use only to rank designs")
_NO_NY = ("no threshold applied: graphite expansion during freezing makes Niyama's criterion "
          "(derived for steel) unreliable for this alloy (from memory)")
_CU_NY = "no threshold applied: no published threshold for this alloy family is known to us"

# All property values below are from memory (typical handbook magnitudes near the
# melting range); carbon steel and A356-type values match DOMAIN.md's notes.
THERMAL_ALLOYS: dict[str, ThermalAlloy] = {a.key: a for a in [
    ThermalAlloy("steel", 1510.0, 1460.0, 270e3, 700.0, 30.0, 7400.0, 1600.0,
                 _linear(1510.0, 1460.0), 1.0, _STEEL_NY,
                 "carbon steel near the melting point (from memory; DOMAIN.md)"),
    # A356-type: primary aluminium down to the Al-Si eutectic near 577 °C, where about
    # half the metal freezes (from memory), then the last few per cent to the solidus.
    ThermalAlloy("aluminum", 615.0, 555.0, 390e3, 1000.0, 120.0, 2450.0, 720.0,
                 ((615.0, 0.0), (577.0, 0.5), (572.0, 0.95), (555.0, 1.0)), 0.3, _AL_NY,
                 "A356-type aluminium (from memory; DOMAIN.md)"),
    ThermalAlloy("gray_iron", 1200.0, 1150.0, 230e3, 840.0, 40.0, 7000.0, 1400.0,
                 _linear(1200.0, 1150.0), None, _NO_NY,
                 "hypoeutectic grey iron, eutectic near 1150 °C (from memory)"),
    # near-eutectic: it freezes at its eutectic arrest, spread here over 1,180-1,140 °C (from memory)
    ThermalAlloy("ductile_iron", 1180.0, 1140.0, 230e3, 840.0, 35.0, 7000.0, 1400.0,
                 _linear(1180.0, 1140.0), None, _NO_NY,
                 "near-eutectic ductile iron (from memory)"),
    # Caine's row "cast iron & brass", used here for brass only: thermal values of a yellow brass.
    ThermalAlloy("cast_iron_brass", 930.0, 900.0, 170e3, 440.0, 100.0, 7900.0, 1050.0,
                 _linear(930.0, 900.0), None, _CU_NY,
                 "yellow brass (from memory); Caine's row 'cast iron & brass', used for brass only"),
    ThermalAlloy("aluminum_bronze", 1045.0, 1035.0, 230e3, 440.0, 60.0, 7300.0, 1180.0,
                 _linear(1045.0, 1035.0), None, _CU_NY,
                 "aluminium bronze, narrow freezing range (from memory)"),
    ThermalAlloy("silicon_bronze", 1025.0, 970.0, 200e3, 420.0, 30.0, 8300.0, 1150.0,
                 _linear(1025.0, 970.0), None, _CU_NY,
                 "silicon bronze (from memory)"),
]}


@dataclass(frozen=True)
class Mould:
    """A mould material's properties: W/(m·K), kg/m³, J/(kg·K)."""

    key: str
    name: str
    conductivity_w_mk: float
    density_kg_m3: float
    specific_heat_j_kgk: float
    source: str

    @property
    def volumetric_heat(self) -> float:
        return self.density_kg_m3 * self.specific_heat_j_kgk

    @property
    def effusivity(self) -> float:
        """sqrt(k·rho·c), W·s^0.5/(m²·K)."""
        return float(np.sqrt(self.conductivity_w_mk * self.volumetric_heat))


MOULDS: dict[str, Mould] = {m.key: m for m in [
    Mould("silica_sand", "Silica sand (green or dry)", 0.6, 1550.0, 1100.0,
          "from memory; DOMAIN.md"),
    Mould("chemically_bonded", "Chemically bonded silica sand (no-bake)", 0.7, 1600.0, 1050.0,
          "from memory: resin-bonded silica sand, a little denser and more conductive"),
]}

# Sleeve wall material: low density and heat capacity (from memory: insulating
# sleeve boards of fibre and hollow spheres weigh about 0.4-0.8 kg/dm³).
SLEEVE_DENSITY_KG_M3 = 600.0
SLEEVE_SPECIFIC_HEAT_J_KGK = 1000.0
SLEEVE_WALL_SHARE = 0.12          # wall thickness about 12 % of the inner diameter (from memory)
SLEEVE_WALL_RANGE_MM = (10.0, 30.0)


def sleeve_wall_mm(diameter_mm: float) -> float:
    """Default sleeve wall thickness for a riser of inner diameter D, mm (from memory)."""
    lo, hi = SLEEVE_WALL_RANGE_MM
    return float(np.clip(SLEEVE_WALL_SHARE * diameter_mm, lo, hi))


def thermal_alloy(key: str, **overrides) -> ThermalAlloy:
    """The thermal properties of alloy ``key`` (any case), with ``overrides`` (``with_overrides``)."""
    k = alloy_key(key)
    if k not in THERMAL_ALLOYS:
        raise UnknownAlloy(key, ALLOYS)
    return THERMAL_ALLOYS[k].with_overrides(**overrides) if overrides else THERMAL_ALLOYS[k]


def mould(key: str) -> Mould:
    """The mould material ``key`` (any case); BadInput naming the known ones otherwise."""
    k = str(key).strip().lower()
    if k not in MOULDS:
        raise BadInput("mould", key, "known moulds are " + ", ".join(sorted(MOULDS)))
    return MOULDS[k]
