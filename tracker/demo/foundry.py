"""The invented demo foundry: its sleeve catalogue, its patterns and their
zones, pour temperatures, metal prices and inspectors. Dimensions in cm;
diameters and heights in mm."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TypedDict

SCENARIO_NAME = "the demo foundry (invented)"

# Pour temperature per alloy, °C: (usual, lowest, highest).
POUR_TEMP_C = {"steel": (1600.0, 1580.0, 1620.0),
               "ductile_iron": (1400.0, 1380.0, 1420.0),
               "aluminum": (720.0, 700.0, 740.0)}
# Metal price per kg, in the log's currency.
METAL_COST_PER_KG = {"steel": 2.60, "ductile_iron": 1.45, "aluminum": 3.40}

INSPECTORS = ("QE-ML", "QE-TR", "QE-AK", "QE-JS")
RADIOGRAPHERS = ("RT-PW", "RT-DN")


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


class _Placement(TypedDict):
    """ZoneSpec's placement and top, given together (typed, so ``**_SIDE`` checks)."""

    placement: str
    top: str


Z = ZoneSpec
_SIDE: _Placement = {"placement": "side", "top": "blind"}

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
