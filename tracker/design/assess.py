"""Judge stored risers by the rules, vectorised over a table of risers.

Each riser is judged against the zone (casting section) it feeds. Where
several risers of one revision feed the same zone, each is taken to feed an
equal share of the zone's volume and cooling area (the zone's modulus is
unchanged); split such a section into zones of its own for a finer check.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker import units
from tracker.design import geometry, rules
from tracker.design.alloys import ALLOYS, CaineConstants
from tracker.numbers import missing

RESULT_COLUMNS = [
    "pattern", "revision", "effective_from", "riser", "zone", "alloy", "placement", "top",
    "diameter_mm", "height_mm", "sleeve", "sleeve_kind", "sleeve_factor", "efficiency", "shrinkage",
    "section_modulus_cm", "riser_modulus_cm", "riser_geometric_modulus_cm", "modulus_ratio",
    "modulus_factor", "modulus_ok", "freezing_ratio", "volume_ratio", "caine_applied", "caine_curve_x",
    "caine_margin", "caine_ok", "feed_margin", "feed_ok", "neck_modulus_cm", "neck_ok",
    "feeding_distance_mm", "feeding_length_mm", "feeding_distance_ok", "riser_volume_cm3",
    "riser_weight_kg", "passes", "failed_rules", "notes",
    "rule_set", "mould", "modulus_required_ratio", "liquid_contraction", "feed_fraction",
    "neck_min_modulus_cm", "neck_max_modulus_cm", "oversized", "riser_needed", "section_shape",
    "width_mm", "failed_rules_text",
]

# How each failed rule reads in a sentence (``rule_words``).
RULE_WORDS = {
    "modulus": "modulus", "caine": "Caine", "feed_volume": "feed volume", "neck": "neck",
    "feeding_distance": "feeding distance", "oversized": "oversized riser",
}


def rule_words(failed_rules) -> str:
    """Failed rule keys ("modulus,caine,feed_volume" or a list) as words:
    "modulus, Caine, feed volume"; "" where none failed."""
    if missing(failed_rules):
        return ""
    keys = failed_rules.split(",") if isinstance(failed_rules, str) else list(failed_rules)
    return ", ".join(RULE_WORDS.get(k.strip(), k.strip().replace("_", " ")) for k in keys if k.strip())


def _alloy_constants(keys: np.ndarray) -> dict[str, np.ndarray]:
    """Rule set and liquid-contraction constants per row from ``ALLOYS`` (an
    alloy the program does not know is judged by the modulus sequence,
    without liquid contraction)."""
    known = [ALLOYS.get(str(k)) for k in keys]
    return {
        "pc": np.array([a is not None and a.rule_set == "pressure_control" for a in known], dtype=bool),
        "graphitic": np.array([a is not None and a.graphitic for a in known], dtype=bool),
        "per_100k": np.array([np.nan if a is None or a.liquid_contraction_per_100k is None
                              else a.liquid_contraction_per_100k for a in known], dtype=float),
        "liquidus": np.array([np.nan if a is None or a.liquidus_c is None else a.liquidus_c
                              for a in known], dtype=float),
        "superheat": np.array([np.nan if a is None or a.default_superheat_k is None
                               else a.default_superheat_k for a in known], dtype=float),
    }


def _moulds(values, n: int) -> np.ndarray:
    if values is None:
        return np.full(n, rules.DEFAULT_MOULD, dtype=object)
    return np.array([rules.check_mould(v) for v in values], dtype=object)


def assess_frame(risers: pd.DataFrame, modulus_factor: float = rules.DEFAULT_MODULUS_FACTOR, *,
                 system: str = units.METRIC) -> pd.DataFrame:
    """Rule margins for every row of ``risers`` (as from ``Store.risers_frame``).

    Needs the columns diameter_mm, height_mm, placement, volume_cm3,
    cooling_area_cm2, shrinkage, bare_efficiency, caine_a/b/c, and may have
    alloy, mould, sleeve_factor, sleeve_efficiency, neck_diameter_mm,
    thickness_mm, width_mm, length_mm, risers_on_zone, density_kg_dm3 and
    pour_temp_c (else the alloy's default superheat).

    Each row is judged by its alloy's rule set (``rule_set``): the modulus
    sequence (Wlodawer's modulus rule, Caine, feed volume, neck 1.1 x the
    section for non-graphitic alloys) or, for ductile iron, pressure control
    (Karsay): the neck freezes as graphite expansion starts (0.5-0.8 x the
    section's modulus), the riser outlasts the neck (factor x M_neck) and
    holds the liquid contraction (plus a green-sand mould-wall allowance); a
    riser of a steel's size is flagged ``oversized``; in a rigid mould a
    section of modulus 2.5 cm or more may need no riser.
    """
    df = risers.copy()
    r = _section_and_riser(df)
    r.update(_caine_rule(r))
    r.update(_neck_rule(r))
    r.update(_modulus_rule(r, modulus_factor))
    r["fm"] = rules.feed_margin(r["vr"], r["vc"], r["need"], r["eff"])
    r["feed_ok"] = (r["fm"] >= -1e-9) | ~r["riser_needed"]
    r["over"] = _oversized(r, modulus_factor)
    r.update(_feeding_distance(r))
    r["joined"] = geometry.exceeds_sphere_modulus(r["vc"], r["ac"])
    out = _result_frame(df, r, modulus_factor)
    failed = [_failed_rules(i, r) for i in range(len(df))]
    out["passes"] = [not fl for fl in failed]
    out["failed_rules"] = [",".join(fl) for fl in failed]
    out["notes"] = ["; ".join(_notes(i, r, system)) for i in range(len(df))]
    out["failed_rules_text"] = [rule_words(fl) for fl in failed]
    return out[RESULT_COLUMNS]


def _section_and_riser(df: pd.DataFrame) -> dict:
    """Per row (numpy arrays): the alloy's constants, the mould, the riser's
    share of its zone (``share``; volume ``vc`` cm³, cooling area ``ac`` cm²,
    modulus ``mc`` cm), the riser (diameter ``d`` and height ``h`` cm, sleeve
    factor ``f``, feeding efficiency ``eff``, volume ``vr`` cm³, geometric and
    effective moduli ``m_geo``, ``mr`` cm) and the metal to feed (``need``)."""
    n = len(df)

    def col(name, default=np.nan):
        return df[name].astype(float).to_numpy() if name in df else np.full(n, default, dtype=float)

    alloy_keys = df["alloy"].astype(str).to_numpy() if "alloy" in df else np.full(n, "", dtype=object)
    k = _alloy_constants(alloy_keys)
    pc = k["pc"]
    mould = _moulds(df["mould"].to_numpy() if "mould" in df else None, n)
    d = col("diameter_mm") / 10.0
    h = col("height_mm") / 10.0
    top = (df["placement"].astype(str) == "top").to_numpy()
    share = np.maximum(col("risers_on_zone", 1.0), 1.0)
    share = np.where(np.isnan(share), 1.0, share)
    vc = col("volume_cm3") / share
    ac = col("cooling_area_cm2") / share
    f = np.where(np.isnan(col("sleeve_factor")), 1.0, col("sleeve_factor"))
    eff = np.where(np.isnan(col("sleeve_efficiency")), col("bare_efficiency"), col("sleeve_efficiency"))
    # the metal to feed: solidification shrinkage (0 under pressure control in a rigid
    # mould) plus liquid contraction from the pour temperature to the liquidus
    beta = np.where(pc & (mould == "rigid"), 0.0, col("shrinkage"))
    pour = col("pour_temp_c")
    pour = np.where(np.isnan(pour), k["liquidus"] + k["superheat"], pour)
    liquid = np.nan_to_num(k["per_100k"] * np.maximum(pour - k["liquidus"], 0.0) / 100.0, nan=0.0)
    vr = geometry.cylinder_volume(d, h)
    m_geo = np.where(top, geometry.cylinder_modulus(d, h, "top"), geometry.cylinder_modulus(d, h, "side"))
    return {"col": col, "alloy_keys": alloy_keys, "graphitic": k["graphitic"], "pc": pc, "mould": mould,
            "d": d, "h": h, "top": top, "share": share, "vc": vc, "ac": ac, "mc": vc / ac, "f": f, "eff": eff,
            "beta": beta, "liquid": liquid, "need": np.maximum(beta, 0.0) + liquid, "vr": vr, "m_geo": m_geo,
            "mr": rules.effective_modulus(m_geo, f)}


def _caine_rule(r: dict) -> dict:
    """Caine's freezing ratio ``x`` = M_r / M_c, volume ratio ``y``, the
    curve's X at ``y`` (``xc``) and the margin x - xc, where the row has Caine constants."""
    x = r["mr"] / r["mc"]
    y = r["vr"] / r["vc"]
    a, b, c = r["col"]("caine_a"), r["col"]("caine_b"), r["col"]("caine_c")
    caine_applied = ~np.isnan(a)
    with np.errstate(divide="ignore", invalid="ignore"):
        xc = np.where(caine_applied & (y > b), a / (y - b) + c, np.where(caine_applied, np.inf, np.nan))
        margin = np.where(caine_applied, np.where(np.isfinite(xc), x - xc, -np.inf), np.nan)
    return {"ratio": x, "x": x, "y": y, "caine_applied": caine_applied, "xc": xc, "margin": margin}


def _neck_rule(r: dict) -> dict:
    """The neck's modulus (cm) against the window the rule set allows
    (``neck_lo``-``neck_hi``); ``neck_ok`` 1.0, 0.0, or NaN where no neck is given."""
    mc, mr, pc, graphitic = r["mc"], r["mr"], r["pc"], r["graphitic"]
    neck = r["col"]("neck_diameter_mm") / 10.0
    neck_m = geometry.bar_neck_modulus(neck)
    # modulus sequence: neck at least 1.1 x the section (non-graphitic alloys) and below the riser
    seq_neck = rules.neck_ok(neck_m, mc, mr, np.where(graphitic, 1.0, rules.NECK_FACTOR))
    neck_lo, neck_hi = rules.pc_neck_window(mc)
    neck_lo = np.where(pc, neck_lo, np.where(graphitic, mc, rules.NECK_FACTOR * mc))
    neck_hi = np.where(pc, neck_hi, mr)
    neck_ok = np.where(np.isnan(neck), np.nan,
                       np.where(pc, rules.pc_neck_ok(neck_m, mc) & (neck_m < mr), seq_neck).astype(float))
    return {"neck": neck, "neck_m": neck_m, "neck_lo": neck_lo, "neck_hi": neck_hi, "neck_ok": neck_ok}


def _modulus_rule(r: dict, modulus_factor: float) -> dict:
    """What the modulus rule asks, as a ratio to the section's modulus
    (``required``; 0 where no riser is needed), and whether the riser meets it."""
    mc, pc = r["mc"], r["pc"]
    required = np.where(pc, rules.pc_required_riser_modulus(mc, np.where(r["neck_ok"] == 1.0, r["neck_m"], np.nan),
                                                            modulus_factor) / mc,
                        modulus_factor)
    riser_needed = ~(pc & rules.riserless_possible(mc, r["mould"]))
    required = np.where(riser_needed, required, 0.0)
    return {"required": required, "riser_needed": riser_needed,
            "modulus_ok": r["ratio"] >= required * (1 - 1e-9)}


def _oversized(r: dict, modulus_factor: float) -> np.ndarray:
    """Pressure control: oversized where the riser reaches 1.2 x the larger of
    the section's modulus and the least riser the modulus and feed rules ask
    at this H/D."""
    d, h, top, mc = r["d"], r["h"], r["top"], r["mc"]
    hd = np.where(d > 0, h / d, 1.0)
    kk = np.where(top, geometry.modulus_per_diameter(hd, "top"), geometry.modulus_per_diameter(hd, "side"))
    with np.errstate(divide="ignore", invalid="ignore"):
        v_need = rules.feed_min_volume(r["vc"], r["need"], r["eff"])
    least = np.maximum(r["required"] * mc, r["f"] * kk * geometry.diameter_for_volume(np.maximum(v_need, 0.0), hd))
    return r["pc"] & rules.oversized(r["mr"], mc, least, modulus_factor)


def _feeding_distance(r: dict) -> dict:
    """The section's shape, and for steel the feeding distance (mm) against the
    feeding length (``fd_ok`` 1.0, 0.0, or NaN where not judged)."""
    col = r["col"]
    thick, width, length = col("thickness_mm"), col("width_mm"), col("length_mm")
    steel = r["alloy_keys"] == "steel"
    fd = np.where(steel, rules.feeding_distance_mm(thick, width, r["share"]), np.nan)
    fd_ok = np.where(np.isnan(fd) | np.isnan(length), np.nan, (length <= fd + 1e-9).astype(float))
    return {"shape": rules.section_shape(col("thickness_mm"), col("width_mm")), "steel": steel,
            "thick": thick, "width": width, "length": length, "fd": fd, "fd_ok": fd_ok}


def _result_frame(df: pd.DataFrame, r: dict, modulus_factor: float) -> pd.DataFrame:
    """The judged arrays as ``RESULT_COLUMNS`` (all but the failed rules and notes)."""
    out = pd.DataFrame({k: df[k].to_numpy() if k in df else None for k in
                        ("pattern", "revision", "effective_from", "riser", "zone", "alloy", "placement",
                         "top", "diameter_mm", "height_mm", "sleeve", "sleeve_kind")})
    kind = out["sleeve_kind"].astype(object)
    out["sleeve_kind"] = kind.where(kind.notna(), "none")
    columns = {
        "sleeve_factor": r["f"], "efficiency": r["eff"], "shrinkage": r["beta"], "section_modulus_cm": r["mc"],
        "riser_modulus_cm": r["mr"], "riser_geometric_modulus_cm": r["m_geo"], "modulus_ratio": r["ratio"],
        "modulus_factor": modulus_factor, "modulus_ok": r["modulus_ok"], "freezing_ratio": r["x"],
        "volume_ratio": r["y"], "caine_applied": r["caine_applied"], "caine_curve_x": r["xc"],
        "caine_margin": r["margin"], "caine_ok": np.where(r["caine_applied"], r["margin"] >= -1e-9, np.nan),
        "feed_margin": r["fm"], "feed_ok": r["feed_ok"], "neck_modulus_cm": r["neck_m"], "neck_ok": r["neck_ok"],
        "feeding_distance_mm": r["fd"], "feeding_length_mm": r["length"], "feeding_distance_ok": r["fd_ok"],
        "riser_volume_cm3": r["vr"], "riser_weight_kg": r["vr"] * r["col"]("density_kg_dm3", np.nan) / 1000.0,
        "rule_set": np.where(r["pc"], "pressure_control", "modulus_sequence"), "mould": r["mould"],
        "modulus_required_ratio": r["required"], "liquid_contraction": r["liquid"], "feed_fraction": r["need"],
        "neck_min_modulus_cm": r["neck_lo"], "neck_max_modulus_cm": r["neck_hi"], "oversized": r["over"],
        "riser_needed": r["riser_needed"], "section_shape": r["shape"], "width_mm": r["width"],
    }
    for name, values in columns.items():  # one at a time, as the columns were always added
        out[name] = values
    return out


def _failed_rules(i: int, r: dict) -> list[str]:
    """The rule keys row ``i`` fails, in RULE_WORDS order."""
    fl = []
    if not r["modulus_ok"][i]:
        fl.append("modulus")
    if r["caine_applied"][i] and not r["margin"][i] >= -1e-9:
        fl.append("caine")
    if not r["feed_ok"][i]:
        fl.append("feed_volume")
    if r["neck_ok"][i] == 0.0:
        fl.append("neck")
    if r["fd_ok"][i] == 0.0:
        fl.append("feeding_distance")
    if r["over"][i]:
        fl.append("oversized")
    return fl


def _notes(i: int, r: dict, system: str = units.METRIC) -> list[str]:
    """The notes of row ``i``: the rule set, the neck, Caine, feeding distance,
    a shared zone and joined faces; moduli worded in ``system``."""
    def cm(x):  # a modulus in the system's unit, metric text as it always was
        return f"{x:.2f} cm" if system != units.US else units.show("length_cm", x, system, 2)

    nt = []
    if r["pc"][i]:
        nt.extend(_pressure_control_notes(i, r, system, cm))
    elif not r["caine_applied"][i]:
        nt.append("Caine not applied: no constants for this alloy")
    share = r["share"]
    if not r["steel"][i]:
        nt.append("feeding distance not judged (the published rule is for steel)")
    elif np.isnan(r["fd_ok"][i]):
        missing = [units.column_name(name, system) for name, v in
                   (("thickness_mm", r["thick"][i]), ("width_mm", r["width"][i]), ("length_mm", r["length"][i]))
                   if np.isnan(v)]
        nt.append(f"feeding distance not judged (give the zone's {', '.join(missing)})")
    else:
        nt.append(f"feeding distance by the {r['shape'][i]} rule"
                  + (", between risers" if share[i] > 1 else ", to the section's end"))
    if share[i] > 1:
        nt.append(f"zone shared by {int(share[i])} risers: each judged on an equal share")
    if r["joined"][i]:
        nt.append("modulus above a same-volume sphere's: right only where faces are joined to other metal")
    return nt


def _pressure_control_notes(i: int, r: dict, system: str, cm) -> list[str]:
    """The notes of a row judged by pressure control: the mould, a section
    that needs no riser, the neck, an oversized riser."""
    neck_lo, neck_hi, neck_m = r["neck_lo"], r["neck_hi"], r["neck_m"]
    nt = [f"judged by pressure control ({str(r['mould'][i]).replace('_', ' ')} mould)"]
    if not r["riser_needed"][i]:
        limit = (f"{rules.PC_RISERLESS_MODULUS_CM:g} cm" if system != units.US
                 else cm(rules.PC_RISERLESS_MODULUS_CM))
        nt.append(f"section modulus {cm(r['mc'][i])} >= {limit} in a rigid mould: may be cast without a riser")
    if np.isnan(r["neck"][i]):
        nt.append("neck not judged: " + ("a top riser has no neck; pressure control needs one"
                                          if r["top"][i] else "give " + units.column_name("neck_diameter_mm", system)))
    elif r["neck_ok"][i] == 0.0:
        side = ("wide: the expansion pushes metal back into the riser" if neck_m[i] > neck_hi[i]
                else "narrow: it freezes before the liquid contraction ends")
        lo_hi = (f"{neck_lo[i]:.2f}-{neck_hi[i]:.2f} cm" if system != units.US else
                 f"{units.number('length_cm', neck_lo[i], system, 2)}-{cm(neck_hi[i])}")
        nt.append(f"neck modulus {cm(neck_m[i])} outside {lo_hi}, too {side}")
    if r["over"][i]:
        nt.append("oversized: the riser outlasts the section as a steel riser must; pressure control "
                  "needs it to outlast the neck only")
    return nt


def revision_in_effect(revisions: pd.DataFrame, on: str) -> pd.DataFrame:
    """The revision of each pattern in effect on date ``on`` (ISO string)."""
    r = revisions[revisions["effective_from"] <= on]
    if r.empty:
        return r
    return r.sort_values(["pattern", "effective_from"]).groupby("pattern", as_index=False).tail(1)


def caine_curve_points(a: float, b: float, c: float, y_max: float = 3.0, n: int = 200) -> pd.DataFrame:
    """Points of Caine's curve for drawing, Y from just above b to y_max."""
    cn = CaineConstants(a, b, c)
    y = np.geomspace(b + max(b, 1e-3) * 0.05, y_max, n)
    return pd.DataFrame({"volume_ratio": y, "freezing_ratio": cn.x_curve(y)})
