"""The deterministic part of the demo: each zone's riser designed by the alloy's
own rules, the riser revisions, and the story the review should find."""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass

from tracker.demo.foundry import PATTERNS, SLEEVE_BY_CODE, SLEEVES, Sleeve, ZoneSpec
from tracker.demo.law import riser_margins
from tracker.design import geometry, rules
from tracker.design.alloys import Alloy, get_alloy
from tracker.design.sizing import size_riser, suggested_neck_mm


@dataclass(frozen=True)
class RiserRow:
    pattern: str
    revision: int
    effective_from: dt.date
    riser: str
    zone: str
    placement: str
    top: str
    diameter_mm: float
    height_mm: float
    sleeve: str
    neck_diameter_mm: float | None


def _ceil_to(x: float, step: float) -> float:
    return math.ceil(x / step - 1e-9) * step


def _neck_mm(section_modulus_cm: float, riser_modulus_cm: float) -> float:
    """A neck with M_neck about 1.1 · M_section (Wlodawer; common practice),
    rounded up to 5 mm while it stays below the riser's modulus."""
    target = rules.NECK_FACTOR * section_modulus_cm * 4.0 * 10.0
    d = _ceil_to(target, 5.0)
    if d / 40.0 >= riser_modulus_cm:
        d = math.ceil(target)
    return float(d)


def _design(alloy: Alloy, z: ZoneSpec, design: tuple) -> tuple[float, float, str, float | None]:
    """(diameter mm, height mm, sleeve code or "", neck mm or None) for one zone,
    designed by the alloy's own rule set (pressure control for ductile iron)."""
    kind, arg = design
    vc, ac = z.volume_cm3, z.cooling_area_cm2
    mc = vc / ac
    pc = alloy.rule_set == "pressure_control"

    def neck(d, h, sleeve):
        if z.placement != "side":
            return None
        if pc:  # the middle of the 0.5-0.8 x M_s window, to the mm
            return float(round(float(suggested_neck_mm(alloy, mc))))
        f = 1.0 if sleeve is None else sleeve.modulus_factor
        mr = f * float(geometry.cylinder_modulus(d / 10, h / 10, "side"))
        return _neck_mm(mc, mr)

    def check(d, h, sleeve):
        n = neck(d, h, sleeve)
        return _margins(alloy, z, d, h, sleeve, n)["passes"], n

    if kind == "sleeve":
        choices = [SLEEVE_BY_CODE[arg]] if arg else sorted(SLEEVES, key=lambda s: s.unit_cost)
        for s in choices:
            ok, n = check(s.inner_diameter_mm, s.height_mm, s)
            if ok or arg:
                return s.inner_diameter_mm, s.height_mm, s.sleeve, n
        kind, arg = "scale", 1.0  # no catalogue sleeve fits: a bare riser
    r = size_riser(vc, ac, alloy, z.placement, z.h_over_d)
    if arg >= 1.0:
        # up to the shop's 10 mm step; under pressure control a finer step where 10 mm
        # would make the riser oversized (a steel riser's size)
        for step in (10.0, 5.0, 1.0):
            d = _ceil_to(r.diameter_mm * arg, step)
            h = _ceil_to(d * z.h_over_d, step)
            if not pc or check(d, h, None)[0]:
                break
    else:
        d = round(r.diameter_mm * arg / 10.0) * 10.0
        h = round(d * z.h_over_d / 10.0) * 10.0
    return d, h, "", neck(d, h, None)


def _margins(alloy: Alloy, z: ZoneSpec, d: float, h: float, sleeve: Sleeve | None, neck: float | None) -> dict:
    """:func:`riser_margins` of a riser on ``z``, the zone as the zones file gives it
    (thickness for cast irons and steel, feeding length for steel only)."""
    return riser_margins(alloy, z.volume_cm3, z.cooling_area_cm2, z.placement, d, h, sleeve, neck,
                         z.thickness_mm if alloy.key != "aluminum" else None,
                         z.length_mm if alloy.key == "steel" else None)


def _weeks(weeks: int, end_week: str) -> list[dt.date]:
    """Mondays of the ``weeks`` ISO weeks ending at ``end_week`` ("YYYY-Www")."""
    try:
        year, week = str(end_week).upper().split("-W")
        end = dt.date.fromisocalendar(int(year), int(week), 1)
    except ValueError:
        raise ValueError(f"end_week: got {end_week!r}; must be an ISO week like 2026-W47") from None
    if int(weeks) < 2:
        raise ValueError(f"weeks: got {weeks!r}; must be a whole number of 2 or more")
    return [end - dt.timedelta(weeks=weeks - 1 - i) for i in range(int(weeks))]


def _iso_week(d: dt.date) -> str:
    y, w, _ = d.isocalendar()
    return f"{y}-W{w:02d}"


@dataclass
class Scenario:
    mondays: list[dt.date]
    resize_date: dt.date
    risers: list[RiserRow]
    margins: dict           # (pattern, revision, zone) -> margins dict


def build_scenario(weeks: int, end_week: str) -> Scenario:
    """The deterministic part: patterns, zones and riser revisions."""
    mondays = _weeks(weeks, end_week)
    resize_date = mondays[weeks // 2]
    risers: list[RiserRow] = []
    margins: dict = {}
    for i, p in enumerate(PATTERNS):
        alloy = get_alloy(p.alloy)
        rev1 = mondays[0] - dt.timedelta(days=120 + (53 * i) % 420)
        revisions: list[tuple[int, dt.date, dict]] = [(1, rev1, {})]
        if p.resize:
            revisions.append((2, resize_date, p.resize))
        for rev, eff, changes in revisions:
            for k, z in enumerate(p.zones, start=1):
                d, h, sleeve, neck = _design(alloy, z, changes.get(z.zone, z.design))
                risers.append(RiserRow(p.code, rev, eff, f"R{k}", z.zone, z.placement, z.top,
                                       d, h, sleeve, neck))
                margins[(p.code, rev, z.zone)] = _margins(alloy, z, d, h, SLEEVE_BY_CODE.get(sleeve), neck)
    return Scenario(mondays, resize_date, risers, margins)


def story(weeks: int = 26, end_week: str = "2026-W47") -> dict:
    """What the demo's review and suggestions should find, from its own configuration.

    Keys: ``undersized`` [(pattern, riser, zone)] failing a rule in their only
    revision; ``gas`` the pattern with a process gas problem; ``resized``
    (pattern, riser, zone, revision, effective_from ISO date); ``sound_examples``
    patterns whose risers pass every rule with low expected rejects; ``window``
    (first ISO week, last ISO week).
    """
    sc = build_scenario(weeks, end_week)
    resized_codes = {p.code for p in PATTERNS if p.resize}
    undersized, resized = [], None
    for r in sc.risers:
        m = sc.margins[(r.pattern, r.revision, r.zone)]
        if r.pattern in resized_codes:
            if r.revision == 1 and not m["passes"]:
                resized = (r.pattern, r.riser, r.zone, 2, sc.resize_date.isoformat())
        elif not m["passes"]:
            undersized.append((r.pattern, r.riser, r.zone))
    flagged = {u[0] for u in undersized} | resized_codes
    gas = next(p.code for p in PATTERNS if p.gas_rate)
    sound = [p.code for p in PATTERNS
             if p.code not in flagged and p.code != gas and p.cadence == "weekly"
             and all(sc.margins[(p.code, 1, z.zone)]["passes"] for z in p.zones)]
    return {"undersized": undersized, "gas": gas, "resized": resized,
            "sound_examples": sound,
            "window": (_iso_week(sc.mondays[0]), _iso_week(sc.mondays[-1]))}
