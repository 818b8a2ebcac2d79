"""The invented foundry of the scale benchmark: a seeded synthetic history.

``generate_history(out_dir, lots, seed)`` writes six CSV files in the import
formats (patterns, zones, sleeves, risers, lots, inspections). Every code,
name and number in it is made up. At 1,000,000 lots it pours about 3,000
patterns for ten years, about 100,000 lots a year, and logs about three
inspection records per lot. The same ``lots`` and ``seed`` give the same
files: the steps below draw from one random generator in a fixed order.
"""

from __future__ import annotations

import datetime as dt
import os
import pathlib
from dataclasses import dataclass

import numpy as np
import pandas as pd

DEFAULT_LOTS = 20_000
SEED = 2026
YEARS = 10
PATTERNS_PER_LOT = 0.003        # 3,000 patterns at 1,000,000 lots
MIN_PATTERNS = 20
LAST_DAY = dt.date(2026, 11, 27)  # a Friday; the history ends here (or yesterday, if earlier)
REVIEW_WEEKS_BACK = 2           # the reviewed week ends this many weeks before the last day

ALLOY_KEYS = ("steel", "ductile_iron", "aluminum")
ALLOY_SHARE = (0.45, 0.30, 0.25)
METAL_COST = (2.60, 1.45, 3.40)
POUR_TEMP = (1600.0, 1400.0, 720.0)
PROCESS_COST = ((25.0, 1.8), (12.0, 0.9), (8.0, 3.0))  # fixed + per kg of casting
SECOND_METHOD = ("xray", "ut", "xray")  # the volumetric check each alloy gets besides visual
DEFECTS = ("shrinkage", "gas", "sand", "slag", "misrun", "cold_shut", "hot_tear", "crack",
           "dimensional", "other")
BACKGROUND = np.array([  # per casting, per alloy (rows) and defect (columns, DEFECTS[1:])
    [0.0015, 0.0030, 0.0020, 0.0010, 0.0008, 0.0012, 0.0005, 0.0020, 0.0005],
    [0.0012, 0.0035, 0.0025, 0.0010, 0.0010, 0.0000, 0.0003, 0.0020, 0.0005],
    [0.0030, 0.0020, 0.0010, 0.0015, 0.0015, 0.0008, 0.0000, 0.0020, 0.0005],
])
REWORK_SHARE = np.array([0.12, 0.15, 0.50, 0.30, 0.0, 0.20, 0.30, 0.0, 0.60, 0.30])
# Method finding each defect, per alloy (a table, so the file is easy to read).
DEFECT_METHOD = {
    "steel": ("xray", "xray", "xray", "visual", "visual", "visual", "mt", "mt", "dimensional", "visual"),
    "ductile_iron": ("ut", "visual", "visual", "visual", "visual", "visual", "visual", "mt", "dimensional",
                     "visual"),
    "aluminum": ("xray", "xray", "visual", "visual", "visual", "visual", "pt", "pt", "dimensional", "visual"),
}
XRAY_CATEGORY = {"gas": "A", "sand": "B", "slag": "B", "crack": "D", "hot_tear": "E"}
SHRINKAGE_CATEGORIES = ("CA", "CB", "CC", "CD")
BASE_SHRINKAGE = 0.0035
EXCESS_SHRINKAGE = 0.20
SHORTFALL_SCALE = 0.15
GAS_PROBLEM_RATE = 0.06
INSPECTORS = tuple(f"QE-{i:02d}" for i in range(1, 13))
NOTES = ("weld repaired, re-shot", "porosity near core print", "ground out, re-inspected",
         "straightened in press", "excavated and welded", "see NCR", "customer witness")
# Invented catalogue; f and eps inside the typical ranges of DOMAIN.md (from memory).
SLEEVES = (
    ("IS-60", "insulating", 60, 80, 1.22, 0.28, 2.40), ("IS-80", "insulating", 80, 100, 1.25, 0.30, 3.60),
    ("IS-100", "insulating", 100, 130, 1.25, 0.32, 5.20), ("IS-130", "insulating", 130, 160, 1.28, 0.33, 7.80),
    ("IS-160", "insulating", 160, 200, 1.28, 0.33, 10.40), ("IS-200", "insulating", 200, 250, 1.30, 0.34, 15.00),
    ("XS-70", "exothermic", 70, 90, 1.35, 0.36, 4.90), ("XS-90", "exothermic", 90, 110, 1.35, 0.36, 6.50),
    ("XS-120", "exothermic", 120, 150, 1.40, 0.38, 9.80), ("XS-160", "exothermic", 160, 200, 1.42, 0.40, 15.50),
    ("XS-200", "exothermic", 200, 240, 1.45, 0.42, 22.00), ("XS-250", "exothermic", 250, 300, 1.45, 0.42, 31.00),
)
WORDS = ("valve body", "pump casing", "bearing housing", "impeller", "flange adaptor", "gear blank",
         "brake drum", "bracket", "manifold", "cover", "hub", "lever", "frame", "bonnet", "wedge")



def _last_day() -> dt.date:
    return min(LAST_DAY, dt.date.today() - dt.timedelta(days=1))


def _ceil_to(x, step):
    return np.ceil(np.asarray(x) / step - 1e-9) * step


def _csv(path: pathlib.Path, frame: pd.DataFrame) -> pathlib.Path:
    frame.to_csv(path, index=False, lineterminator="\n")
    return path



@dataclass
class _Zones:
    """The zones of every pattern (one row per zone) and what their risers start from."""

    frame: pd.DataFrame         # zone_pattern, zone, volume_cm3, cooling_area_cm2, ... (the zones file)
    zp: np.ndarray              # pattern of each zone
    slot: np.ndarray            # 0-based zone number in the pattern
    vol: np.ndarray             # cm³
    area: np.ndarray            # cm²
    top: np.ndarray             # the first zone of a pattern has a top riser, the others side risers
    hd: np.ndarray              # riser height / diameter
    need: np.ndarray            # the diameter the rules need, mm


@dataclass
class _Designs:
    """Each zone's first riser and the pattern's design kind."""

    kind: np.ndarray            # per pattern: 0 sound, 1 undersized riser, 2 gas problem
    undersized: np.ndarray      # per zone
    d: np.ndarray               # riser diameter, mm
    h: np.ndarray               # riser height, mm
    sleeve: np.ndarray          # sleeve code ("" for bare)
    neck: np.ndarray            # neck diameter of side risers, mm (NaN for none)
    shortfall: np.ndarray       # the synthetic reject law's input
    sleeves: pd.DataFrame       # the catalogue (the sleeves file)


def _zone_rows(rng, n_pat, alloy, zones_per) -> _Zones:
    """Zones of plate-like sections and the riser diameter the rules need for each."""
    from tracker.design.sizing import size_risers

    zp = np.repeat(np.arange(n_pat), zones_per)              # pattern of each zone
    slot = np.concatenate([np.arange(k) for k in zones_per])  # 0-based zone number in the pattern
    za = alloy[zp]
    nz = len(zp)
    t = np.where(za == 2, rng.uniform(1.0, 4.0, nz), rng.uniform(1.5, 12.0, nz))  # thickness, cm
    length = t * rng.uniform(2.0, 8.0, nz)
    width = t * rng.uniform(1.5, 5.0, nz)
    joined = rng.random(nz) < 0.6                            # one wt face joined to other metal
    vol = np.round(length * width * t, 1)
    area = np.round(2.0 * (length * width + length * t + width * t) - joined * width * t, 1)
    level = np.where(za == 0, rng.choice([2, 3], nz), 0)
    zones = pd.DataFrame({
        "zone_pattern": zp, "zone": [f"Z{k + 1}" for k in slot], "volume_cm3": vol, "cooling_area_cm2": area,
        "thickness_mm": np.where(za == 2, np.nan, np.round(t * 10.0, 1)),
        "length_mm": np.where(za == 0, np.round(np.maximum(length, width) * 5.0, 1), np.nan),
        "required_xray_level": level,
    })
    top = slot == 0
    hd = np.where(top, rng.choice([1.0, 1.5], nz), 1.0)
    need = np.empty(nz)
    for a, key in enumerate(ALLOY_KEYS):
        m = za == a
        need[m] = size_risers(vol[m], area[m], key, np.where(top[m], "top", "side"), hd[m])["diameter_mm"]
    return _Zones(zones, zp, slot, vol, area, top, hd, need)


def _first_risers(rng, n_pat, zones_per, z: _Zones) -> _Designs:
    """Designs: most risers sound; some patterns have one undersized riser; a few a gas problem."""
    nz = len(z.zp)
    kind = rng.choice(3, n_pat, p=[0.88, 0.08, 0.04])        # 0 sound, 1 undersized riser, 2 gas
    bad_slot = (rng.random(n_pat) * zones_per).astype(int)
    undersized = (kind[z.zp] == 1) & (z.slot == bad_slot[z.zp])
    factor = np.where(undersized, rng.uniform(0.70, 0.88, nz), rng.uniform(1.0, 1.25, nz))
    d = np.where(factor >= 1.0, _ceil_to(z.need * factor, 10.0), np.round(z.need * factor / 10.0) * 10.0)
    d = np.maximum(d, 30.0)
    sleeves = pd.DataFrame(SLEEVES, columns=["sleeve", "kind", "inner_diameter_mm", "height_mm",
                                             "modulus_factor", "feeding_efficiency", "unit_cost"])
    # A sleeved riser: the smallest catalogue sleeve wide enough for the bare need over its factor.
    sleeved = ~undersized & (rng.random(nz) < 0.15)
    want = z.need / sleeves["modulus_factor"].min() * 1.05
    pick = np.searchsorted(sleeves.sort_values("inner_diameter_mm")["inner_diameter_mm"].to_numpy(), want)
    by_d = sleeves.sort_values("inner_diameter_mm").reset_index(drop=True)
    sleeved &= pick < len(by_d)
    pick = np.minimum(pick, len(by_d) - 1)
    sleeve_code = np.where(sleeved, by_d["sleeve"].to_numpy()[pick], "")
    f = np.where(sleeved, by_d["modulus_factor"].to_numpy()[pick], 1.0)
    d = np.where(sleeved, by_d["inner_diameter_mm"].to_numpy()[pick], d)
    h = np.where(sleeved, by_d["height_mm"].to_numpy()[pick], _ceil_to(d * z.hd, 10.0))
    mc = z.vol / z.area
    neck = _ceil_to(4.0 * 1.1 * mc * 10.0, 5.0)
    neck = np.where(~z.top & (neck < d), neck, np.nan)
    # The synthetic reject law's input (invented, not a rule of the trade): how far the
    # riser falls short of the size the rules need, a sleeve counting as sqrt(f) wider.
    shortfall = np.maximum(0.0, 1.0 - d * np.sqrt(f) / z.need)
    return _Designs(kind, undersized, d, h, sleeve_code, neck, shortfall, sleeves)


def _revisions(rng, n_pat, last_day, z: _Zones, g: _Designs):
    """Revision 1 of every riser and, for some patterns, revision 2; returns (risers, revision 2's dates)."""
    zp, slot, top = z.zp, z.slot, z.top
    nz = len(zp)
    rev1 = np.datetime64(last_day) - np.timedelta64(YEARS * 365, "D") - rng.integers(30, 400, n_pat)
    # Revision 2: most undersized risers get fixed some time in the history (a share in the
    # last half-year, so reviews have before/after comparisons); a few sound patterns get a
    # small change.
    span = YEARS * 365
    fix = (g.kind == 1) & (rng.random(n_pat) < 0.6)
    tweak = (g.kind != 1) & (rng.random(n_pat) < 0.08)
    days_back = np.where(rng.random(n_pat) < 0.3, rng.integers(20, 180, n_pat), rng.integers(20, span, n_pat))
    rev2 = np.where(fix | tweak, np.datetime64(last_day) - days_back.astype("timedelta64[D]"),
                    np.datetime64("NaT"))
    base = dict(pattern_i=zp, zone=z.frame["zone"].to_numpy(), placement=np.where(top, "top", "side"),
                top=np.where(top, rng.choice(["open", "blind"], nz), "blind"))
    r1 = pd.DataFrame({**base, "revision": "1", "effective_from": rev1[zp], "riser": [f"R{k + 1}" for k in slot],
                       "diameter_mm": g.d, "height_mm": g.h, "sleeve": g.sleeve, "neck_diameter_mm": g.neck})
    r1["_shortfall"] = g.shortfall
    has2 = ~np.isnat(rev2)[zp]
    r2 = r1[has2].copy()
    r2["revision"] = "2"
    r2["effective_from"] = rev2[zp][has2]
    changed = (g.undersized | ((g.kind[zp] != 1) & (slot == 0)))[has2]
    grow = np.where(g.undersized[has2], _ceil_to(z.need[has2] * 1.1, 10.0), g.d[has2] + 10.0)
    bare = r2["sleeve"].to_numpy() == ""
    newd = np.where(changed & bare, grow, r2["diameter_mm"].to_numpy())
    r2["diameter_mm"] = newd
    r2["height_mm"] = np.where(changed & bare, _ceil_to(newd * z.hd[has2], 10.0), r2["height_mm"].to_numpy())
    r2["_shortfall"] = np.where(changed & bare, 0.0, r2["_shortfall"].to_numpy())
    nk = r2["neck_diameter_mm"].to_numpy()
    r2["neck_diameter_mm"] = np.where(nk < newd, nk, np.nan)
    return pd.concat([r1, r2], ignore_index=True), rev2


def _design_rows(rng, n_pat, alloy, zones_per, last_day):
    """Zones, risers (one per zone, one or two revisions) and each riser's shortfall.

    Returns (zones, sleeves, risers, the design kind of each pattern, revision 2's dates).
    """
    z = _zone_rows(rng, n_pat, alloy, zones_per)
    g = _first_risers(rng, n_pat, zones_per, z)
    risers, rev2 = _revisions(rng, n_pat, last_day, z, g)
    return z.frame, g.sleeves, risers, g.kind, rev2


@dataclass
class _Foundry:
    """The patterns and their designs."""

    n_pat: int
    alloy: np.ndarray           # per pattern, an index of ALLOY_KEYS
    cpm: np.ndarray             # castings per mold
    zones_per: np.ndarray
    first_zone: np.ndarray      # row of each pattern's first zone
    codes: np.ndarray
    patterns: pd.DataFrame      # the patterns file
    zones: pd.DataFrame
    sleeves: pd.DataFrame
    risers: pd.DataFrame        # with pattern_i and _shortfall, before the file's columns
    kind: np.ndarray


@dataclass
class _Lots:
    """The lots poured over ten years."""

    n: int
    lp: np.ndarray              # pattern of each lot
    poured: np.ndarray          # datetime64[D]
    temp: np.ndarray            # pouring temperature, °C
    castings: np.ndarray
    codes: np.ndarray
    frame: pd.DataFrame         # the lots file


def _foundry(rng, n_pat, last_day) -> _Foundry:
    """The patterns: alloy, castings per mold, zones and risers, weight and costs."""
    alloy = rng.choice(3, n_pat, p=ALLOY_SHARE)
    cpm = rng.choice([1, 2, 4, 8], n_pat, p=[0.4, 0.3, 0.2, 0.1])
    zones_per = rng.choice([1, 2, 3, 4], n_pat, p=[0.30, 0.35, 0.25, 0.10])
    codes = np.array([f"P-{i + 1:05d}" for i in range(n_pat)])
    zones, sleeves, risers, kind, _ = _design_rows(rng, n_pat, alloy, zones_per, last_day)
    density = np.array([7.85, 7.10, 2.68])[alloy]
    kg = np.round(np.bincount(zones["zone_pattern"], zones["volume_cm3"], n_pat) * 1.08 * density / 1000.0, 1)
    kg = np.maximum(kg, 0.1)
    fixed = np.array([c[0] for c in PROCESS_COST])[alloy]
    per_kg = np.array([c[1] for c in PROCESS_COST])[alloy]
    patterns = pd.DataFrame({
        "pattern": codes,
        "description": [f"{WORDS[w]} {s}" for w, s in zip(rng.integers(0, len(WORDS), n_pat),
                                                           rng.integers(2, 60, n_pat) * 10, strict=False)],
        "alloy": np.array(ALLOY_KEYS)[alloy], "casting_weight_kg": kg, "castings_per_mold": cpm,
        "metal_cost_per_kg": np.array(METAL_COST)[alloy],
        "processing_cost_per_casting": np.round(fixed + per_kg * kg, 2)})
    first_zone = np.concatenate([[0], np.cumsum(zones_per)[:-1]])
    return _Foundry(n_pat, alloy, cpm, zones_per, first_zone, codes, patterns, zones, sleeves, risers, kind)


def _lots(rng, n_lots, f: _Foundry, last_day) -> _Lots:
    """Lots on working days over ten years, busy patterns poured more often."""
    n_pat, alloy = f.n_pat, f.alloy
    first = np.datetime64(last_day - dt.timedelta(days=YEARS * 365))
    days = np.arange(first, np.datetime64(last_day) + 1)
    days = days[np.is_busday(days)]
    weight = rng.lognormal(0.0, 1.0, n_pat)
    lp = rng.choice(n_pat, n_lots, p=weight / weight.sum())
    poured = np.sort(rng.choice(days, n_lots))
    molds = rng.integers(1, 16, n_lots)
    t_off = rng.uniform(-6, 6, n_pat)
    temp = np.round(np.array(POUR_TEMP)[alloy[lp]] + t_off[lp] + rng.normal(0, 7, n_lots))
    lot_codes = np.char.add("L", np.char.zfill(np.arange(1, n_lots + 1).astype(str), 7))
    heats = np.char.add(np.char.add("H", np.char.replace(poured.astype(str), "-", "")),
                        np.char.add("-", (alloy[lp] * 100 + rng.integers(1, 4, n_lots)).astype(str)))
    frame = pd.DataFrame({"lot": lot_codes, "pattern": f.codes[lp], "poured_on": poured.astype(str),
                          "heat": heats, "molds": molds, "pour_temp_c": temp.astype(np.int64)})
    return _Lots(n_lots, lp, poured, temp, molds * f.cpm[lp], lot_codes, frame)


def _shortfall_by_lot(f: _Foundry, lots: _Lots) -> np.ndarray:
    """(lots, most zones of a pattern): the shortfall of each zone's riser in the revision the lot was poured under."""
    lp, n_pat = lots.lp, f.n_pat
    risers = f.risers
    zmax = int(f.zones_per.max())
    # the revision in effect: 2 from its date on
    r2 = risers[risers["revision"] == "2"].groupby("pattern_i")["effective_from"].first()
    rev2 = np.full(n_pat, np.datetime64("NaT"), dtype="datetime64[D]")
    rev2[r2.index.to_numpy()] = r2.to_numpy().astype("datetime64[D]")
    on2 = ~np.isnat(rev2[lp]) & (lots.poured >= rev2[lp])
    short = np.zeros((2, len(f.zones)))
    r1m = risers["revision"] == "1"
    zone_row = f.first_zone[risers["pattern_i"].to_numpy()] + risers["zone"].str[1:].astype(int).to_numpy() - 1
    short[0, zone_row[r1m.to_numpy()]] = risers.loc[r1m, "_shortfall"].to_numpy()
    short[1] = short[0]
    short[1, zone_row[~r1m.to_numpy()]] = risers.loc[~r1m, "_shortfall"].to_numpy()
    slots = np.arange(zmax)
    valid = slots[None, :] < f.zones_per[lp][:, None]
    zidx = np.where(valid, f.first_zone[lp][:, None] + slots[None, :], 0)
    return short[on2.astype(int)[:, None], zidx]


def _defect_counts(rng, f: _Foundry, lots: _Lots, seen: np.ndarray):
    """Faulty castings per lot: shrinkage per zone (columns 0..zmax-1) from the riser's
    shortfall, then the background defects (DEFECTS[1:]); returns (counts, defect of
    each column, zone slot of each count)."""
    lp, n_lots, alloy = lots.lp, lots.n, f.alloy
    castings = lots.castings
    zmax = int(f.zones_per.max())
    slots = np.arange(zmax)
    valid = slots[None, :] < f.zones_per[lp][:, None]
    s = _shortfall_by_lot(f, lots)
    dtemp = lots.temp - np.array(POUR_TEMP)[alloy[lp]]
    rate = (BASE_SHRINKAGE + EXCESS_SHRINKAGE * s * s / (s * s + SHORTFALL_SCALE ** 2)) \
        * np.exp(0.25 * dtemp / 20.0)[:, None] * rng.gamma(8.0, 1 / 8.0, (n_lots, zmax))
    shrink = np.where(valid, rng.binomial(castings[:, None], np.minimum(rate, 0.5)), 0)
    bg_rate = BACKGROUND[alloy[lp]] * rng.uniform(0.6, 1.4, f.n_pat)[lp][:, None]
    gas = f.kind[lp] == 2
    bg_rate[gas, 0] = GAS_PROBLEM_RATE
    bg = rng.binomial(castings[:, None], bg_rate)
    bg_zone = (rng.random((n_lots, bg.shape[1])) * f.zones_per[lp][:, None]).astype(int)
    counts = np.concatenate([shrink, bg], axis=1)            # (lots, zmax + 9)
    # no lot has more faulty castings than castings
    cap = np.minimum(np.cumsum(counts, axis=1), castings[:, None])
    counts = np.diff(np.concatenate([np.zeros((n_lots, 1), dtype=cap.dtype), cap], axis=1), axis=1)
    counts[~seen] = 0
    defect = np.concatenate([np.zeros(zmax, dtype=int), np.arange(1, len(DEFECTS))])
    zslot = np.concatenate([np.broadcast_to(slots, (n_lots, zmax)), bg_zone], axis=1)
    return counts, defect, zslot


def _fault_rows(rng, f: _Foundry, lots: _Lots, seen: np.ndarray) -> dict:
    """The reject and rework records: lot index, defect, zone slot, quantity, result
    (0 reject, 1 rework), method, X-ray category, severity and notes, one entry each."""
    counts, defect, zslot = _defect_counts(rng, f, lots, seen)
    li, ci = np.nonzero(counts)
    q = counts[li, ci]
    dfc = defect[ci]
    rework = rng.binomial(q, REWORK_SHARE[dfc])
    li = np.concatenate([li, li])
    dfc = np.concatenate([dfc, dfc])
    zs = np.concatenate([zslot[li[:len(q)], ci], zslot[li[:len(q)], ci]])
    q = np.concatenate([q - rework, rework])
    res = np.concatenate([np.zeros(len(rework), dtype=int), np.ones(len(rework), dtype=int)])  # reject, rework
    keep = q > 0
    li, dfc, zs, q, res = li[keep], dfc[keep], zs[keep], q[keep], res[keep]
    la = f.alloy[lots.lp[li]]
    method_tab = np.array([DEFECT_METHOD[k] for k in ALLOY_KEYS])
    meth = method_tab[la, dfc]
    xray = meth == "xray"
    cat = np.full(len(q), "", dtype=object)
    cat[xray & (dfc == 0)] = np.array(SHRINKAGE_CATEGORIES)[rng.integers(0, 4, int((xray & (dfc == 0)).sum()))]
    for name, c in XRAY_CATEGORY.items():
        cat[xray & (dfc == DEFECTS.index(name))] = c
    zone_level = f.zones["required_xray_level"].to_numpy()[f.first_zone[lots.lp[li]] + zs]
    lvl = np.where(zone_level > 0, zone_level, 2)
    graded = xray & ~np.isin(cat, ["D", "E"])
    sev = np.where(graded, lvl + 1 + (rng.random(len(q)) * (5 - lvl)).astype(int), 0)
    notes = np.where(rng.random(len(q)) < 0.2, np.array(NOTES, dtype=object)[rng.integers(0, len(NOTES), len(q))], "")
    return {"li": li, "dfc": dfc, "zs": zs, "q": q, "res": res, "meth": meth, "cat": cat, "sev": sev,
            "notes": notes}


def _accept_rows(rng, f: _Foundry, lots: _Lots, seen: np.ndarray, faults: dict) -> list:
    """Accept quantities per lot and their methods: visual and the alloy's second method, each
    of the castings that method did not fault, and a dimensional first-off check of one to
    three castings on about half the lots; a list of (quantities, methods)."""
    li, q, meth = faults["li"], faults["q"], faults["meth"]
    n_lots, castings = lots.n, lots.castings
    m_vis = np.bincount(li[meth == "visual"], q[meth == "visual"], n_lots).astype(np.int64)
    second = np.array(SECOND_METHOD)[f.alloy[lots.lp]]
    is_second = meth == second[li]
    m_sec = np.bincount(li[is_second], q[is_second], n_lots).astype(np.int64)
    acc_vis = np.where(seen, castings - m_vis, 0)
    acc_sec = np.where(seen, castings - m_sec, 0)
    m_dim = np.bincount(li[meth == "dimensional"], q[meth == "dimensional"], n_lots).astype(np.int64)
    acc_dim = np.where(seen & (rng.random(n_lots) < 0.55),
                       np.minimum(rng.integers(1, 4, n_lots), castings - m_dim), 0)
    return [(acc_vis, np.full(n_lots, "visual", dtype=object)), (acc_sec, second.astype(object)),
            (acc_dim, np.full(n_lots, "dimensional", dtype=object))]


def _inspections(rng, f: _Foundry, lots: _Lots, last_day) -> pd.DataFrame:
    """The inspections file: per lot its accept records first, then its rejects and rework."""
    n_lots = lots.n
    inspected = lots.poured + rng.integers(1, 8, n_lots).astype("timedelta64[D]")
    seen = inspected <= np.datetime64(last_day)              # the newest lots await inspection
    fr = _fault_rows(rng, f, lots, seen)
    accept = _accept_rows(rng, f, lots, seen, fr)
    lot_ins = rng.integers(0, len(INSPECTORS), n_lots)
    n_acc = sum(int((a > 0).sum()) for a, _ in accept)
    q = fr["q"]

    def blank(values):
        return np.concatenate([np.full(n_acc, "", dtype=object), values])

    parts = {
        "li": np.concatenate([np.flatnonzero(a > 0) for a, _ in accept] + [fr["li"]]),
        "order": np.concatenate([np.full(int((a > 0).sum()), k) for k, (a, _) in enumerate(accept)]
                                + [np.full(len(q), len(accept))]),
        "method": np.concatenate([m[a > 0] for a, m in accept] + [fr["meth"].astype(object)]),
        "quantity": np.concatenate([a[a > 0] for a, _ in accept] + [q]),
        "result": np.concatenate([np.full(n_acc, "accept", dtype=object),
                                  np.array(["reject", "rework"], dtype=object)[fr["res"]]]),
        "defect": blank(np.array(DEFECTS, dtype=object)[fr["dfc"]]),
        "zone": blank(np.char.add("Z", (fr["zs"] + 1).astype(str)).astype(object)),
        "xray_category": blank(fr["cat"]),
        "severity": np.concatenate([np.zeros(n_acc, int), fr["sev"]]),
        "notes": blank(fr["notes"]),
    }
    order = np.lexsort((parts["order"], parts["li"]))
    p = {k: v[order] for k, v in parts.items()}
    return pd.DataFrame({
        "lot": lots.codes[p["li"]], "inspected_on": inspected[p["li"]].astype(str), "method": p["method"],
        "quantity": p["quantity"], "result": p["result"], "defect": p["defect"], "zone": p["zone"],
        "xray_category": p["xray_category"],
        "severity": np.where(p["severity"] > 0, p["severity"].astype(str), ""),
        "serial": "", "inspector": np.array(INSPECTORS)[lot_ins[p["li"]]], "notes": p["notes"]})


def generate_history(out_dir, lots: int = DEFAULT_LOTS, seed: int = SEED) -> dict:
    """Write the synthetic history's six CSV files into ``out_dir``.

    Returns the paths, the row counts, the last pour day and the ISO week to
    review. Same ``lots`` and ``seed`` give the same files.
    """
    out = pathlib.Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    last_day = _last_day()
    n_lots = int(lots)
    n_pat = max(MIN_PATTERNS, int(round(n_lots * PATTERNS_PER_LOT)))
    f = _foundry(rng, n_pat, last_day)
    poured = _lots(rng, n_lots, f, last_day)
    ins = _inspections(rng, f, poured, last_day)

    risers = f.risers
    risers_out = risers.assign(pattern=f.codes[risers["pattern_i"].to_numpy()],
                               effective_from=pd.to_datetime(risers["effective_from"]).dt.strftime("%Y-%m-%d"))
    risers_out = risers_out[["pattern", "revision", "effective_from", "riser", "zone", "placement", "top",
                             "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm"]]
    zones_out = f.zones.assign(pattern=f.codes[f.zones["zone_pattern"].to_numpy()],
                               required_xray_level=f.zones["required_xray_level"].replace(0, pd.NA).astype("Int64"))
    zones_out = zones_out[["pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm",
                           "required_xray_level"]]
    paths = {
        "patterns": _csv(out / "patterns.csv", f.patterns),
        "zones": _csv(out / "zones.csv", zones_out),
        "sleeves": _csv(out / "sleeves.csv", f.sleeves),
        "risers": _csv(out / "risers.csv", risers_out),
        "lots": _csv(out / "lots.csv", poured.frame),
        "inspections": _csv(out / "inspections.csv", ins),
    }
    review_day = last_day - dt.timedelta(weeks=REVIEW_WEEKS_BACK)
    y, w, _ = review_day.isocalendar()
    return {"paths": {k: str(v) for k, v in paths.items()},
            "rows": {"patterns": n_pat, "zones": len(zones_out), "sleeves": len(f.sleeves),
                     "risers": len(risers_out),
                     "revisions": len(risers[["pattern_i", "revision"]].drop_duplicates()),
                     "lots": n_lots, "inspections": len(ins)},
            "csv_mb": {k: round(os.path.getsize(v) / 2**20, 1) for k, v in paths.items()},
            "last_day": last_day.isoformat(), "review_week": f"{y}-W{w:02d}"}
