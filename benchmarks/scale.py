"""Scale benchmark: a large foundry's ten years of history.

``python -m benchmarks.scale [--lots N] [--json] [--keep DIR] [--backend postgresql
--pg-url URL]`` generates a
seeded synthetic history (patterns, zones, a sleeve catalogue, riser
revisions, lots and inspections, written as CSV in the import formats) and
measures, side by side in one run, each of the project's heavy paths against
a floor or a plain alternative:

- ``import``: ``tracker.log.ingest.import_file`` on the inspections CSV (the code
  path of ``pourback import``, after patterns, zones, sleeves, risers and lots
  are in) against the very rows the import wrote, written raw into an
  identical empty table (the same database before the import) in one
  transaction: one ``executemany`` on SQLite, one ``COPY`` on PostgreSQL;
- ``review_week``: ``weekly_review`` of one week (``weeks=1``) against its
  floor, ``Store.review_floor``: hand-written SELECTs fetching exactly the
  rows the review reads (the lots of its span, the review weeks and the week
  before them, with pattern and castings; their current inspection records;
  the riser revisions in force) into Python lists, with no computation. The
  old baseline, one SQL aggregate of the week's rejects per pattern
  (``Store.rejects_by_pattern``), is kept for information; ``review_13w``
  (the default window, for information) and ``review_52w`` (the 52-week
  trend) against their own floors, measured the same way;
- ``sizing``: ``size_risers`` against ``size_riser`` (scipy's brentq) in a
  Python loop, with the largest difference in diameter;
- ``fit_model``: ``fit_model`` on the whole history, on its own (it stores
  the model, as ``pourback fit-model`` does);
- ``suggestions``: ``suggest`` for every problem pattern with the stored
  model (fitted beforehand, as the dashboard uses it);
- ``thermal_solve``: one thermal solve at the default resolution (target 5 s,
  500 MB); ``thermal_suggestions``: the thermal check of every suggestion's
  proposed riser;
- ``dashboard_*``: first render and a rerun of the weekly review, design
  map and suggestions pages with Streamlit's AppTest, where those pages
  exist (the suggestions page with the stored model).

Each measure runs in a fresh child process (forked from a parent that holds
no data); its peak memory is that process's ``getrusage(RUSAGE_SELF).ru_maxrss``
read at its end, so it includes the interpreter and the imported libraries.

``--backend postgresql`` runs the measures that touch the log on a PostgreSQL
server (``--pg-url``, default $POURBACK_BENCH_PG, else $POURBACK_TEST_PG), each
database a fresh schema dropped at the end; sizing does not touch the log and is
measured on the SQLite run only.

The synthetic foundry is invented: every code, name and number in it is made
up. At N = 1,000,000 lots it pours about 3,000 patterns for ten years, about
100,000 lots a year, and logs about three inspection records per lot.
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import datetime as dt
import gc
import json
import multiprocessing as mp
import os
import pathlib
import platform
import resource
import shutil
import sqlite3
import statistics
import sys
import tempfile
import time

import numpy as np
import pandas as pd

BACKENDS = ("sqlite", "postgresql")
DEFAULT_LOTS = 20_000
FULL_LOTS = 1_000_000
SIZING_RISERS = 100_000
SEED = 2026
YEARS = 10
PATTERNS_PER_LOT = 0.003        # 3,000 patterns at 1,000,000 lots
MIN_PATTERNS = 20
LAST_DAY = dt.date(2026, 11, 27)  # a Friday; the history ends here (or yesterday, if earlier)
REVIEW_WEEKS_BACK = 2           # the reviewed week ends this many weeks before the last day

TARGETS = {  # name -> (kind, limit); "ratio_max": ours/baseline <= limit, "speedup_min", "seconds_max"
    "import": ("ratio_max", 2.0),
    "review_week": ("ratio_max", 2.5),
    "review_52w": ("ratio_max", 2.5),
    "sizing": ("speedup_min", 50.0),
    "fit_model": ("seconds_max", 30.0),
    "suggestions": ("seconds_max", 5.0),
    "thermal_solve": ("seconds_max", 5.0),
    "dashboard_review": ("seconds_max", 3.0),
    "dashboard_design_map": ("seconds_max", 3.0),
    "dashboard_suggestions": ("seconds_max", 3.0),
}
IMPORT_MEMORY_MB = 1024.0
THERMAL_MEMORY_MB = 500.0
SIZING_TOLERANCE_MM = 0.01

# --- the invented foundry ---------------------------------------------------------------

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


def _design_rows(rng, n_pat, alloy, zones_per, last_day):
    """Zones, risers (one per zone, one or two revisions) and each riser's shortfall."""
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

    # Designs: most risers sound; some patterns have one undersized riser; a few a gas problem.
    kind = rng.choice(3, n_pat, p=[0.88, 0.08, 0.04])        # 0 sound, 1 undersized riser, 2 gas
    bad_slot = (rng.random(n_pat) * zones_per).astype(int)
    undersized = (kind[zp] == 1) & (slot == bad_slot[zp])
    factor = np.where(undersized, rng.uniform(0.70, 0.88, nz), rng.uniform(1.0, 1.25, nz))
    d = np.where(factor >= 1.0, _ceil_to(need * factor, 10.0), np.round(need * factor / 10.0) * 10.0)
    d = np.maximum(d, 30.0)
    sleeves = pd.DataFrame(SLEEVES, columns=["sleeve", "kind", "inner_diameter_mm", "height_mm",
                                             "modulus_factor", "feeding_efficiency", "unit_cost"])
    # A sleeved riser: the smallest catalogue sleeve wide enough for the bare need over its factor.
    sleeved = ~undersized & (rng.random(nz) < 0.15)
    want = need / sleeves["modulus_factor"].min() * 1.05
    pick = np.searchsorted(sleeves.sort_values("inner_diameter_mm")["inner_diameter_mm"].to_numpy(), want)
    by_d = sleeves.sort_values("inner_diameter_mm").reset_index(drop=True)
    sleeved &= pick < len(by_d)
    pick = np.minimum(pick, len(by_d) - 1)
    sleeve_code = np.where(sleeved, by_d["sleeve"].to_numpy()[pick], "")
    f = np.where(sleeved, by_d["modulus_factor"].to_numpy()[pick], 1.0)
    d = np.where(sleeved, by_d["inner_diameter_mm"].to_numpy()[pick], d)
    h = np.where(sleeved, by_d["height_mm"].to_numpy()[pick], _ceil_to(d * hd, 10.0))
    mc = vol / area
    neck = _ceil_to(4.0 * 1.1 * mc * 10.0, 5.0)
    neck = np.where(~top & (neck < d), neck, np.nan)
    # The synthetic reject law's input (invented, not a rule of the trade): how far the
    # riser falls short of the size the rules need, a sleeve counting as sqrt(f) wider.
    shortfall = np.maximum(0.0, 1.0 - d * np.sqrt(f) / need)

    rev1 = np.datetime64(last_day) - np.timedelta64(YEARS * 365, "D") - rng.integers(30, 400, n_pat)
    # Revision 2: most undersized risers get fixed some time in the history (a share in the
    # last half-year, so reviews have before/after comparisons); a few sound patterns get a
    # small change.
    span = YEARS * 365
    fix = (kind == 1) & (rng.random(n_pat) < 0.6)
    tweak = (kind != 1) & (rng.random(n_pat) < 0.08)
    days_back = np.where(rng.random(n_pat) < 0.3, rng.integers(20, 180, n_pat), rng.integers(20, span, n_pat))
    rev2 = np.where(fix | tweak, np.datetime64(last_day) - days_back.astype("timedelta64[D]"),
                    np.datetime64("NaT"))
    base = dict(pattern_i=zp, zone=zones["zone"].to_numpy(), placement=np.where(top, "top", "side"),
                top=np.where(top, rng.choice(["open", "blind"], nz), "blind"))
    r1 = pd.DataFrame({**base, "revision": "1", "effective_from": rev1[zp], "riser": [f"R{k + 1}" for k in slot],
                       "diameter_mm": d, "height_mm": h, "sleeve": sleeve_code, "neck_diameter_mm": neck})
    r1["_shortfall"] = shortfall
    has2 = ~np.isnat(rev2)[zp]
    r2 = r1[has2].copy()
    r2["revision"] = "2"
    r2["effective_from"] = rev2[zp][has2]
    changed = (undersized | ((kind[zp] != 1) & (slot == 0)))[has2]
    grow = np.where(undersized[has2], _ceil_to(need[has2] * 1.1, 10.0), d[has2] + 10.0)
    bare = r2["sleeve"].to_numpy() == ""
    newd = np.where(changed & bare, grow, r2["diameter_mm"].to_numpy())
    r2["diameter_mm"] = newd
    r2["height_mm"] = np.where(changed & bare, _ceil_to(newd * hd[has2], 10.0), r2["height_mm"].to_numpy())
    r2["_shortfall"] = np.where(changed & bare, 0.0, r2["_shortfall"].to_numpy())
    nk = r2["neck_diameter_mm"].to_numpy()
    r2["neck_diameter_mm"] = np.where(nk < newd, nk, np.nan)
    risers = pd.concat([r1, r2], ignore_index=True)
    return zones, sleeves, risers, kind, rev2


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

    # patterns
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

    # lots: working days over ten years, busy patterns poured more often
    first = np.datetime64(last_day) - np.timedelta64(YEARS * 365, "D")
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
    lots_df = pd.DataFrame({"lot": lot_codes, "pattern": codes[lp], "poured_on": poured.astype(str),
                            "heat": heats, "molds": molds, "pour_temp_c": temp.astype(np.int64)})

    # inspections
    castings = molds * cpm[lp]
    inspected = poured + rng.integers(1, 8, n_lots).astype("timedelta64[D]")
    seen = inspected <= np.datetime64(last_day)              # the newest lots await inspection
    zmax = int(zones_per.max())
    first_zone = np.concatenate([[0], np.cumsum(zones_per)[:-1]])
    # the revision in effect: 2 from its date on
    r2 = risers[risers["revision"] == "2"].groupby("pattern_i")["effective_from"].first()
    rev2 = np.full(n_pat, np.datetime64("NaT"), dtype="datetime64[D]")
    rev2[r2.index.to_numpy()] = r2.to_numpy().astype("datetime64[D]")
    on2 = ~np.isnat(rev2[lp]) & (poured >= rev2[lp])
    short = np.zeros((2, len(zones)))
    r1m = risers["revision"] == "1"
    zone_row = first_zone[risers["pattern_i"].to_numpy()] + risers["zone"].str[1:].astype(int).to_numpy() - 1
    short[0, zone_row[r1m.to_numpy()]] = risers.loc[r1m, "_shortfall"].to_numpy()
    short[1] = short[0]
    short[1, zone_row[~r1m.to_numpy()]] = risers.loc[~r1m, "_shortfall"].to_numpy()
    slots = np.arange(zmax)
    valid = slots[None, :] < zones_per[lp][:, None]
    zidx = np.where(valid, first_zone[lp][:, None] + slots[None, :], 0)
    s = short[on2.astype(int)[:, None], zidx]
    dtemp = temp - np.array(POUR_TEMP)[alloy[lp]]
    rate = (BASE_SHRINKAGE + EXCESS_SHRINKAGE * s * s / (s * s + SHORTFALL_SCALE ** 2)) \
        * np.exp(0.25 * dtemp / 20.0)[:, None] * rng.gamma(8.0, 1 / 8.0, (n_lots, zmax))
    shrink = np.where(valid, rng.binomial(castings[:, None], np.minimum(rate, 0.5)), 0)
    bg_rate = BACKGROUND[alloy[lp]] * rng.uniform(0.6, 1.4, n_pat)[lp][:, None]
    gas = kind[lp] == 2
    bg_rate[gas, 0] = GAS_PROBLEM_RATE
    bg = rng.binomial(castings[:, None], bg_rate)
    bg_zone = (rng.random((n_lots, bg.shape[1])) * zones_per[lp][:, None]).astype(int)
    counts = np.concatenate([shrink, bg], axis=1)            # (lots, zmax + 9)
    cap = np.minimum(np.cumsum(counts, axis=1), castings[:, None])
    counts = np.diff(np.concatenate([np.zeros((n_lots, 1), dtype=cap.dtype), cap], axis=1), axis=1)
    counts[~seen] = 0
    defect = np.concatenate([np.zeros(zmax, dtype=int), np.arange(1, len(DEFECTS))])
    zslot = np.concatenate([np.broadcast_to(slots, (n_lots, zmax)), bg_zone], axis=1)
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
    la = alloy[lp[li]]
    method_tab = np.array([DEFECT_METHOD[k] for k in ALLOY_KEYS])
    meth = method_tab[la, dfc]
    xray = meth == "xray"
    cat = np.full(len(q), "", dtype=object)
    cat[xray & (dfc == 0)] = np.array(SHRINKAGE_CATEGORIES)[rng.integers(0, 4, int((xray & (dfc == 0)).sum()))]
    for name, c in XRAY_CATEGORY.items():
        cat[xray & (dfc == DEFECTS.index(name))] = c
    zone_level = zones["required_xray_level"].to_numpy()[first_zone[lp[li]] + zs]
    lvl = np.where(zone_level > 0, zone_level, 2)
    graded = xray & ~np.isin(cat, ["D", "E"])
    sev = np.where(graded, lvl + 1 + (rng.random(len(q)) * (5 - lvl)).astype(int), 0)
    notes = np.where(rng.random(len(q)) < 0.2, np.array(NOTES, dtype=object)[rng.integers(0, len(NOTES), len(q))], "")
    # accept rows: visual and the alloy's second method, each of the castings that method did not fault
    m_vis = np.bincount(li[meth == "visual"], q[meth == "visual"], n_lots).astype(np.int64)
    second = np.array(SECOND_METHOD)[alloy[lp]]
    is_second = meth == second[li]
    m_sec = np.bincount(li[is_second], q[is_second], n_lots).astype(np.int64)
    acc_vis = np.where(seen, castings - m_vis, 0)
    acc_sec = np.where(seen, castings - m_sec, 0)
    # a dimensional first-off check of one to three castings on about half the lots
    m_dim = np.bincount(li[meth == "dimensional"], q[meth == "dimensional"], n_lots).astype(np.int64)
    acc_dim = np.where(seen & (rng.random(n_lots) < 0.55),
                       np.minimum(rng.integers(1, 4, n_lots), castings - m_dim), 0)
    lot_ins = rng.integers(0, len(INSPECTORS), n_lots)
    accept = [(acc_vis, np.full(n_lots, "visual", dtype=object)), (acc_sec, second.astype(object)),
              (acc_dim, np.full(n_lots, "dimensional", dtype=object))]
    n_acc = sum(int((a > 0).sum()) for a, _ in accept)

    def blank(values):
        return np.concatenate([np.full(n_acc, "", dtype=object), values])

    parts = {
        "li": np.concatenate([np.flatnonzero(a > 0) for a, _ in accept] + [li]),
        "order": np.concatenate([np.full(int((a > 0).sum()), k) for k, (a, _) in enumerate(accept)]
                                + [np.full(len(q), len(accept))]),
        "method": np.concatenate([m[a > 0] for a, m in accept] + [meth.astype(object)]),
        "quantity": np.concatenate([a[a > 0] for a, _ in accept] + [q]),
        "result": np.concatenate([np.full(n_acc, "accept", dtype=object),
                                  np.array(["reject", "rework"], dtype=object)[res]]),
        "defect": blank(np.array(DEFECTS, dtype=object)[dfc]),
        "zone": blank(np.char.add("Z", (zs + 1).astype(str)).astype(object)),
        "xray_category": blank(cat),
        "severity": np.concatenate([np.zeros(n_acc, int), sev]),
        "notes": blank(notes),
    }
    order = np.lexsort((parts["order"], parts["li"]))
    p = {k: v[order] for k, v in parts.items()}
    ins = pd.DataFrame({
        "lot": lot_codes[p["li"]], "inspected_on": inspected[p["li"]].astype(str), "method": p["method"],
        "quantity": p["quantity"], "result": p["result"], "defect": p["defect"], "zone": p["zone"],
        "xray_category": p["xray_category"],
        "severity": np.where(p["severity"] > 0, p["severity"].astype(str), ""),
        "serial": "", "inspector": np.array(INSPECTORS)[lot_ins[p["li"]]], "notes": p["notes"]})

    risers_out = risers.assign(pattern=codes[risers["pattern_i"].to_numpy()],
                               effective_from=pd.to_datetime(risers["effective_from"]).dt.strftime("%Y-%m-%d"))
    risers_out = risers_out[["pattern", "revision", "effective_from", "riser", "zone", "placement", "top",
                             "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm"]]
    zones_out = zones.assign(pattern=codes[zones["zone_pattern"].to_numpy()],
                             required_xray_level=zones["required_xray_level"].replace(0, pd.NA).astype("Int64"))
    zones_out = zones_out[["pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm",
                           "required_xray_level"]]
    paths = {
        "patterns": _csv(out / "patterns.csv", patterns),
        "zones": _csv(out / "zones.csv", zones_out),
        "sleeves": _csv(out / "sleeves.csv", sleeves),
        "risers": _csv(out / "risers.csv", risers_out),
        "lots": _csv(out / "lots.csv", lots_df),
        "inspections": _csv(out / "inspections.csv", ins),
    }
    review_day = last_day - dt.timedelta(weeks=REVIEW_WEEKS_BACK)
    y, w, _ = review_day.isocalendar()
    return {"paths": {k: str(v) for k, v in paths.items()},
            "rows": {"patterns": n_pat, "zones": len(zones_out), "sleeves": len(sleeves),
                     "risers": len(risers_out),
                     "revisions": len(risers[["pattern_i", "revision"]].drop_duplicates()),
                     "lots": n_lots, "inspections": len(ins)},
            "csv_mb": {k: round(os.path.getsize(v) / 2**20, 1) for k, v in paths.items()},
            "last_day": last_day.isoformat(), "review_week": f"{y}-W{w:02d}"}


# --- running measures apart ------------------------------------------------------------

def _peak_mb() -> float:
    """This process's peak resident memory so far, MB (ru_maxrss is KB on Linux, bytes on macOS)."""
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / 2**20 if sys.platform == "darwin" else peak / 1024.0


# What each child process does, for the step status ``main`` shows on a terminal.
STEP_LABELS = {"_c_generate": "generating the synthetic history", "_c_setup": "importing patterns .. lots",
               "_c_import": "import (ours)", "_c_import_floor": "import floor (executemany)",
               "_c_review": "weekly review against its floor", "_c_sizing": "sizing",
               "_c_fit": "fitting the model", "_c_suggest": "suggestions", "_c_dashboard": "dashboard page"}
_STEPS = None  # a tracker.cli.steps.Steps while main() runs on a terminal


def _in_child(fn, *args, **kwargs):
    """Run ``fn`` in a fresh child process and return its result.

    Forked where possible (the parent holds no data, so the child starts with
    only the interpreter and the imported libraries), else spawned.
    """
    if _STEPS is not None:
        detail = {"_c_review": lambda: f" ({args[2]} weeks)",
                  "_c_dashboard": lambda: f" ({pathlib.Path(args[1]).stem})"}.get(fn.__name__, lambda: "")()
        _STEPS.step(STEP_LABELS.get(fn.__name__, fn.__name__) + detail)
    method = "fork" if "fork" in mp.get_all_start_methods() else "spawn"
    with cf.ProcessPoolExecutor(max_workers=1, mp_context=mp.get_context(method)) as ex:
        return ex.submit(fn, *args, **kwargs).result()


def _timed(fn, *args, **kwargs):
    t = time.perf_counter()
    out = fn(*args, **kwargs)
    return time.perf_counter() - t, out


# --- the child processes ----------------------------------------------------------------

def _c_generate(out_dir: str, lots: int, seed: int) -> dict:
    secs, summary = _timed(generate_history, out_dir, lots, seed)
    return {**summary, "generate_s": secs, "peak_rss_mb": _peak_mb()}


def _c_setup(db: str, paths: dict) -> dict:
    from tracker.log.ingest import import_files
    from tracker.log.store import Store

    with Store(db) as store:
        items = [(k, paths[k]) for k in ("patterns", "zones", "sleeves", "risers", "lots")]
        secs, _ = _timed(import_files, store, items)
    return {"setup_s": secs, "peak_rss_mb": _peak_mb()}


def _c_import(db: str, path: str) -> dict:
    from tracker.log.ingest import import_file
    from tracker.log.store import Store

    before = _peak_mb()
    with Store(db) as store:
        secs, result = _timed(import_file, store, "inspections", path)
    return {"seconds": secs, "added": result.added, "refused": result.refused,
            "rss_before_mb": before, "peak_rss_mb": _peak_mb()}


def _c_import_floor(src_db: str, floor_db: str) -> dict:
    """The floor: the rows the import wrote, already in memory, into an identical empty table."""
    from tracker.log.store import Store

    rows = []
    memo: dict = {}
    with Store(src_db) as src:
        for batch in src.iter_rows("inspections"):
            # Share repeated values (as parsed text would) so the floor does not need gigabytes.
            rows.extend(tuple(v if j == 12 else memo.setdefault(v, v) for j, v in enumerate(r)) for r in batch)
    memo.clear()
    before = _peak_mb()
    with Store(floor_db) as floor:
        t = time.perf_counter()
        with floor.write():
            floor.insert_rows_alone("inspections", rows)
        secs = time.perf_counter() - t
        stored = floor.count("inspections")
    return {"seconds": secs, "rows": len(rows), "stored": stored, "rss_before_mb": before,
            "peak_rss_mb": _peak_mb()}


def _plans(store, calls) -> list[dict]:
    """The SQL each call ran (caught at the dialect's ``execute``), named by the
    Store method that ran it, with the database's query plan."""
    seen: dict = {}
    run_sql = store.dialect.execute

    def trace(sql, params=()):
        record(sql, tuple(params))
        return run_sql(sql, params)

    def record(sql, params):
        f = sys._getframe(2)
        while f is not None and not (f.f_code.co_filename.endswith(os.path.join("tracker", "store.py"))
                                     and not f.f_code.co_name.startswith(("_", "<"))):
            f = f.f_back
        name = f.f_code.co_name if f is not None else "?"
        if sql.lstrip().upper().startswith(("SELECT", "WITH")):
            seen.setdefault(name, []).append((sql, params))

    store.dialect.execute = trace
    try:
        for call in calls:
            call()
    finally:
        del store.dialect.execute
    out = []
    for name, statements in seen.items():
        plans = []
        for sql, params in statements:
            plan = store.query_plan(sql, params)
            if plan not in plans:
                plans.append(plan)
        out += [{"query": name, "plan": plan} for plan in plans]
    return out


def _c_review(db: str, week: str, weeks: int, repeats: int, extras: bool = False) -> dict:
    """The review of ``weeks`` weeks against its floor, paired run by run (median of
    ``repeats``). ``extras``: also the old single-aggregate baseline and the query plans."""
    from tracker.log.store import Store
    from tracker.review import stats
    from tracker.review.weekly import revision_probes, weekly_review

    monday = stats.week_start(week)
    # the span the review reads: its weeks and the week before them (for "what changed")
    start = (monday - dt.timedelta(weeks=weeks)).isoformat()
    end = (monday + dt.timedelta(days=6)).isoformat()
    out: dict = {"week": week, "weeks": weeks}
    with Store(db, create=False) as store:
        first_ours, review = _timed(weekly_review, store, week=week, weeks=weeks)
        first_floor, rows = _timed(store.review_floor, start, end)
        ours, floor, floor_no_gc = [], [], []
        for _ in range(repeats):
            ours.append(_timed(weekly_review, store, week=week, weeks=weeks)[0])
            floor.append(_timed(store.review_floor, start, end)[0])
            # the review pauses the garbage collector while it builds its output; the
            # floor the same way, for information (creating its tuples sets off collections too)
            gc.disable()
            try:
                floor_no_gc.append(_timed(store.review_floor, start, end)[0])
            finally:
                gc.enable()
        # For information, the floor with what judging riser revisions reads besides: the
        # running totals of each revision under judgement at its span's edges.
        probes, zone_probes = revision_probes(store, week, weeks)

        def floor_and_totals():
            store.review_floor(start, end)
            store.totals_and_zones_before(probes, zone_probes)

        floor_tot = [_timed(floor_and_totals)[0] for _ in range(repeats)]
        out["baseline_with_totals_s"] = statistics.median(floor_tot)
        out["ratio_to_floor_with_totals"] = statistics.median(ours) / statistics.median(floor_tot)
        out["totals_rows"] = len(probes) + len(zone_probes)
        out.update({"ours_s": statistics.median(ours), "baseline_s": statistics.median(floor),
                    "baseline_gc_paused_s": statistics.median(floor_no_gc),
                    "ratio_to_gc_paused_floor": statistics.median(ours) / statistics.median(floor_no_gc),
                    "ours_runs_s": ours, "baseline_runs_s": floor, "first_ours_s": first_ours,
                    "first_baseline_s": first_floor, "baseline": "Store.review_floor",
                    "floor_rows": {k: len(v) for k, v in rows.items()},
                    "patterns": len(review["patterns"]), "problems": len(review["problems"]),
                    "trend_weeks": len(review["trend"]["overall"])})
        if extras:
            wk_start, wk_end = monday.isoformat(), end
            agg_first, agg = _timed(store.rejects_by_pattern, wk_start, wk_end)
            agg_runs = [_timed(store.rejects_by_pattern, wk_start, wk_end)[0] for _ in range(repeats)]
            got = {p["pattern"]: p["rejected"] for p in review["patterns"] if p["rejected"] and weeks == 1}
            want = {p: int(q) for p, q in zip(agg["pattern"], agg["rejected"], strict=False) if q}
            out["aggregate_s"] = statistics.median(agg_runs)
            out["aggregate_ratio"] = out["ours_s"] / out["aggregate_s"] if out["aggregate_s"] else None
            out["aggregate_note"] = ("the old baseline, for information: one SQL aggregate of the week's "
                                     "rejects per pattern (Store.rejects_by_pattern)")
            out["agrees_with_baseline"] = got == want
            out["plans"] = _plans(store, [lambda: weekly_review(store, week=week, weeks=weeks),
                                          lambda: weekly_review(store, week=week, weeks=52)])
    out["peak_rss_mb"] = _peak_mb()
    return out


def _sizing_inputs(n: int, seed: int):
    from tracker.design import geometry

    rng = np.random.default_rng(seed + 1)
    alloys = np.array(["steel", "aluminum", "gray_iron", "aluminum_bronze"])[rng.integers(0, 4, n)]
    vol = np.exp(rng.uniform(np.log(50.0), np.log(50_000.0), n))
    sphere_m = geometry.sphere_modulus(np.cbrt(6.0 * vol / np.pi))
    area = vol / (sphere_m * rng.uniform(0.3, 0.9, n))
    placement = np.where(rng.random(n) < 0.5, "top", "side")
    hd = np.round(rng.uniform(0.5, 3.0, n), 2)
    f = np.where(rng.random(n) < 0.4, np.round(rng.uniform(1.1, 1.5, n), 2), 1.0)
    return alloys, vol, area, placement, hd, f


def _c_sizing(n: int, seed: int, repeats: int) -> dict:
    from tracker.design.sizing import size_riser, size_risers

    alloys, vol, area, placement, hd, f = _sizing_inputs(n, seed)

    def ours():
        d = np.empty(n)
        for a in np.unique(alloys):
            m = alloys == a
            d[m] = size_risers(vol[m], area[m], str(a), placement[m], hd[m], f[m])["diameter_mm"]
        return d

    def baseline():
        return np.array([size_riser(float(v), float(s), str(a), str(p), float(h), float(k)).diameter_mm
                         for a, v, s, p, h, k in zip(alloys, vol, area, placement, hd, f, strict=False)])

    ours()  # warm-up (imports, first allocation)
    runs = []
    for _ in range(repeats):
        secs, d_ours = _timed(ours)
        runs.append(secs)
    base_s, d_base = _timed(baseline)
    return {"ours_s": statistics.median(runs), "baseline_s": base_s, "ours_runs_s": runs, "risers": n,
            "max_abs_diff_mm": float(np.max(np.abs(d_ours - d_base))), "peak_rss_mb": _peak_mb()}


def _c_fit(db: str) -> dict:
    from tracker.advice.suggest import fit_model
    from tracker.log.store import Store

    with Store(db, create=False) as store:
        secs, model = _timed(fit_model, store)
    return {"ours_s": secs, "rows": int(model.n_rows_), "castings": int(model.n_castings_),
            "peak_rss_mb": _peak_mb()}


def _c_suggest(db: str, week: str) -> dict:
    from tracker.advice.suggest import get_model, suggest
    from tracker.log.store import Store

    with Store(db, create=False) as store:
        load_s, model = _timed(get_model, store)  # the stored model (fitted by _c_fit)
        secs, out = _timed(suggest, store, week=week, model=model, thermal=False)
    return {"ours_s": secs + load_s, "model_load_s": load_s, "suggestions": len(out),
            "problem_patterns": len({s["pattern"] for s in out}),
            "riser_changes": sum(1 for s in out if s.get("action") != "no_riser_change"),
            "peak_rss_mb": _peak_mb()}


def _c_thermal_solve() -> dict:
    from tracker.thermal import ThermalCase, run

    # the README's worked example: a 155 mm top riser on a 300 x 300 x 50 mm steel plate
    case = ThermalCase("steel", "top", 50.0, 300.0, 300.0, 155.0, 155.0)
    secs, r = _timed(run, case, keep_maps=False)
    return {"ours_s": secs, "cells": r.cells, "grid": list(r.grid), "time_step_s": r.time_step_s,
            "steps": r.steps, "thermal_ok": r.thermal_ok, "peak_rss_mb": _peak_mb()}


def _c_thermal_suggestions(db: str, week: str) -> dict:
    from tracker.advice.suggest import get_model, suggest
    from tracker.log.store import Store
    from tracker.thermal.checks import check_suggestions, solve_case

    with Store(db, create=False) as store:
        model = get_model(store)
        found = suggest(store, week=week, model=model, thermal=False)
        solve_case.cache_clear()  # every proposed riser solved here, none reused
        secs, checks = _timed(check_suggestions, store, found)
        solve_case.cache_clear()
        with_s, _ = _timed(suggest, store, week=week, model=model, thermal=True)
    done = [c for c in checks if c is not None]
    return {"ours_s": secs, "suggestions": len(found), "solves": len(done),
            "thermal_ok": sum(c["thermal_ok"] for c in done),
            "per_solve_s": secs / len(done) if done else None, "suggest_with_thermal_s": with_s,
            "peak_rss_mb": _peak_mb()}


def _dashboard_pages() -> dict:
    """The weekly review and design map page files, where they exist."""
    root = pathlib.Path(__file__).resolve().parents[1] / "dashboard"
    files = [p for p in root.rglob("*.py") if p.name not in ("__init__.py", "common.py", "charts.py")]
    found = {}
    for p in sorted(files):
        stem = p.stem.lower()
        if "review" in stem and "dashboard_review" not in found:
            found["dashboard_review"] = p
        elif "design" in stem and "map" in stem and "dashboard_design_map" not in found:
            found["dashboard_design_map"] = p
        elif "suggest" in stem and "dashboard_suggestions" not in found:
            found["dashboard_suggestions"] = p
    return found


def _c_dashboard(db: str, page: str, warm: bool = False) -> dict:
    """First render and rerun of one page. ``warm``: import the libraries a
    page needs before the clock starts, as a running dashboard has (the
    render then counts the page's own work)."""
    os.environ["POURBACK_DB"] = db
    from streamlit import logger as st_logger
    from streamlit.testing.v1 import AppTest

    st_logger.set_log_level("error")  # no "bare mode" warnings in the middle of the report
    if warm:
        import altair  # noqa: F401

        import tracker.advice.suggest  # noqa: F401
        import tracker.review.weekly  # noqa: F401
        import tracker.views  # noqa: F401

    at = AppTest.from_file(page, default_timeout=900)
    first, _ = _timed(at.run)
    errors = [str(e.value) for e in at.exception]
    rerun, _ = _timed(at.run)
    errors += [str(e.value) for e in at.exception]
    return {"first_s": first, "rerun_s": rerun, "errors": errors[:3], "peak_rss_mb": _peak_mb()}


# --- the benchmark ------------------------------------------------------------------------

def machine() -> dict:
    """Cores, memory, CPU model and the versions the figures depend on."""
    info = {"cores": os.cpu_count(), "platform": platform.platform(),
            "python": platform.python_version(), "sqlite": sqlite3.sqlite_version,
            "numpy": np.__version__, "pandas": pd.__version__}
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            info["cpu"] = next((ln.split(":", 1)[1].strip() for ln in fh if ln.startswith("model name")), None)
    except OSError:
        info["cpu"] = platform.processor() or None
    try:
        with open("/proc/meminfo", encoding="utf-8") as fh:
            kb = next(int(ln.split()[1]) for ln in fh if ln.startswith("MemTotal"))
        info["ram_gb"] = round(kb / 2**20, 1)
    except (OSError, StopIteration):
        info["ram_gb"] = None
    return info


def _measure(name: str, ours_s=None, baseline_s=None, peak_rss_mb=None, **extra) -> dict:
    kind, limit = TARGETS.get(name, (None, None))
    ratio = None
    if ours_s is not None and baseline_s:
        ratio = baseline_s / ours_s if kind == "speedup_min" else ours_s / baseline_s
    text = None if kind is None else {"ratio_max": f"ours/baseline <= {limit:g}",
                                      "speedup_min": f"baseline/ours >= {limit:g}",
                                      "seconds_max": f"ours < {limit:g} s"}[kind]
    met = None
    if ours_s is not None and kind == "ratio_max":
        met = ratio is not None and ratio <= limit
    elif ours_s is not None and kind == "speedup_min":
        met = ratio is not None and ratio >= limit
    elif ours_s is not None and kind == "seconds_max":
        met = ours_s < limit
    return {"name": name, "ours_s": ours_s, "baseline_s": baseline_s, "ratio": ratio,
            "ratio_kind": "baseline/ours" if kind == "speedup_min" else ("ours/baseline" if baseline_s else None),
            "target": text, "met": met, "peak_rss_mb": peak_rss_mb, **extra}


def _c_version(db: str) -> str:
    from tracker.log.store import Store

    with Store(db) as store:
        return store.server_version()


def run(lots: int = DEFAULT_LOTS, *, keep: str | os.PathLike | None = None, seed: int = SEED,
        sizing_risers: int = SIZING_RISERS, repeats: int = 5, dashboard: bool = True,
        backend: str = "sqlite", pg_url: str | None = None) -> dict:
    """Generate the history and run every measure; returns the report (JSON-ready).

    ``keep``: a folder to keep the CSV files and databases in (default a
    temporary folder, removed at the end; on PostgreSQL the schemas are kept
    too). ``backend``: "sqlite" or "postgresql" (on the server at ``pg_url``).
    """
    from tracker.log.store import drop_schema, new_schema

    if backend not in BACKENDS:
        raise ValueError(f"backend: got {backend!r}; use one of {', '.join(BACKENDS)}")
    if backend == "postgresql" and not pg_url:
        raise ValueError("backend postgresql needs a server: give pg_url (a postgresql:// URL)")
    t_start = time.perf_counter()
    work = pathlib.Path(keep) if keep else pathlib.Path(tempfile.mkdtemp(prefix="pourback-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    csv_dir = work / "csv"
    schemas: list[str] = []
    if backend == "sqlite":
        base_db, ours_db, floor_db = (str(work / "base.db"), str(work / "log.db"), str(work / "floor.db"))
        for p in (base_db, ours_db, floor_db):
            for q in (p, f"{p}-wal", f"{p}-shm"):
                pathlib.Path(q).unlink(missing_ok=True)
    else:
        tag = f"bench_{os.getpid()}"
        schemas = [f"{tag}_log", f"{tag}_floor"]
        base_db = None
        ours_db, floor_db = (new_schema(pg_url, s) for s in schemas)
    try:
        gen = _in_child(_c_generate, str(csv_dir), int(lots), int(seed))
        if backend == "sqlite":
            setup = _in_child(_c_setup, base_db, gen["paths"])
            shutil.copyfile(base_db, ours_db)
            shutil.copyfile(base_db, floor_db)  # the identical empty table (and the lots it references)
        else:
            setup = _in_child(_c_setup, ours_db, gen["paths"])
            _in_child(_c_setup, floor_db, gen["paths"])  # the identical empty table and its lots
        database = _in_child(_c_version, ours_db)
        measures = []

        ours = _in_child(_c_import, str(ours_db), gen["paths"]["inspections"])
        floor = _in_child(_c_import_floor, str(ours_db), str(floor_db))
        m = _measure("import", ours["seconds"], floor["seconds"], ours["peak_rss_mb"],
                     baseline_peak_rss_mb=floor["peak_rss_mb"], rss_before_mb=ours["rss_before_mb"],
                     rows=floor["rows"], added=ours["added"], refused=ours["refused"],
                     memory_target=f"peak RSS < {IMPORT_MEMORY_MB:g} MB",
                     memory_measured_by="getrusage(RUSAGE_SELF).ru_maxrss of the child process that ran "
                                        "import_file (interpreter and libraries included)")
        m["met_ratio"] = m["met"]
        m["met_memory"] = ours["peak_rss_mb"] < IMPORT_MEMORY_MB
        m["met"] = bool(m["met_ratio"] and m["met_memory"])
        measures.append(m)

        plans = []
        for name, weeks in (("review_week", 1), ("review_13w", 13), ("review_52w", 52)):
            rv = _in_child(_c_review, str(ours_db), gen["review_week"], weeks,
                           int(repeats) if weeks == 1 else max(1, int(repeats) // 2), weeks == 1)
            plans = rv.pop("plans", plans)
            measures.append(_measure(name, **rv))

        if backend == "sqlite":
            sz = _in_child(_c_sizing, int(sizing_risers), int(seed), int(repeats))
            m = _measure("sizing", sz.pop("ours_s"), sz.pop("baseline_s"), sz.pop("peak_rss_mb"),
                         tolerance_mm=SIZING_TOLERANCE_MM, **sz)
            m["met"] = bool(m["met"] and m["max_abs_diff_mm"] <= SIZING_TOLERANCE_MM)
            measures.append(m)
        else:
            measures.append(_measure("sizing", not_measured="does not touch the log; see the SQLite run"))

        ft = _in_child(_c_fit, str(ours_db))
        measures.append(_measure("fit_model", ft.pop("ours_s"), None, ft.pop("peak_rss_mb"),
                                 note="fit_model on the whole history, stored in the log", **ft))
        sg = _in_child(_c_suggest, str(ours_db), gen["review_week"])
        measures.append(_measure("suggestions", sg.pop("ours_s"), None, sg.pop("peak_rss_mb"),
                                 note="suggest for every problem pattern of the review week's 13-week "
                                      "window with the stored model (loading it included)", **sg))

        th = _in_child(_c_thermal_solve)
        m = _measure("thermal_solve", th.pop("ours_s"), None, th.pop("peak_rss_mb"),
                     memory_target=f"peak RSS < {THERMAL_MEMORY_MB:g} MB",
                     note="one thermal solve at the default resolution (README's worked example)", **th)
        m["met"] = bool(m["met"] and m["peak_rss_mb"] < THERMAL_MEMORY_MB)
        measures.append(m)
        ts = _in_child(_c_thermal_suggestions, str(ours_db), gen["review_week"])
        measures.append(_measure("thermal_suggestions", ts.pop("ours_s"), None, ts.pop("peak_rss_mb"),
                                 note="the thermal check of every suggestion's proposed riser, each "
                                      "solved afresh (suggest itself not timed)", **ts))

        pages = _dashboard_pages() if dashboard else {}
        for name in ("dashboard_review", "dashboard_design_map", "dashboard_suggestions"):
            if name not in pages:
                measures.append(_measure(name, not_measured="no dashboard pages" if dashboard
                                         else "dashboard measures switched off"))
                continue
            first = name == "dashboard_suggestions"  # its target is the first render, stored model
            d = _in_child(_c_dashboard, str(ours_db), str(pages[name]), first)
            m = _measure(name, d["first_s"] if first else d["rerun_s"], None, d["peak_rss_mb"],
                         first_s=d["first_s"], rerun_s=d["rerun_s"],
                         page=str(pages[name].relative_to(pages[name].parents[1])), errors=d["errors"],
                         note="ours_s is the first render with the stored model, libraries imported "
                              "beforehand as in a running dashboard" if first else
                              "ours_s is the rerun (pages cache their loads on the database file); "
                              "first_s is the first render")
            if d["errors"]:
                m["met"] = False
            measures.append(m)
    finally:
        if not keep:
            shutil.rmtree(work, ignore_errors=True)
            for s in schemas:
                drop_schema(pg_url, s)
    return {
        "benchmark": "pourback scale", "lots": int(lots), "seed": int(seed), "backend": backend,
        "database": database, "machine": machine(),
        "data": {"rows": gen["rows"], "csv_mb": gen["csv_mb"], "last_day": gen["last_day"],
                 "review_week": gen["review_week"], "generate_s": gen["generate_s"],
                 "setup_import_s": setup["setup_s"],
                 "kept_in": str(work) if keep else None,
                 "schemas": schemas if keep else []},
        "measures": measures,
        "query_plans": plans,
        "total_s": time.perf_counter() - t_start,
    }


def _fmt_s(v) -> str:
    if v is None:
        return "-"
    return f"{v * 1000:.1f} ms" if v < 1 else f"{v:.2f} s"


def format_report(report: dict) -> str:
    """The report as text: machine, data, one line per measure, query plans."""
    m = report["machine"]
    d = report["data"]
    lines = [f"Pourback scale benchmark: {report['lots']:,} lots (seed {report['seed']}), "
             f"log on {report['database']}",
             f"machine: {m.get('cpu')}, {m['cores']} cores, {m.get('ram_gb')} GB RAM; Python {m['python']}",
             "data: " + ", ".join(f"{v:,} {k}" for k, v in d["rows"].items())
             + f"; inspections.csv {d['csv_mb']['inspections']} MB; generated in {_fmt_s(d['generate_s'])}, "
               f"setup import (patterns..lots) {_fmt_s(d['setup_import_s'])}; review week {d['review_week']}",
             ""]
    head = f"{'measure':<22}{'ours':>11}{'baseline':>11}{'ratio':>9}  {'target':<26}{'met':<5}{'peak RSS':>10}"
    lines += [head, "-" * len(head)]
    for x in report["measures"]:
        if x.get("not_measured"):
            lines.append(f"{x['name']:<22}not measured: {x['not_measured']}")
            continue
        ratio = "-" if x["ratio"] is None else (f"{x['ratio']:.1f}x" if x["ratio_kind"] == "baseline/ours"
                                                else f"{x['ratio']:.2f}")
        met = {True: "yes", False: "NO", None: "-"}[x["met"]]
        rss = "-" if x["peak_rss_mb"] is None else f"{x['peak_rss_mb']:.0f} MB"
        lines.append(f"{x['name']:<22}{_fmt_s(x['ours_s']):>11}{_fmt_s(x['baseline_s']):>11}{ratio:>9}  "
                     f"{(x['target'] or '-'):<26}{met:<5}{rss:>10}")
    lines.append("")
    for x in report["measures"]:
        if x["name"] == "import" and x.get("ours_s"):
            lines.append(f"import: {x['rows']:,} rows, {x['rows'] / x['ours_s']:,.0f} rows/s validated vs "
                         f"{x['rows'] / x['baseline_s']:,.0f} rows/s raw; peak RSS {x['peak_rss_mb']:.0f} MB "
                         f"({x['memory_target']}: {'met' if x['met_memory'] else 'MISSED'}; "
                         f"{x['memory_measured_by']}); floor process {x['baseline_peak_rss_mb']:.0f} MB")
        if x["name"].startswith("review_") and x.get("ours_s") is not None:
            lines.append(f"{x['name']}: weekly_review(weeks={x['weeks']}) of {x['week']} vs Store.review_floor "
                         f"({', '.join(f'{v:,} {k}' for k, v in x['floor_rows'].items())}; median of "
                         f"{len(x['ours_runs_s'])}); first calls {_fmt_s(x['first_ours_s'])} / "
                         f"{_fmt_s(x['first_baseline_s'])}; floor with the garbage collector paused "
                         f"{_fmt_s(x['baseline_gc_paused_s'])} (ratio {x['ratio_to_gc_paused_floor']:.2f}); "
                         f"with the {x['totals_rows']:,} running-total rows judging riser revisions reads "
                         f"{_fmt_s(x['baseline_with_totals_s'])} (ratio {x['ratio_to_floor_with_totals']:.2f})")
        if x["name"] == "review_week" and x.get("aggregate_s") is not None:
            lines.append(f"review_week, old baseline (information): Store.rejects_by_pattern "
                         f"{_fmt_s(x['aggregate_s'])}, ours/aggregate {x['aggregate_ratio']:.0f}; "
                         f"per-pattern rejects agree: {x['agrees_with_baseline']}")
        if x["name"] == "sizing" and x.get("ours_s"):
            lines.append(f"sizing: {x['risers']:,} risers; max |diameter difference| "
                         f"{x['max_abs_diff_mm']:.2e} mm (tolerance {x['tolerance_mm']} mm)")
        if x["name"] == "fit_model" and x.get("ours_s") is not None:
            lines.append(f"fit_model: {x['rows']:,} rows ({x['castings']:,} castings), stored in the log")
        if x["name"] == "suggestions" and x.get("ours_s") is not None:
            lines.append(f"suggestions: {x['suggestions']} for {x['problem_patterns']} problem patterns "
                         f"({x['riser_changes']} riser changes), the stored model (loaded in "
                         f"{_fmt_s(x['model_load_s'])})")
        if x["name"] == "thermal_solve" and x.get("cells") is not None:
            lines.append(f"thermal_solve: grid {x['grid'][0]} x {x['grid'][1]} = {x['cells']:,} cells, "
                         f"time step {x['time_step_s']:.2f} s, {x['steps']} steps; {x['memory_target']}")
        if x["name"] == "thermal_suggestions" and x.get("suggestions") is not None:
            per = "-" if x["per_solve_s"] is None else _fmt_s(x["per_solve_s"])
            lines.append(f"thermal_suggestions: {x['solves']} proposed risers of {x['suggestions']} "
                         f"suggestions solved ({per} each), {x['thermal_ok']} pass the thermal check; "
                         f"suggest --thermal (fallback candidates solved too) {_fmt_s(x['suggest_with_thermal_s'])}")
        if x["name"].startswith("dashboard") and x.get("first_s") is not None:
            lines.append(f"{x['name']}: {x['page']}: first render {_fmt_s(x['first_s'])}, rerun "
                         f"{_fmt_s(x['rerun_s'])}" + (f"; errors: {x['errors']}" if x["errors"] else ""))
    lines += ["", "Query plans of the review's queries ("
              + ("EXPLAIN QUERY PLAN" if report["backend"] == "sqlite" else "EXPLAIN") + "):"]
    for q in report["query_plans"]:
        lines.append(f"  Store.{q['query']}:")
        lines += [f"    {ln}" for ln in q["plan"]]
    lines.append(f"\ntotal {_fmt_s(report['total_s'])}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m benchmarks.scale",
        description="Scale benchmark on a synthetic ten-year history (see the module docstring).")
    parser.add_argument("--lots", type=int, default=DEFAULT_LOTS,
                        help=f"lots in the history (default {DEFAULT_LOTS:,}; full scale {FULL_LOTS:,})")
    parser.add_argument("--json", action="store_true", help="print the report as JSON")
    parser.add_argument("--keep", metavar="DIR", help="keep the CSV files and databases in DIR")
    parser.add_argument("--risers", type=int, default=SIZING_RISERS,
                        help=f"risers in the sizing measure (default {SIZING_RISERS:,})")
    parser.add_argument("--repeats", type=int, default=5, help="repeats of the short measures (median)")
    parser.add_argument("--seed", type=int, default=SEED)
    parser.add_argument("--backend", choices=BACKENDS, default="sqlite",
                        help="where the log lives (default sqlite)")
    parser.add_argument("--pg-url", default=os.environ.get("POURBACK_BENCH_PG") or os.environ.get("POURBACK_TEST_PG"),
                        help="PostgreSQL server for --backend postgresql (default $POURBACK_BENCH_PG, "
                             "else $POURBACK_TEST_PG); each database is a fresh schema in it")
    args = parser.parse_args(argv)
    if args.backend == "postgresql" and not args.pg_url:
        parser.error("--backend postgresql: give --pg-url postgresql://user@host:port/dbname "
                     "(or set POURBACK_BENCH_PG)")
    if args.lots < 100:
        parser.error(f"--lots: got {args.lots}; give at least 100 lots")
    if args.risers < 1 or args.repeats < 1:
        parser.error("--risers and --repeats must be 1 or more")
    global _STEPS
    from tracker.cli.steps import Steps, terminal

    with Steps(not args.json and terminal(sys.stderr)) as steps:
        _STEPS = steps if steps.show else None
        try:
            report = run(args.lots, keep=args.keep, seed=args.seed, sizing_risers=args.risers,
                         repeats=args.repeats, backend=args.backend, pg_url=args.pg_url)
        finally:
            _STEPS = None
    print(json.dumps(report, indent=2) if args.json else format_report(report))
    return 0


if __name__ == "__main__":
    sys.exit(main())
