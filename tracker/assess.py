"""Judge stored risers by the rules, vectorised over a table of risers.

Each riser is judged against the zone (casting section) it feeds. Where
several risers of one revision feed the same zone, each is taken to feed an
equal share of the zone's volume and cooling area (the zone's modulus is
unchanged); split such a section into zones of its own for a finer check.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from tracker import geometry, rules
from tracker.alloys import CaineConstants
from tracker.errors import NotFound
from tracker.store import Store

RESULT_COLUMNS = [
    "pattern", "revision", "effective_from", "riser", "zone", "alloy", "placement", "top",
    "diameter_mm", "height_mm", "sleeve", "sleeve_kind", "sleeve_factor", "efficiency", "shrinkage",
    "section_modulus_cm", "riser_modulus_cm", "riser_geometric_modulus_cm", "modulus_ratio",
    "modulus_factor", "modulus_ok", "freezing_ratio", "volume_ratio", "caine_applied", "caine_curve_x",
    "caine_margin", "caine_ok", "feed_margin", "feed_ok", "neck_modulus_cm", "neck_ok",
    "feeding_distance_mm", "feeding_length_mm", "feeding_distance_ok", "riser_volume_cm3",
    "riser_weight_kg", "passes", "failed_rules", "notes",
]


def assess_frame(risers: pd.DataFrame, modulus_factor: float = rules.DEFAULT_MODULUS_FACTOR) -> pd.DataFrame:
    """Rule margins for every row of ``risers`` (as from ``Store.risers_frame``).

    Needs the columns diameter_mm, height_mm, placement, volume_cm3,
    cooling_area_cm2, shrinkage, bare_efficiency, caine_a/b/c, and may have
    sleeve_factor, sleeve_efficiency, neck_diameter_mm, thickness_mm,
    length_mm, risers_on_zone, density_kg_dm3.
    """
    df = risers.copy()
    n = len(df)

    def col(name, default=np.nan):
        return df[name].astype(float).to_numpy() if name in df else np.full(n, default, dtype=float)

    d = col("diameter_mm") / 10.0
    h = col("height_mm") / 10.0
    top = (df["placement"].astype(str) == "top").to_numpy()
    share = np.maximum(col("risers_on_zone", 1.0), 1.0)
    share = np.where(np.isnan(share), 1.0, share)
    vc = col("volume_cm3") / share
    ac = col("cooling_area_cm2") / share
    mc = vc / ac
    f = np.where(np.isnan(col("sleeve_factor")), 1.0, col("sleeve_factor"))
    eff = np.where(np.isnan(col("sleeve_efficiency")), col("bare_efficiency"), col("sleeve_efficiency"))
    beta = col("shrinkage")
    vr = geometry.cylinder_volume(d, h)
    m_geo = np.where(top, geometry.cylinder_modulus(d, h, "top"), geometry.cylinder_modulus(d, h, "side"))
    mr = rules.effective_modulus(m_geo, f)
    ratio = mr / mc
    x = ratio
    y = vr / vc
    a, b, c = col("caine_a"), col("caine_b"), col("caine_c")
    caine_applied = ~np.isnan(a)
    with np.errstate(divide="ignore", invalid="ignore"):
        xc = np.where(caine_applied & (y > b), a / (y - b) + c, np.where(caine_applied, np.inf, np.nan))
        margin = np.where(caine_applied, np.where(np.isfinite(xc), x - xc, -np.inf), np.nan)
    fm = rules.feed_margin(vr, vc, beta, eff)
    neck = col("neck_diameter_mm") / 10.0
    neck_m = geometry.bar_neck_modulus(neck)
    neck_ok = np.where(np.isnan(neck), np.nan,
                       rules.neck_ok(neck_m, mc, mr).astype(float))
    steel = (df["alloy"].astype(str) == "steel").to_numpy() if "alloy" in df else np.zeros(n, bool)
    thick, length = col("thickness_mm"), col("length_mm")
    fd = np.where(steel & ~np.isnan(thick), rules.feeding_distance_mm(thick), np.nan)
    fd_ok = np.where(np.isnan(fd) | np.isnan(length), np.nan, (length <= fd + 1e-9).astype(float))

    out = pd.DataFrame({k: df[k].to_numpy() if k in df else None for k in
                        ("pattern", "revision", "effective_from", "riser", "zone", "alloy", "placement",
                         "top", "diameter_mm", "height_mm", "sleeve", "sleeve_kind")})
    kind = out["sleeve_kind"].astype(object)
    out["sleeve_kind"] = kind.where(kind.notna(), "none")
    out["sleeve_factor"] = f
    out["efficiency"] = eff
    out["shrinkage"] = beta
    out["section_modulus_cm"] = mc
    out["riser_modulus_cm"] = mr
    out["riser_geometric_modulus_cm"] = m_geo
    out["modulus_ratio"] = ratio
    out["modulus_factor"] = modulus_factor
    out["modulus_ok"] = ratio >= modulus_factor * (1 - 1e-9)
    out["freezing_ratio"] = x
    out["volume_ratio"] = y
    out["caine_applied"] = caine_applied
    out["caine_curve_x"] = xc
    out["caine_margin"] = margin
    out["caine_ok"] = np.where(caine_applied, margin >= -1e-9, np.nan)
    out["feed_margin"] = fm
    out["feed_ok"] = fm >= -1e-9
    out["neck_modulus_cm"] = neck_m
    out["neck_ok"] = neck_ok
    out["feeding_distance_mm"] = fd
    out["feeding_length_mm"] = length
    out["feeding_distance_ok"] = fd_ok
    out["riser_volume_cm3"] = vr
    out["riser_weight_kg"] = vr * col("density_kg_dm3", np.nan) / 1000.0
    failed, notes = [], []
    for i in range(n):
        fl = []
        if not out["modulus_ok"].iat[i]:
            fl.append("modulus")
        if caine_applied[i] and not margin[i] >= -1e-9:
            fl.append("caine")
        if not out["feed_ok"].iat[i]:
            fl.append("feed_volume")
        if neck_ok[i] == 0.0:
            fl.append("neck")
        if fd_ok[i] == 0.0:
            fl.append("feeding_distance")
        failed.append(fl)
        nt = []
        if not caine_applied[i]:
            nt.append("Caine not applied: no constants for this alloy")
        if not steel[i]:
            nt.append("feeding distance not checked (the rule is for steel plates)")
        elif np.isnan(fd_ok[i]):
            nt.append("feeding distance not checked (give the zone's thickness_mm and length_mm)")
        if share[i] > 1:
            nt.append(f"zone shared by {int(share[i])} risers: each judged on an equal share")
        notes.append("; ".join(nt))
    out["passes"] = [not fl for fl in failed]
    out["failed_rules"] = [",".join(fl) for fl in failed]
    out["notes"] = notes
    return out[RESULT_COLUMNS]


def revision_in_effect(revisions: pd.DataFrame, on: str) -> pd.DataFrame:
    """The revision of each pattern in effect on date ``on`` (ISO string)."""
    r = revisions[revisions["effective_from"] <= on]
    if r.empty:
        return r
    return r.sort_values(["pattern", "effective_from"]).groupby("pattern", as_index=False).tail(1)


def check(store: Store, pattern: str | None = None, on: str | dt.date | None = None,
          modulus_factor: float = rules.DEFAULT_MODULUS_FACTOR) -> pd.DataFrame:
    """Every riser of the revision in effect on ``on`` (default today), judged."""
    on = (on or dt.date.today())
    on = on.isoformat() if hasattr(on, "isoformat") else str(on)
    if pattern is not None:
        store.pattern(pattern)  # raises NotFound with a hint
    risers = store.risers_frame(pattern=pattern)
    if risers.empty:
        return pd.DataFrame(columns=RESULT_COLUMNS)
    current = revision_in_effect(store.revisions_frame(pattern), on)
    keep = risers.merge(current[["pattern", "revision"]], on=["pattern", "revision"])
    if keep.empty and pattern is not None:
        raise NotFound("riser revision", pattern, f"no revision of {pattern} is in effect on {on}")
    return assess_frame(keep, modulus_factor)


def caine_curve_points(a: float, b: float, c: float, y_max: float = 3.0, n: int = 200) -> pd.DataFrame:
    """Points of Caine's curve for drawing, Y from just above b to y_max."""
    cn = CaineConstants(a, b, c)
    y = np.geomspace(b + max(b, 1e-3) * 0.05, y_max, n)
    return pd.DataFrame({"volume_ratio": y, "freezing_ratio": cn.x_curve(y)})
