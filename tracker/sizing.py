"""Smallest riser meeting every rule, vectorised over many risers.

For a cylinder at fixed H/D the riser's modulus is linear in D and its volume
cubic, so the modulus rule and the feed-volume rule have closed forms. Caine's
curve needs a root: g(D) = X(D) - a / (Y(D) - b) - c = 0, which is increasing
and concave in D; it is solved for all risers at once by Newton steps kept
inside a bracket (bisection where a step leaves it).

Units: inputs cm³ and cm²; diameters are returned in mm, volumes in cm³,
moduli in cm.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from tracker import geometry, rules
from tracker.alloys import Alloy, get_alloy
from tracker.errors import BadInput

H_OVER_D_RANGE = (0.5, 3.0)
RULES = ("caine", "modulus", "feed_volume")


def _as_alloy(alloy) -> Alloy:
    return alloy if isinstance(alloy, Alloy) else get_alloy(alloy)


def validate_section(volume_cm3, area_cm2):
    v = np.asarray(volume_cm3, dtype=float)
    a = np.asarray(area_cm2, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        raise BadInput("volume_cm3", _first_bad(v, v <= 0), "section volume must be a number above 0 cm³")
    if not np.all(np.isfinite(a)) or np.any(a <= 0):
        raise BadInput("area_cm2", _first_bad(a, a <= 0), "cooling area must be a number above 0 cm²")
    # A body's modulus can never exceed that of a sphere of the same volume.
    sphere_m = geometry.sphere_modulus(np.cbrt(6.0 * v / np.pi))
    bad = (v / a) > sphere_m * (1 + 1e-9)
    if np.any(bad):
        raise BadInput("area_cm2", _first_bad(a, bad),
                       "cooling area is smaller than a sphere of that volume would have; "
                       "check the units (cm² and cm³)")


def _first_bad(arr, mask):
    arr = np.atleast_1d(arr)
    mask = np.atleast_1d(mask) | ~np.isfinite(arr)
    return float(arr[np.argmax(mask)]) if mask.any() else float(arr.flat[0])


def validate_design_options(h_over_d, sleeve_factor, modulus_factor):
    hd = np.asarray(h_over_d, dtype=float)
    lo, hi = H_OVER_D_RANGE
    if np.any(~np.isfinite(hd)) or np.any((hd < lo) | (hd > hi)):
        raise BadInput("h_over_d", _first_bad(hd, (hd < lo) | (hd > hi)),
                       f"H/D must lie between {lo} and {hi}")
    f = np.asarray(sleeve_factor, dtype=float)
    if np.any(~np.isfinite(f)) or np.any((f < 1.0) | (f > 2.0)):
        raise BadInput("sleeve_factor", _first_bad(f, (f < 1) | (f > 2)),
                       "a sleeve's modulus extension factor lies between 1.0 (bare sand) and 2.0")
    mf = np.asarray(modulus_factor, dtype=float)
    if np.any(~np.isfinite(mf)) or np.any((mf < 1.0) | (mf > 3.0)):
        raise BadInput("modulus_factor", _first_bad(mf, (mf < 1) | (mf > 3)),
                       "the modulus rule's factor lies between 1.0 and 3.0 (common value 1.2)")


def caine_min_diameter_cm(section_volume, section_modulus, a, b, c, k, h_over_d, sleeve_factor,
                          rtol: float = 1e-13, max_iter: int = 200):
    """Smallest diameter (cm) whose point reaches Caine's curve, vectorised.

    k is M/D of the riser shape (geometry.modulus_per_diameter). NaN where
    a, b or c is NaN (no Caine row for that alloy).
    """
    vc, mc, a, b, c, k, hd, f = np.broadcast_arrays(
        *[np.asarray(x, dtype=float) for x in
          (section_volume, section_modulus, a, b, c, k, h_over_d, sleeve_factor)])
    shape = vc.shape
    vc, mc, a, b, c, k, hd, f = (x.ravel().copy() for x in (vc, mc, a, b, c, k, hd, f))
    kappa = np.pi * hd / 4.0 / vc  # Y = kappa · D³
    slope = f * k / mc             # X = slope · D
    out = np.full(vc.shape, np.nan)
    ok = np.isfinite(a) & np.isfinite(b) & np.isfinite(c)
    if not ok.any():
        return out.reshape(shape)

    def g(d, i):
        y = kappa[i] * d**3
        return slope[i] * d - a[i] / (y - b[i]) - c[i]

    def dg(d, i):
        y = kappa[i] * d**3
        return slope[i] + a[i] * 3.0 * y / d / (y - b[i]) ** 2

    idx = np.flatnonzero(ok)
    lo = np.cbrt(np.maximum(b[idx], 0.0) / kappa[idx])  # Y = b: g -> -inf
    hi = np.maximum(lo * 2.0, (c[idx] + a[idx]) / slope[idx])
    hi = np.where(hi > 0, hi, 1.0)
    for _ in range(200):  # grow hi until g(hi) > 0
        need = g(hi, idx) <= 0
        if not need.any():
            break
        hi = np.where(need, hi * 2.0, hi)
    d = hi.copy()
    for _ in range(max_iter):
        gv = g(d, idx)
        pos = gv > 0
        hi = np.where(pos, d, hi)
        lo = np.where(pos, lo, d)
        step = gv / dg(d, idx)
        dn = d - step
        outside = ~np.isfinite(dn) | (dn <= lo) | (dn >= hi)
        dn = np.where(outside, 0.5 * (lo + hi), dn)
        done = np.abs(dn - d) <= rtol * dn
        d = dn
        if done.all():
            break
    out[idx] = d
    return out.reshape(shape)


def size_arrays(section_volume, section_area, *, a, b, c, top, h_over_d, sleeve_factor,
                modulus_factor, efficiency, shrinkage):
    """Core vectorised sizing over arrays (cm units). ``top`` is a bool array
    (True for a top riser). Returns a dict of arrays."""
    vc = np.asarray(section_volume, dtype=float)
    mc = vc / np.asarray(section_area, dtype=float)
    hd = np.asarray(h_over_d, dtype=float)
    k = np.where(np.asarray(top, dtype=bool),
                 geometry.modulus_per_diameter(hd, "top"),
                 geometry.modulus_per_diameter(hd, "side"))
    f = np.asarray(sleeve_factor, dtype=float)
    d_mod = np.asarray(modulus_factor, dtype=float) * mc / (f * k)
    v_feed = rules.feed_min_volume(vc, shrinkage, efficiency)
    d_feed = geometry.diameter_for_volume(v_feed, hd)
    d_caine = caine_min_diameter_cm(vc, mc, a, b, c, k, hd, f)
    stack = np.stack(np.broadcast_arrays(np.where(np.isnan(d_caine), -np.inf, d_caine),
                                         d_mod, d_feed))
    gov = np.argmax(stack, axis=0)
    d = np.max(stack, axis=0)
    return {"diameter_cm": d, "caine_cm": d_caine, "modulus_cm": np.broadcast_to(d_mod, d.shape),
            "feed_cm": np.broadcast_to(d_feed, d.shape), "governing": gov, "section_modulus": mc, "k": k}


def size_risers(section_volume_cm3, section_area_cm2, alloy, placement="side", h_over_d=1.0,
                sleeve_factor=1.0, modulus_factor=rules.DEFAULT_MODULUS_FACTOR,
                efficiency=None, shrinkage=None):
    """Size many risers of one alloy at once; returns a dict of numpy arrays.

    Keys as in :class:`RiserSize` (diameters in mm). ``placement`` may be a
    single "top"/"side" or an array of them.
    """
    alloy = _as_alloy(alloy)
    eff = alloy.bare_efficiency if efficiency is None else efficiency
    beta = alloy.shrinkage if shrinkage is None else shrinkage
    validate_section(section_volume_cm3, section_area_cm2)
    validate_design_options(h_over_d, sleeve_factor, modulus_factor)
    for e, s in np.broadcast(np.asarray(eff, dtype=float), np.asarray(beta, dtype=float)):
        rules.check_efficiency(float(e), float(s))
    pl = np.char.lower(np.asarray(placement, dtype=str))
    if not np.all(np.isin(pl, geometry.PLACEMENTS)):
        raise BadInput("placement", str(pl[~np.isin(pl, geometry.PLACEMENTS)].flat[0]), "must be top or side")
    cn = alloy.caine
    a, b, c = (np.nan, np.nan, np.nan) if cn is None else (cn.a, cn.b, cn.c)
    r = size_arrays(section_volume_cm3, section_area_cm2, a=a, b=b, c=c, top=(pl == "top"),
                    h_over_d=h_over_d, sleeve_factor=sleeve_factor, modulus_factor=modulus_factor,
                    efficiency=eff, shrinkage=beta)
    d = r["diameter_cm"]
    hd = np.asarray(h_over_d, dtype=float)
    vr = geometry.cylinder_volume(d, hd * d)
    mr = r["k"] * d * np.asarray(sleeve_factor, dtype=float)
    vc = np.asarray(section_volume_cm3, dtype=float)
    return {
        "diameter_mm": d * 10.0,
        "height_mm": hd * d * 10.0,
        "riser_volume_cm3": vr,
        "riser_modulus_cm": mr,
        "section_modulus_cm": np.broadcast_to(r["section_modulus"], d.shape),
        "freezing_ratio": mr / r["section_modulus"],
        "volume_ratio": vr / vc,
        "caine_min_diameter_mm": r["caine_cm"] * 10.0,
        "modulus_min_diameter_mm": r["modulus_cm"] * 10.0,
        "feed_min_diameter_mm": r["feed_cm"] * 10.0,
        "governing_rule": np.asarray(RULES)[r["governing"]],
    }


@dataclass(frozen=True)
class RiserSize:
    """The smallest cylindrical riser meeting every rule, for one section."""

    alloy: str
    placement: str
    h_over_d: float
    sleeve_factor: float
    modulus_factor: float
    efficiency: float
    shrinkage: float
    diameter_mm: float
    height_mm: float
    riser_volume_cm3: float
    riser_modulus_cm: float
    section_modulus_cm: float
    freezing_ratio: float
    volume_ratio: float
    caine_applied: bool
    caine_min_diameter_mm: float | None
    modulus_min_diameter_mm: float
    feed_min_diameter_mm: float
    governing_rule: str
    caine_margin: float | None
    freezing_time_ratio: float
    riser_weight_kg: float

    def to_dict(self) -> dict:
        return asdict(self)


def size_riser(volume_cm3: float, area_cm2: float, alloy="steel", placement: str = "side",
               h_over_d: float = 1.0, sleeve_factor: float = 1.0,
               modulus_factor: float = rules.DEFAULT_MODULUS_FACTOR,
               efficiency: float | None = None, shrinkage: float | None = None) -> RiserSize:
    """Size one riser (the scalar path: Caine's root by scipy's brentq).

    volume_cm3, area_cm2: the fed section's volume and cooling area.
    """
    from scipy.optimize import brentq

    alloy = _as_alloy(alloy)
    placement = geometry.check_placement(placement)
    eff = alloy.bare_efficiency if efficiency is None else float(efficiency)
    beta = alloy.shrinkage if shrinkage is None else float(shrinkage)
    validate_section(volume_cm3, area_cm2)
    validate_design_options(h_over_d, sleeve_factor, modulus_factor)
    rules.check_efficiency(eff, beta)
    vc, mc = float(volume_cm3), float(volume_cm3) / float(area_cm2)
    k = float(geometry.modulus_per_diameter(h_over_d, placement))
    d_mod = modulus_factor * mc / (sleeve_factor * k)
    d_feed = float(geometry.diameter_for_volume(rules.feed_min_volume(vc, beta, eff), h_over_d))
    d_caine = None
    if alloy.caine is not None:
        cn = alloy.caine
        kappa = np.pi * h_over_d / 4.0 / vc

        def g(d):
            return sleeve_factor * k * d / mc - cn.a / (kappa * d**3 - cn.b) - cn.c

        lo = (cn.b / kappa) ** (1 / 3) * (1 + 1e-12) + 1e-300
        hi = max(2 * lo, (cn.a + cn.c) * mc / (sleeve_factor * k))
        while g(hi) <= 0:
            hi *= 2
        d_caine = brentq(g, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=500)
    cands = {"caine": d_caine if d_caine is not None else -np.inf,
             "modulus": d_mod, "feed_volume": d_feed}
    governing = max(RULES, key=lambda r: cands[r])
    d = cands[governing]
    vr = float(geometry.cylinder_volume(d, h_over_d * d))
    mr = sleeve_factor * k * d
    x, y = mr / mc, vr / vc
    margin = None if alloy.caine is None else float(rules.caine_margin(x, y, alloy.caine))
    return RiserSize(
        alloy=alloy.key, placement=placement, h_over_d=float(h_over_d),
        sleeve_factor=float(sleeve_factor), modulus_factor=float(modulus_factor),
        efficiency=eff, shrinkage=beta,
        diameter_mm=d * 10, height_mm=h_over_d * d * 10, riser_volume_cm3=vr,
        riser_modulus_cm=mr, section_modulus_cm=mc, freezing_ratio=x, volume_ratio=y,
        caine_applied=alloy.caine is not None,
        caine_min_diameter_mm=None if d_caine is None else d_caine * 10,
        modulus_min_diameter_mm=d_mod * 10, feed_min_diameter_mm=d_feed * 10,
        governing_rule=governing, caine_margin=margin,
        freezing_time_ratio=x ** rules.DEFAULT_CHVORINOV_N,
        riser_weight_kg=vr * alloy.density_kg_dm3 / 1000.0,
    )
