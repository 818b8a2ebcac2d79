"""Alloy families and their default constants, each with its source.

Every value here is a default the shop can override (per command option, or
per alloy row in the log). Values marked *from memory* were written down from
general engineering knowledge, not copied from a table at hand; confirm them
against your own data or supplier sheets.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, replace

from tracker.errors import BadInput, UnknownAlloy


@dataclass(frozen=True)
class CaineConstants:
    """Constants of Caine's curve X = a / (Y - b) + c (Caine, 1949)."""

    a: float
    b: float
    c: float

    def x_curve(self, y):
        """Freezing ratio on the curve for volume ratio ``y`` (inf where y <= b)."""
        import numpy as np

        y = np.asarray(y, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = np.where(y > self.b, self.a / (y - self.b) + self.c, np.inf)
        return out if out.ndim else float(out)


@dataclass(frozen=True)
class Alloy:
    """One alloy family.

    shrinkage: volumetric solidification shrinkage, fraction (0.03 = 3 %). For
        ductile iron (pressure control) it is the allowance for the mould wall
        movement of a green-sand mould (0 in a rigid mould), see ``rules``.
    density_kg_dm3: density of the solid casting, kg/dm³ (= g/cm³).
    bare_efficiency: share of a bare sand riser's volume that can feed, fraction.
    caine: Caine constants, or None where no published row is known.
    rule_set: which published rules judge the riser: ``modulus_sequence``
        (Wlodawer's modulus rule, Caine, feed volume) or ``pressure_control``
        (Karsay's pressure-control risering for ductile iron), see RULE_SETS.
    graphitic: graphite forms on freezing (grey and ductile iron); the neck's
        1.1 ratio of the modulus sequence is applied only to the others.
    liquid_contraction_per_100k: volumetric liquid contraction per 100 K of
        cooling from the pour temperature to the liquidus, fraction.
    liquidus_c, default_superheat_k: liquidus, °C, and the pour temperature
        above it taken where no lot temperature is known, K.
    """

    key: str
    name: str
    shrinkage: float
    density_kg_dm3: float
    bare_efficiency: float
    caine: CaineConstants | None
    source: str
    rule_set: str = "modulus_sequence"
    graphitic: bool = False
    liquid_contraction_per_100k: float | None = None
    liquidus_c: float | None = None
    default_superheat_k: float | None = None
    liquid_source: str = ""

    def to_dict(self) -> dict:
        d = asdict(self)
        d["caine"] = None if self.caine is None else asdict(self.caine)
        return d


# Caine constants: textbook table (from memory), see DOMAIN.md.
# Shrinkage: middle or upper end of the typical ranges (from memory), chosen
# on the safe side because a riser sized for too little shrinkage fails.
# Densities: handbook values for the solid alloys (from memory).
# Bare sand feeding efficiency 14 % (from memory; common practice value).
# Liquid contraction per 100 K from the pour temperature to the liquidus: the
# upper end of the ranges in DOMAIN.md (from memory): steel 1.5-1.6 %, cast
# irons 1.0-1.2 %, aluminium alloys 1.2-1.5 %. Copper-base alloys: about 1 %
# (from memory: liquid copper's volume grows by about 1e-4 per K).
# Liquidus temperatures (from memory): carbon steel about 1,510 °C and A356-type
# aluminium about 615 °C (DOMAIN.md); near-eutectic cast irons about 1,150 °C;
# brass about 930 °C, aluminium bronze about 1,045 °C, silicon bronze about
# 1,025 °C. Default superheats (pour temperature above the liquidus, from
# memory, common practice): steel 70 K, aluminium 100 K, cast irons 200 K
# (poured about 1,350-1,400 °C), copper-base 100 K.
_SRC_CAINE = "Caine (1949) constants, textbook table (from memory)"
_SRC_SHRINK = "shrinkage: typical range (from memory)"
_SRC_LIQ = "liquid contraction per 100 K, liquidus and default superheat: from memory"
RULE_SETS = {
    "modulus_sequence": "modulus rule (Wlodawer), Caine's curve, feed volume",
    "pressure_control": "pressure control for ductile iron (Karsay)",
}

ALLOYS: dict[str, Alloy] = {
    a.key: a
    for a in [
        Alloy("steel", "Carbon and low-alloy steel", 0.035, 7.85, 0.14,
              CaineConstants(0.10, 0.03, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} 2.5-4 %",
              liquid_contraction_per_100k=0.016, liquidus_c=1510.0, default_superheat_k=70.0,
              liquid_source=f"{_SRC_LIQ}; 1.5-1.6 % per 100 K (upper end taken)"),
        Alloy("aluminum", "Aluminium-silicon foundry alloys", 0.055, 2.68, 0.14,
              CaineConstants(0.10, 0.06, 1.08),
              f"{_SRC_CAINE}; {_SRC_SHRINK} 3.5-6 %",
              liquid_contraction_per_100k=0.015, liquidus_c=615.0, default_superheat_k=100.0,
              liquid_source=f"{_SRC_LIQ}; 1.2-1.5 % per 100 K (upper end taken); A356 liquidus"),
        Alloy("gray_iron", "Grey cast iron", 0.01, 7.10, 0.14,
              CaineConstants(0.33, 0.030, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} -2 to +1 % (upper end taken)",
              graphitic=True,
              liquid_contraction_per_100k=0.012, liquidus_c=1150.0, default_superheat_k=200.0,
              liquid_source=f"{_SRC_LIQ}; cast irons 1.0-1.2 % per 100 K (upper end taken)"),
        Alloy("ductile_iron", "Ductile (spheroidal graphite) iron", 0.03, 7.10, 0.14,
              None,
              f"no Caine row known; {_SRC_SHRINK} 0-3 % by mould rigidity: 0 in a rigid mould, "
              "3 % (upper end) taken as the green-sand mould-wall allowance; pressure-control "
              "risering (Karsay), figures from memory",
              rule_set="pressure_control", graphitic=True,
              liquid_contraction_per_100k=0.012, liquidus_c=1150.0, default_superheat_k=200.0,
              liquid_source=f"{_SRC_LIQ}; cast irons 1.0-1.2 % per 100 K (upper end taken)"),
        Alloy("cast_iron_brass", "Brass (Caine's row 'cast iron & brass', used for brass only)", 0.045, 8.40, 0.14,
              CaineConstants(0.04, 0.017, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} copper-base 4-6 %",
              # density and shrinkage of this row are brass values: judged as a non-graphitic alloy
              liquid_contraction_per_100k=0.010, liquidus_c=930.0, default_superheat_k=100.0,
              liquid_source=f"{_SRC_LIQ}; copper-base about 1 % per 100 K, brass liquidus"),
        Alloy("aluminum_bronze", "Aluminium bronze", 0.045, 7.60, 0.14,
              CaineConstants(0.24, 0.017, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} copper-base 4-6 %",
              liquid_contraction_per_100k=0.010, liquidus_c=1045.0, default_superheat_k=100.0,
              liquid_source=f"{_SRC_LIQ}; copper-base about 1 % per 100 K"),
        Alloy("silicon_bronze", "Silicon bronze", 0.05, 8.50, 0.14,
              CaineConstants(0.24, 0.017, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} copper-base 4-6 %",
              liquid_contraction_per_100k=0.010, liquidus_c=1025.0, default_superheat_k=100.0,
              liquid_source=f"{_SRC_LIQ}; copper-base about 1 % per 100 K"),
    ]
}


# Other spellings of a family, taken wherever an alloy is named (the imports' aliases too).
ALIASES = {"aluminium": "aluminum", "aluminium_bronze": "aluminum_bronze", "grey_iron": "gray_iron",
           "brass": "cast_iron_brass"}
# Caine's "cast iron & brass" row is brass here: an iron named by it is refused.
IRON_NAMES = ("cast_iron", "iron")
IRON_REFUSAL = ("Caine's row 'cast iron & brass' is used for brass only; for an iron give gray_iron "
                "(Caine's grey cast iron row) or ductile_iron (pressure control)")


def alloy_key(key) -> str:
    """The family key of an alloy as typed (any case, spaces as underscores, aliases
    such as ``aluminium``); BadInput for an iron named by the brass row."""
    k = "_".join(str(key).strip().lower().replace("-", " ").split())
    if k in IRON_NAMES:
        raise BadInput("alloy", key, IRON_REFUSAL)
    return ALIASES.get(k, k)


def get_alloy(key: str, **overrides) -> Alloy:
    """The alloy family ``key`` (``alloy_key``'s spellings), with any field replaced by
    ``overrides``.

    Raises UnknownAlloy naming the known keys.
    """
    try:
        alloy = ALLOYS[alloy_key(key)]
    except KeyError:
        raise UnknownAlloy(key, ALLOYS) from None
    overrides = {k: v for k, v in overrides.items() if v is not None}
    return replace(alloy, **overrides) if overrides else alloy
