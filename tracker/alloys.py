"""Alloy families and their default constants, each with its source.

Every value here is a default the shop can override (per command option, or
per alloy row in the log). Values marked *from memory* were written down from
general engineering knowledge, not copied from a table at hand; confirm them
against your own data or supplier sheets.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, replace

from tracker.errors import UnknownAlloy


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

    shrinkage: volumetric solidification shrinkage, fraction (0.03 = 3 %).
    density_kg_dm3: density of the solid casting, kg/dm³ (= g/cm³).
    bare_efficiency: share of a bare sand riser's volume that can feed, fraction.
    caine: Caine constants, or None where no published row is known.
    """

    key: str
    name: str
    shrinkage: float
    density_kg_dm3: float
    bare_efficiency: float
    caine: CaineConstants | None
    source: str

    def to_dict(self) -> dict:
        d = asdict(self)
        d["caine"] = None if self.caine is None else asdict(self.caine)
        return d


# Caine constants: textbook table (from memory), see DOMAIN.md.
# Shrinkage: middle or upper end of the typical ranges (from memory), chosen
# on the safe side because a riser sized for too little shrinkage fails.
# Densities: handbook values for the solid alloys (from memory).
# Bare sand feeding efficiency 14 % (from memory; common practice value).
_SRC_CAINE = "Caine (1949) constants, textbook table (from memory)"
_SRC_SHRINK = "shrinkage: typical range (from memory)"

ALLOYS: dict[str, Alloy] = {
    a.key: a
    for a in [
        Alloy("steel", "Carbon and low-alloy steel", 0.035, 7.85, 0.14,
              CaineConstants(0.10, 0.03, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} 2.5-4 %"),
        Alloy("aluminum", "Aluminium-silicon foundry alloys", 0.055, 2.68, 0.14,
              CaineConstants(0.10, 0.06, 1.08),
              f"{_SRC_CAINE}; {_SRC_SHRINK} 3.5-6 %"),
        Alloy("gray_iron", "Grey cast iron", 0.01, 7.10, 0.14,
              CaineConstants(0.33, 0.030, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} -2 to +1 % (upper end taken)"),
        Alloy("ductile_iron", "Ductile (spheroidal graphite) iron", 0.03, 7.10, 0.14,
              None,
              f"no Caine row known; {_SRC_SHRINK} 0-3 % (upper end taken)"),
        Alloy("cast_iron_brass", "Cast iron and brass (Caine's combined row)", 0.045, 8.40, 0.14,
              CaineConstants(0.04, 0.017, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} copper-base 4-6 %"),
        Alloy("aluminum_bronze", "Aluminium bronze", 0.045, 7.60, 0.14,
              CaineConstants(0.24, 0.017, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} copper-base 4-6 %"),
        Alloy("silicon_bronze", "Silicon bronze", 0.05, 8.50, 0.14,
              CaineConstants(0.24, 0.017, 1.00),
              f"{_SRC_CAINE}; {_SRC_SHRINK} copper-base 4-6 %"),
    ]
}


def get_alloy(key: str, **overrides) -> Alloy:
    """The alloy family ``key``, with any field replaced by ``overrides``.

    Raises UnknownAlloy naming the known keys.
    """
    try:
        alloy = ALLOYS[str(key).strip().lower()]
    except KeyError:
        raise UnknownAlloy(key, ALLOYS) from None
    overrides = {k: v for k, v in overrides.items() if v is not None}
    return replace(alloy, **overrides) if overrides else alloy
