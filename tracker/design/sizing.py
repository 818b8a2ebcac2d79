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

import math
from dataclasses import asdict, dataclass, replace

import numpy as np

from tracker import units
from tracker.design import geometry, rules
from tracker.design.alloys import RULE_SETS, Alloy, CaineConstants, get_alloy
from tracker.design.bounds import check_section_figures, check_step
from tracker.errors import BadInput
from tracker.limits import POUR_TEMP_RANGE_C, RANGES
from tracker.numbers import missing

H_OVER_D_RANGE = (0.5, 3.0)
RULES = ("caine", "modulus", "feed_volume")
RULE_SET_SOURCES = {
    "modulus_sequence": "modulus rule and neck sequence 1 : 1.1 : 1.2 (Wlodawer, 1966; common practice)",
    "pressure_control": ("pressure control (Karsay's ductile-iron risering, from memory): neck modulus "
                         "0.5-0.8 x the section's, riser 1.2 x the neck's, riserless from {riserless} in rigid moulds"),
}


def rule_set_source(rule_set: str, system: str = units.METRIC) -> str:
    """Where a rule set's figures come from, its lengths worded in ``system``."""
    return RULE_SET_SOURCES[rule_set].format(
        riserless=units.say("length_cm", rules.PC_RISERLESS_MODULUS_CM, system, "g"))
# A sleeved riser feeds with more of its volume than a bare one. Where neither
# the efficiency nor a catalogue sleeve is given, a sleeved riser takes the low
# end of the insulating-sleeve range 25-35 % (DOMAIN.md, from memory): the safe
# side, since exothermic sleeves give 30-45 %.
SLEEVED_EFFICIENCY = 0.25
SLEEVED_EFFICIENCY_SOURCE = ("sleeved riser, common-practice default 25 % (low end of the insulating "
                             "range 25-35 %, from memory)")


def _as_alloy(alloy) -> Alloy:
    return alloy if isinstance(alloy, Alloy) else get_alloy(alloy)


def validate_section(volume_cm3, area_cm2, thickness_mm=None, system: str = units.METRIC, joined: bool = False):
    """Refuse sections no body can have: volume or cooling area not above 0,
    or (where the thickness is given) a modulus above T/2, the modulus of a
    plate of thickness T cooling on both faces. The refusal names the fields,
    values and units of ``system`` (tracker.units).

    ``joined``: some faces are joined to the rest of the casting (they do not
    cool), so V/A may exceed T/2: not refused.

    A modulus above a same-volume sphere's is possible where faces are joined
    to other metal: it is a warning (``geometry.joined_faces_warning``), not a
    refusal.
    """
    def refuse(name, value, reason):
        raise BadInput(units.column_name(name, system), units.value_in(name, value, system), reason)

    sym = {k: units.symbol(k, system) for k in ("volume_cm3", "area_cm2", "thickness_mm")}
    v = np.asarray(volume_cm3, dtype=float)
    a = np.asarray(area_cm2, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        refuse("volume_cm3", _first_bad(v, v <= 0), f"section volume must be a number above 0 {sym['volume_cm3']}")
    if not np.all(np.isfinite(a)) or np.any(a <= 0):
        refuse("area_cm2", _first_bad(a, a <= 0), f"cooling area must be a number above 0 {sym['area_cm2']}")
    for name, arr, limit in (("volume_cm3", v, RANGES["volume_cm3"][1]),
                             ("area_cm2", a, RANGES["cooling_area_cm2"][1])):
        if np.any(arr > limit):
            refuse(name, _first_bad(arr, arr > limit),
                   f"at most {units.show(name, limit, system)}, larger than any casting section poured; "
                   f"check the units ({sym[name]})")
    if thickness_mm is not None:
        t = np.asarray(thickness_mm, dtype=float)
        if np.any(~np.isnan(t) & (t <= 0)):
            refuse("thickness_mm", _first_bad(t, t <= 0), f"thickness must be above 0 {sym['thickness_mm']}")
        bad = ~np.isnan(t) & (v / a > t / 20.0 * (1 + 1e-9)) & (not joined)
        if np.any(bad):
            i = int(np.argmax(np.atleast_1d(bad)))
            m = float(np.atleast_1d(v / a)[i])
            half = float(np.atleast_1d(t)[i]) / 20.0
            refuse("area_cm2", float(np.atleast_1d(a)[i]),
                   f"the modulus V/A = {units.show('length_cm', m, system, 2)} is above half the thickness "
                   f"({units.show('length_cm', half, system, 2)}), more than a plate of that "
                   f"thickness cooling on both faces can have; check the units ({sym['area_cm2']}, "
                   f"{sym['volume_cm3']}, {sym['thickness_mm']}), or name the faces joined to the rest of the "
                   "casting (--joined-faces)")


def validate_pour_temp(pour_temp_c, system: str = units.METRIC) -> None:
    """Refuse a pour temperature (°C, one figure or an array where NaN is the alloy's default)
    outside the range an import of lots takes, naming the value and the range in
    the units of ``system``."""
    if pour_temp_c is None:
        return
    t = np.asarray(pour_temp_c, dtype=float)
    lo, hi = POUR_TEMP_RANGE_C
    # NaN in an array is a lot without a reading; a single figure must be a number
    bad = (np.isnan(t) if t.ndim == 0 else np.isinf(t)) | (t < lo) | (t > hi)
    if np.any(bad):
        raise BadInput(units.column_name("pour_temp_c", system),
                       units.value_in("pour_temp_c", _first_bad(t, bad), system),
                       f"a pour temperature lies between {units.show('pour_temp_c', lo, system)} and "
                       f"{units.show('pour_temp_c', hi, system)}; check the figure and its unit")


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
                modulus_factor, efficiency, shrinkage, modulus_basis=1.0):
    """Core vectorised sizing over arrays (cm units). ``top`` is a bool array
    (True for a top riser); ``shrinkage`` is all the metal to feed (fraction);
    the modulus rule asks modulus_factor · modulus_basis · M_section
    (basis 1 for the modulus sequence, the neck's 0.8 for pressure control).
    Returns a dict of arrays."""
    vc = np.asarray(section_volume, dtype=float)
    mc = vc / np.asarray(section_area, dtype=float)
    hd = np.asarray(h_over_d, dtype=float)
    k = np.where(np.asarray(top, dtype=bool),
                 geometry.modulus_per_diameter(hd, "top"),
                 geometry.modulus_per_diameter(hd, "side"))
    f = np.asarray(sleeve_factor, dtype=float)
    d_mod = np.asarray(modulus_factor, dtype=float) * np.asarray(modulus_basis, dtype=float) * mc / (f * k)
    v_feed = rules.feed_min_volume(vc, shrinkage, efficiency)
    d_feed = geometry.diameter_for_volume(v_feed, hd)
    d_caine = caine_min_diameter_cm(vc, mc, a, b, c, k, hd, f)
    stack = np.stack(np.broadcast_arrays(np.where(np.isnan(d_caine), -np.inf, d_caine),
                                         d_mod, d_feed))
    gov = np.argmax(stack, axis=0)
    d = np.max(stack, axis=0)
    return {"diameter_cm": d, "caine_cm": d_caine, "modulus_cm": np.broadcast_to(d_mod, d.shape),
            "feed_cm": np.broadcast_to(d_feed, d.shape), "governing": gov, "section_modulus": mc, "k": k}


def default_efficiency(alloy: Alloy, sleeve_factor=1.0):
    """Feeding efficiency where none is given: SLEEVED_EFFICIENCY for a sleeved
    riser (factor above 1), the alloy's bare-sand value otherwise."""
    f = np.asarray(sleeve_factor, dtype=float)
    out = np.where(f > 1.0, SLEEVED_EFFICIENCY, alloy.bare_efficiency)
    return out if out.ndim else float(out)


def modulus_basis(alloy: Alloy) -> float:
    """What the modulus rule's factor multiplies, as a share of M_section: 1
    (the riser outlasts the section) or, under pressure control, the top of
    the neck window, 0.8 (the riser outlasts its neck)."""
    return rules.PC_NECK_RATIO[1] if alloy.rule_set == "pressure_control" else 1.0


def suggested_neck_mm(alloy: Alloy, section_modulus_cm, placement="side"):
    """Round neck diameter for a side riser, mm (d = 4 · M_neck): 1.1 · M_s for
    the modulus sequence; the middle of the 0.5-0.8 · M_s window under
    pressure control. NaN for a top riser."""
    ratio = (sum(rules.PC_NECK_RATIO) / 2.0 if alloy.rule_set == "pressure_control"
             else rules.NECK_FACTOR)
    d = 4.0 * ratio * np.asarray(section_modulus_cm, dtype=float) * 10.0
    return np.where(np.char.lower(np.asarray(placement, dtype=str)) == "side", d, np.nan)


def neck_needed_mm(alloy, section_modulus_cm: float, now_mm: float | None = None) -> float | None:
    """The round neck (mm) a side riser's rule set asks, or None where the
    present ``now_mm`` already meets it: at least 1.1 · M_s (d = 4 · M_neck)
    for the modulus sequence; inside 0.5-0.8 · M_s (the middle where outside)
    under pressure control."""
    alloy = _as_alloy(alloy)
    mc = float(section_modulus_cm)
    if alloy.rule_set == "pressure_control":
        lo, hi = (4.0 * r * mc * 10.0 for r in rules.PC_NECK_RATIO)
        if now_mm is not None and lo * (1 - 1e-9) <= now_mm <= hi * (1 + 1e-9):
            return None
        return float(suggested_neck_mm(alloy, mc))
    need = 4.0 * rules.NECK_FACTOR * mc * 10.0
    return None if now_mm is not None and now_mm >= need * (1 - 1e-9) else need


def size_risers(section_volume_cm3, section_area_cm2, alloy, placement="side", h_over_d=1.0,
                sleeve_factor=1.0, modulus_factor=rules.DEFAULT_MODULUS_FACTOR,
                efficiency=None, shrinkage=None, mould=None, pour_temp_c=None):
    """Size many risers of one alloy at once; returns a dict of numpy arrays.

    Keys as in :class:`RiserSize` (diameters in mm). ``placement`` may be a
    single "top"/"side" or an array of them. ``mould`` (green_sand or rigid)
    matters for ductile iron only; ``pour_temp_c`` (else the alloy's default
    superheat) sets the liquid contraction.
    """
    alloy = _as_alloy(alloy)
    mould = rules.check_mould(mould)
    eff = default_efficiency(alloy, sleeve_factor) if efficiency is None else efficiency
    validate_pour_temp(pour_temp_c)
    beta, liquid = rules.feed_fraction(alloy, mould, pour_temp_c, shrinkage)
    validate_section(section_volume_cm3, section_area_cm2)
    validate_design_options(h_over_d, sleeve_factor, modulus_factor)
    for e, li in np.broadcast(np.asarray(eff, dtype=float), np.asarray(liquid, dtype=float)):
        rules.check_efficiency(float(e), beta, float(li))
    pl = np.char.lower(np.asarray(placement, dtype=str))
    if not np.all(np.isin(pl, geometry.PLACEMENTS)):
        raise BadInput("placement", str(pl[~np.isin(pl, geometry.PLACEMENTS)].flat[0]), "must be top or side")
    cn = alloy.caine
    a, b, c = (np.nan, np.nan, np.nan) if cn is None else (cn.a, cn.b, cn.c)
    r = size_arrays(section_volume_cm3, section_area_cm2, a=a, b=b, c=c, top=(pl == "top"),
                    h_over_d=h_over_d, sleeve_factor=sleeve_factor, modulus_factor=modulus_factor,
                    efficiency=eff, shrinkage=max(beta, 0.0) + np.asarray(liquid, dtype=float),
                    modulus_basis=modulus_basis(alloy))
    d = r["diameter_cm"]
    hd = np.asarray(h_over_d, dtype=float)
    vr = geometry.cylinder_volume(d, hd * d)
    mr = r["k"] * d * np.asarray(sleeve_factor, dtype=float)
    vc = np.asarray(section_volume_cm3, dtype=float)
    mc = np.broadcast_to(r["section_modulus"], d.shape)
    return {
        "diameter_mm": d * 10.0,
        "height_mm": hd * d * 10.0,
        "riser_volume_cm3": vr,
        "riser_modulus_cm": mr,
        "section_modulus_cm": mc,
        "freezing_ratio": mr / r["section_modulus"],
        "volume_ratio": vr / vc,
        "caine_min_diameter_mm": r["caine_cm"] * 10.0,
        "modulus_min_diameter_mm": r["modulus_cm"] * 10.0,
        "feed_min_diameter_mm": r["feed_cm"] * 10.0,
        "governing_rule": np.asarray(RULES)[r["governing"]],
        "neck_diameter_mm": np.broadcast_to(suggested_neck_mm(alloy, mc, pl), d.shape),
        "riser_needed": ~np.broadcast_to(rules.riserless_possible(mc, mould) if
                                         alloy.rule_set == "pressure_control" else False, d.shape),
    }


@dataclass(frozen=True)
class RiserSize:
    """The smallest cylindrical riser meeting every rule, for one section.

    shrinkage is the solidification part of the metal to feed, liquid_contraction
    the part from the pour temperature to the liquidus; feed_fraction their sum.
    """

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
    rule_set: str = "modulus_sequence"
    rule_set_text: str = ""
    mould: str = rules.DEFAULT_MOULD
    liquid_contraction: float = 0.0
    pour_temp_c: float | None = None
    feed_fraction: float = 0.0
    efficiency_source: str = ""
    sleeve: str | None = None
    neck_diameter_mm: float | None = None
    neck_modulus_cm: float | None = None
    riser_needed: bool = True
    thickness_mm: float | None = None
    width_mm: float | None = None
    section_shape: str = ""
    feeding_distance_mm: float | None = None
    feeding_length_mm: float | None = None
    feeding_distance_ok: bool | None = None
    source: str = ""
    warnings: tuple = ()
    notes: tuple = ()

    def to_dict(self) -> dict:
        d = asdict(self)
        d["warnings"], d["notes"] = list(self.warnings), list(self.notes)
        return d


def _with_rule_set(alloy: Alloy, rule_set: str | None) -> Alloy:
    """The alloy judged by ``rule_set`` (a RULE_SETS key) instead of its own, for a comparison."""
    if rule_set is None:
        return alloy
    if rule_set not in RULE_SETS:
        raise BadInput("rule_set", rule_set, "must be one of " + ", ".join(RULE_SETS))
    return replace(alloy, rule_set=rule_set)


def _efficiency(alloy: Alloy, efficiency: float | None, sleeve: dict | None,
                sleeve_factor: float) -> tuple[float, str]:
    """The feeding efficiency (fraction) and where it comes from: given, the
    catalogue sleeve's, the sleeved default, or the alloy's bare-sand value."""
    if efficiency is not None:
        return float(efficiency), "given"
    if sleeve is not None:
        return float(sleeve["feeding_efficiency"]), f"sleeve {sleeve['sleeve']} from the log's catalogue"
    if sleeve_factor > 1.0:
        return SLEEVED_EFFICIENCY, SLEEVED_EFFICIENCY_SOURCE
    return alloy.bare_efficiency, "bare sand, the alloy's value (from memory)"


def _caine_root_cm(caine: CaineConstants, vc: float, mc: float, h_over_d: float, k: float,
                   sleeve_factor: float) -> float:
    """The smallest diameter, cm, on Caine's curve for one section (volume
    ``vc`` cm³, modulus ``mc`` cm): the root of g(D) by scipy's brentq,
    bracketed above the diameter where Y = b."""
    from scipy.optimize import brentq  # scipy.optimize is slow to import; only the scalar path needs it

    kappa = np.pi * h_over_d / 4.0 / vc

    def g(d):
        return sleeve_factor * k * d / mc - caine.a / (kappa * d**3 - caine.b) - caine.c

    lo = (caine.b / kappa) ** (1 / 3) * (1 + 1e-12) + 1e-300
    hi = max(2 * lo, (caine.a + caine.c) * mc / (sleeve_factor * k))
    while g(hi) <= 0:
        hi *= 2
    return brentq(g, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=500)


def _rule_diameters_cm(alloy: Alloy, vc: float, mc: float, need: float, eff: float, h_over_d: float, k: float,
                       sleeve_factor: float, modulus_factor: float) -> dict:
    """The smallest diameter, cm, each rule allows (RULES keys; Caine's is
    -inf where the alloy has no Caine constants), for a riser of modulus
    ``k`` x D feeding a section of ``vc`` cm³ and modulus ``mc`` cm, the feed
    fraction ``need`` at efficiency ``eff``."""
    d_mod = modulus_factor * modulus_basis(alloy) * mc / (sleeve_factor * k)
    d_feed = float(geometry.diameter_for_volume(rules.feed_min_volume(vc, need, eff), h_over_d))
    d_caine = None if alloy.caine is None else _caine_root_cm(alloy.caine, vc, mc, h_over_d, k, sleeve_factor)
    return {"caine": d_caine if d_caine is not None else -np.inf, "modulus": d_mod, "feed_volume": d_feed}


def _rule_set_notes(alloy: Alloy, mould: str, pour_temp_c: float | None, mc: float, needed: bool,
                    system: str) -> list[str]:
    """Notes on the pour temperature and on the pressure-control rule set
    (``needed``: whether the section needs a riser at all)."""
    notes = []
    if pour_temp_c is not None and alloy.liquidus_c is not None and pour_temp_c < alloy.liquidus_c:
        notes.append(f"pour temperature {units.show('pour_temp_c', pour_temp_c, system)} is below the alloy's "
                     f"liquidus ({units.show('pour_temp_c', alloy.liquidus_c, system)}): no liquid contraction "
                     "is counted; check the figure")
    if alloy.rule_set == "pressure_control":
        notes.append(f"pressure control ({mould.replace('_', ' ')} mould): the riser feeds the liquid "
                     f"contraction{'' if mould == 'rigid' else ' and the mould-wall allowance'} until "
                     "graphite expansion starts; the neck freezes then (modulus "
                     f"{rules.PC_NECK_RATIO[0]:g}-{rules.PC_NECK_RATIO[1]:g} x the section's)")
        if not needed:
            limit = (f"{rules.PC_RISERLESS_MODULUS_CM:g} cm" if system != units.US
                     else units.show("length_cm", rules.PC_RISERLESS_MODULUS_CM, system, 2))
            notes.append(f"section modulus {units.show('length_cm', mc, system, 2)} >= {limit} in a rigid "
                         "mould: the section may be cast without a riser (Karsay, from memory)")
    return notes


def _feeding_distance(alloy: Alloy, thickness_mm: float | None, width_mm: float | None,
                      length_mm: float | None, system: str) -> dict:
    """The section's shape, and for steel its feeding distance (mm) and whether
    the feeding length is within it; ``note`` where it was not judged."""
    fd = fd_ok = None
    shape = ""
    if thickness_mm is not None and width_mm is not None:
        shape = str(rules.section_shape(thickness_mm, width_mm))
    if alloy.key == "steel" and thickness_mm is not None and width_mm is not None:
        fd = float(rules.feeding_distance_mm(thickness_mm, width_mm))
        fd_ok = None if length_mm is None else bool(length_mm <= fd + 1e-9)
    note = None
    if alloy.key != "steel":
        note = "feeding distance not judged (the published rule is for steel)"
    elif fd is None or fd_ok is None:
        note = ("feeding distance not judged (give "
                + ", ".join(units.option_name(n, system) for n, v in
                            (("thickness_mm", thickness_mm), ("width_mm", width_mm),
                             ("length_mm", length_mm)) if v is None) + ")")
    return {"section_shape": shape, "feeding_distance_mm": fd, "feeding_distance_ok": fd_ok, "note": note}


def _pour_temp_used(alloy: Alloy, pour_temp_c: float | None) -> float | None:
    """The pour temperature the liquid contraction is counted from, °C: the
    given one, else the liquidus plus the alloy's superheat (None where the
    alloy has no liquidus)."""
    if alloy.liquidus_c is None:
        return None
    return float(pour_temp_c if pour_temp_c is not None
                 else alloy.liquidus_c + (alloy.default_superheat_k or 0.0))


def _check_section(system: str, volume_cm3, area_cm2, thickness_mm, width_mm, length_mm, joined: bool) -> None:
    """The import's ranges on every figure typed, then the section's own consistency (V/A <= T/2 unless joined)."""
    check_section_figures(system, volume_cm3=volume_cm3, area_cm2=area_cm2, thickness_mm=thickness_mm,
                          width_mm=width_mm, length_mm=length_mm)
    validate_section(volume_cm3, area_cm2, thickness_mm, system, joined=joined)


def size_riser(volume_cm3: float, area_cm2: float, alloy="steel", placement: str = "side",
               h_over_d: float = 1.0, sleeve_factor: float = 1.0,
               modulus_factor: float = rules.DEFAULT_MODULUS_FACTOR,
               efficiency: float | None = None, shrinkage: float | None = None, *,
               mould: str | None = None, pour_temp_c: float | None = None,
               thickness_mm: float | None = None, width_mm: float | None = None,
               length_mm: float | None = None, sleeve: dict | None = None,
               rule_set: str | None = None, system: str = units.METRIC, joined_faces: str | None = None) -> RiserSize:
    """Size one riser (the scalar path: Caine's root by scipy's brentq).

    volume_cm3, area_cm2: the fed section's volume and cooling area.
    mould: green_sand (default) or rigid; matters for ductile iron only.
    pour_temp_c: pour temperature, °C (default: liquidus + the alloy's superheat).
    thickness_mm: the section's thickness, where known (checks M <= T/2).
    width_mm, length_mm: with the thickness, the feeding distance of a steel
    section (bar, plate or between, by W/T) against the feeding length.
    sleeve: a catalogue sleeve (dict with sleeve, modulus_factor,
    feeding_efficiency): its factor and efficiency are used.
    Without ``efficiency``, a sleeved riser (factor above 1) feeds with
    SLEEVED_EFFICIENCY, a bare one with the alloy's bare-sand value.
    rule_set: judge by another rule set than the alloy's (RULE_SETS key), for
    a comparison.
    system: the unit system (tracker.units) the notes and warnings word their
    figures in; every number of the result stays metric.
    joined_faces: faces joined to the rest of the casting ("bottom;edges"): V/A may exceed T/2.
    """
    alloy, joined = _with_rule_set(_as_alloy(alloy), rule_set), geometry.joined_faces(joined_faces)
    placement = geometry.check_placement(placement)
    mould = rules.check_mould(mould)
    eff, eff_src = _efficiency(alloy, efficiency, sleeve, sleeve_factor)
    if sleeve is not None:
        sleeve_factor = float(sleeve["modulus_factor"])
    validate_pour_temp(pour_temp_c, system)
    beta, liquid = rules.feed_fraction(alloy, mould, pour_temp_c, shrinkage)
    _check_section(system, volume_cm3, area_cm2, thickness_mm, width_mm, length_mm, joined is not None)
    validate_design_options(h_over_d, sleeve_factor, modulus_factor)
    rules.check_efficiency(eff, beta, liquid)
    need = max(beta, 0.0) + liquid
    vc, mc = float(volume_cm3), float(volume_cm3) / float(area_cm2)
    k = float(geometry.modulus_per_diameter(h_over_d, placement))
    mins = _rule_diameters_cm(alloy, vc, mc, need, eff, h_over_d, k, sleeve_factor, modulus_factor)
    governing = max(RULES, key=lambda r: mins[r])  # the largest of the smallest diameters governs
    d, d_caine = mins[governing], mins["caine"] if alloy.caine is not None else None
    vr = float(geometry.cylinder_volume(d, h_over_d * d))
    mr = sleeve_factor * k * d
    x, y = mr / mc, vr / vc
    neck = float(suggested_neck_mm(alloy, mc, placement))
    needed = not (alloy.rule_set == "pressure_control" and bool(rules.riserless_possible(mc, mould)))
    warn = geometry.joined_faces_warning(vc, float(area_cm2), system)
    notes = _rule_set_notes(alloy, mould, pour_temp_c, mc, needed, system)
    feeding = _feeding_distance(alloy, thickness_mm, width_mm, length_mm, system)
    if feeding["note"] is not None:
        notes.append(feeding["note"])
    notes += [f"faces joined to the rest of the casting: {joined.replace(';', ', ')} (they do not cool; V/A may "
              "exceed T/2)"] if joined else []
    return RiserSize(
        alloy=alloy.key, placement=placement, h_over_d=float(h_over_d),
        sleeve_factor=float(sleeve_factor), modulus_factor=float(modulus_factor),
        efficiency=eff, shrinkage=beta,
        diameter_mm=d * 10, height_mm=h_over_d * d * 10, riser_volume_cm3=vr,
        riser_modulus_cm=mr, section_modulus_cm=mc, freezing_ratio=x, volume_ratio=y,
        caine_applied=alloy.caine is not None,
        caine_min_diameter_mm=None if d_caine is None else d_caine * 10,
        modulus_min_diameter_mm=mins["modulus"] * 10, feed_min_diameter_mm=mins["feed_volume"] * 10,
        governing_rule=governing,
        caine_margin=None if alloy.caine is None else float(rules.caine_margin(x, y, alloy.caine)),
        freezing_time_ratio=x ** rules.DEFAULT_CHVORINOV_N,
        riser_weight_kg=vr * alloy.density_kg_dm3 / 1000.0,
        rule_set=alloy.rule_set, rule_set_text=RULE_SETS[alloy.rule_set], mould=mould,
        liquid_contraction=liquid, pour_temp_c=_pour_temp_used(alloy, pour_temp_c),
        feed_fraction=need, efficiency_source=eff_src, sleeve=None if sleeve is None else sleeve["sleeve"],
        neck_diameter_mm=None if np.isnan(neck) else neck,
        neck_modulus_cm=None if np.isnan(neck) else neck / 40.0,
        riser_needed=needed, thickness_mm=thickness_mm, width_mm=width_mm, section_shape=feeding["section_shape"],
        feeding_distance_mm=feeding["feeding_distance_mm"], feeding_length_mm=length_mm,
        feeding_distance_ok=feeding["feeding_distance_ok"],
        source="; ".join(x for x in (alloy.source, alloy.liquid_source, rule_set_source(alloy.rule_set, system)) if x),
        warnings=(warn,) if warn else (), notes=tuple(notes),
    )


def round_up_diameter(size: RiserSize, step_mm: float) -> dict:
    """The sized riser rounded up to the shop's diameter step: diameter and
    height (same H/D) in mm, and the rounded riser's volume, cm³."""
    if not (step_mm > 0):
        raise BadInput("step_mm", step_mm, "the diameter step must be above 0 mm (for example 10)")
    d = math.ceil(size.diameter_mm / step_mm - 1e-9) * step_mm
    h = size.h_over_d * d
    return {"step_mm": float(step_mm), "rounded_diameter_mm": float(d), "rounded_height_mm": float(h),
            "rounded_riser_volume_cm3": float(geometry.cylinder_volume(d / 10.0, h / 10.0))}


def round_up_to_step(size: RiserSize, step: float, system: str = units.METRIC) -> dict:
    """The sized riser rounded up to the shop's diameter step given in the unit
    of ``system`` (mm, or in on the inch grid: a 1/2 in step gives multiples of
    12.7 mm); the same keys as :func:`round_up_diameter`, all metric."""
    check_step(units.value_from("step_mm", step, system), system)
    if system != units.US:
        return round_up_diameter(size, step)
    d = units.round_up("diameter_mm", size.diameter_mm, step, system)
    h = size.h_over_d * d
    return {"step_mm": float(units.value_from("diameter_mm", step, system)), "rounded_diameter_mm": float(d),
            "rounded_height_mm": float(h),
            "rounded_riser_volume_cm3": float(geometry.cylinder_volume(d / 10.0, h / 10.0))}


def size_zone(store, pattern: str, zone: str, **options) -> RiserSize:
    """Size the riser of a stored zone: its volume, cooling area, thickness,
    width and length, its pattern's alloy and mould, and the mean pour
    temperature of the pattern's lots come from the log; ``options`` as
    :func:`size_riser` (a given one wins over the log's)."""
    z = store.zone(pattern, zone)

    def val(key):
        v = z.get(key)
        return None if missing(v) else v

    logged = {"mould": val("mould"), "thickness_mm": val("thickness_mm"), "width_mm": val("width_mm"),
              "length_mm": val("length_mm"), "pour_temp_c": store.mean_pour_temp(pattern),
              "joined_faces": val("joined_faces")}
    for k, v in logged.items():
        if options.get(k) is None:
            options[k] = v
    return size_riser(float(z["volume_cm3"]), float(z["cooling_area_cm2"]), options.pop("alloy", None)
                      or z["alloy"], **options)
