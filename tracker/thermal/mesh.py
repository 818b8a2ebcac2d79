"""How a casting section and its riser become a 2-D thermal model.

Two models, chosen from the riser's placement and the section's shape:

- **axisymmetric (r–z)** for a top riser on a compact section: the riser is
  a cylinder of its own diameter and height on the axis, standing on its
  neck (a round neck of the neck diameter, half a neck diameter long) or
  directly on the section; the section is a disc of the zone's thickness T
  whose plan area is the zone's (length × width where given, otherwise
  volume / T, so the disc holds the zone's volume).
- **planar (x–z)** for a side riser, and for a top riser on a long plate
  (length over width above 2): a cut along the section's length, taken as
  infinitely deep. A cut of infinite depth cools only through two faces, so
  each body keeps its 3-D modulus instead of its 3-D width: the section's
  2-D thickness is 2 × its cross-section modulus (W·T/(W + T), or 2·V/A of
  the zone where the width is unknown), the riser keeps its height H and
  gets the width that gives its 2-D modulus the 3-D riser's (D/2 at H = D),
  a round neck of diameter N becomes a slab of height N/2 (modulus N/4). The
  section runs from the riser (the plate's fed end) over its length to a
  free end; a top riser on a long plate stands at its middle and the model
  is one half, the middle a plane of symmetry.

What this ignores: the section's real plan shape (corners, bosses, other
sections joined to it), heat flow across the depth of a planar cut, mould
filling (the metal starts at the pouring temperature everywhere), fluid flow
and shrinkage in the liquid, the air gap, an open riser top (treated as
blind, like the rules), and properties varying with temperature.

A sleeve is a layer of its wall thickness (12 % of the riser diameter,
10-30 mm; from memory) around the riser's wall whose conductivity gives the
sleeve's modulus extension factor (``_sleeve_k``). The
mould is sand at 20 °C, deep enough that the heat does not reach its edge.
"""

from __future__ import annotations

import functools
import math
from dataclasses import asdict, dataclass

import numpy as np

import tracker.thermal.properties as props
from tracker import units
from tracker.design import geometry, rules
from tracker.errors import BadInput
from tracker.limits import RANGES
from tracker.thermal.solver import MOULD, NECK, RISER, SECTION, SLEEVE, Grid, PhaseCurve, solve

LONG_PLATE_RATIO = 2.0          # length / width above which a top riser's section is planar
NECK_LENGTH_SHARE = 0.5         # neck length as a share of its diameter (from memory: short necks)
DEFAULT_CELLS_ACROSS = 8        # cells across the section's thickness at default resolution
MAX_CELLS = 12_000              # coarser where a fine grid would hold more cells
MIN_CELLS_ACROSS = 3            # never fewer across the section: more cells instead, up to HARD_MAX_CELLS
HARD_MAX_CELLS = 50_000         # over this (at MIN_CELLS_ACROSS) a case is refused with the figures
BYTES_PER_CELL = 600            # model and solve per cell (tracemalloc: 340-360 B at a solve's peak; rounded up)
MAX_STEPS = 3_000               # a longer step where the solve would take more (said in the notes)
MIN_STEPS_PER_SECTION = 10      # fewer steps within the section's freezing time: refused
STEPS_PER_SECTION = 100         # time steps within the section's estimated freezing time
GROWTH = 1.3                    # cell growth into the mould


@dataclass(frozen=True)
class ThermalCase:
    """One riser on one casting section, in mm and °C.

    length_mm is the section's length from the riser to its free end (side
    riser) or its full length (top riser); width_mm its width (None where not
    known, then volume_cm3 and area_cm2 stand in).
    """

    alloy: str
    placement: str
    thickness_mm: float
    length_mm: float | None
    width_mm: float | None
    diameter_mm: float
    height_mm: float
    neck_diameter_mm: float | None = None
    sleeve_factor: float = 1.0
    pour_temp_c: float | None = None
    mould: str = "silica_sand"
    volume_cm3: float | None = None
    area_cm2: float | None = None
    label: str = ""
    joined_faces: str | None = None     # faces joined to the rest of the casting ("bottom;edges"): insulated

    def to_dict(self) -> dict:
        """The case as a plain dict (the keys of its fields)."""
        return asdict(self)


# The lengths of a case and their plausible range (tracker.limits.RANGES, the imports' own),
# checked before any grid is built: a grid of 1e-300 mm cells or 1e300 mm bodies never starts.
LENGTH_FIELDS = ("thickness_mm", "length_mm", "width_mm", "diameter_mm", "height_mm", "neck_diameter_mm")


def length_rule(name: str, system: str = units.METRIC) -> str:
    """The words of a length's range check, in ``system``."""
    lo, hi, _ = RANGES[name]
    sym = units.symbol(name, system)
    return (f"must lie between {units.value_in(name, lo, system):,.6g} {sym} and "
            f"{units.value_in(name, hi, system):,.6g} {sym}, the range the imports take; check the figure "
            "and its unit")


def validate(case: ThermalCase) -> ThermalCase:
    """``case`` where every figure is usable; BadInput naming the option otherwise."""
    geometry.check_placement(case.placement)
    for name in ("thickness_mm", "diameter_mm", "height_mm"):
        v = getattr(case, name)
        if v is None or not math.isfinite(v) or v <= 0:
            raise BadInput(name.replace("_", "-"), v, "must be a length above 0 mm")
    for name in ("length_mm", "width_mm", "neck_diameter_mm"):
        v = getattr(case, name)
        if v is not None and (not math.isfinite(v) or v <= 0):
            raise BadInput(name.replace("_", "-"), v, "must be a length above 0 mm, or left out")
    for name in LENGTH_FIELDS:
        v = getattr(case, name)
        lo, hi, _ = RANGES[name]
        if v is not None and not lo <= v <= hi:
            raise BadInput(name.replace("_", "-"), v, length_rule(name))
    if case.length_mm is None and case.volume_cm3 is None:
        raise BadInput("length-mm", None, "give the section's length and width (or the zone's volume)")
    if not (1.0 <= case.sleeve_factor <= 2.0):
        raise BadInput("sleeve-factor", case.sleeve_factor,
                       "a sleeve's modulus extension factor lies between 1.0 (bare sand) and 2.0")
    a = props.thermal_alloy(case.alloy)
    props.mould(case.mould)
    geometry.joined_faces(case.joined_faces)
    if case.pour_temp_c is not None and not (a.liquidus_c < case.pour_temp_c < a.liquidus_c + 500):
        raise BadInput("pour-temp-c", case.pour_temp_c,
                       f"must lie above the {case.alloy} liquidus {a.liquidus_c:g} °C and within 500 K of it")
    return case


def model_kind(case: ThermalCase) -> str:
    """"axisymmetric" or "planar" (see the module docstring)."""
    if case.placement == "side":
        return "planar"
    if case.length_mm and case.width_mm:
        lo, hi = sorted((case.length_mm, case.width_mm))
        if hi / lo > LONG_PLATE_RATIO:
            return "planar"
    return "axisymmetric"


@dataclass
class Built:
    """One case's model: the grid, per-cell properties (SI) and the time step, s."""

    grid: Grid
    k: np.ndarray
    heat: np.ndarray
    t_init: np.ndarray
    curve: PhaseCurve
    alloy: props.ThermalAlloy
    model: str
    pour_temp_c: float
    dt: float
    t_max: float
    cell_mm: float
    section_estimate_s: float
    riser_estimate_s: float
    notes: list


@functools.lru_cache(maxsize=512)
def _sleeve_k(factor: float, wall_mm: float, modulus_mm: float, alloy_key: str, mould_key: str,
              pour: float) -> float:
    """Conductivity of a sleeve wall that gives the modulus extension factor f, W/(m·K).

    Found by 1-D solves of the riser wall: a plate of the riser's modulus M
    (half thickness M) against sand, bare and behind a sleeve layer of the
    wall thickness; the sleeve's conductivity is set so that the sleeved
    plate freezes f² times later than the bare one (Chvorinov's rule with the
    effective modulus f·M). An exothermic sleeve is treated the same way
    through its catalogue factor, which already holds its heat release: the
    documented simplification of this model.
    """
    from scipy import optimize

    alloy = props.thermal_alloy(alloy_key)
    mould_ = props.mould(mould_key)
    cell = modulus_mm / 6.0

    t_est = _chvorinov_b(alloy, mould_, pour) * (modulus_mm / 10.0) ** 2

    def freeze(k_sleeve, dt, t_max):
        pts = [0.0, modulus_mm] + ([modulus_mm + wall_mm] if k_sleeve else [])
        ze = _axis(pts, cell, 0.0, 250.0)
        zc = 0.5 * (ze[1:] + ze[:-1])
        region = np.where(zc < modulus_mm, SECTION,
                          np.where(zc < modulus_mm + (wall_mm if k_sleeve else 0.0), SLEEVE, MOULD))[:, None]
        k = np.where(region == SECTION, alloy.conductivity_w_mk,
                     np.where(region == SLEEVE, k_sleeve or 1.0, mould_.conductivity_w_mk))
        heat = np.where(region == SECTION, alloy.volumetric_heat,
                        np.where(region == SLEEVE, props.SLEEVE_DENSITY_KG_M3 * props.SLEEVE_SPECIFIC_HEAT_J_KGK,
                                 mould_.volumetric_heat))
        grid = Grid(np.array([0.0, 0.001]), ze / 1000.0, region, False)
        out = solve(grid, k, heat, PhaseCurve.from_alloy(alloy),
                    np.where(region == SECTION, pour, props.MOULD_INITIAL_C), dt, t_max)
        st = out.solid_time_s[region == SECTION]
        return float(np.max(st)) if not np.isnan(st).any() else t_max

    bare = freeze(None, t_est / 40.0, 20.0 * t_est)
    target = factor**2 * bare
    lo, hi = math.log(0.01), math.log(mould_.conductivity_w_mk * 2)
    try:
        log_k = optimize.brentq(lambda lk: freeze(math.exp(lk), bare / 40.0, 1.5 * target) - target, lo, hi,
                                xtol=0.05)
        return float(math.exp(log_k))
    except ValueError:
        return 0.01       # even the best insulator tried does not reach f²: take it


def _chvorinov_b(alloy: props.ThermalAlloy, mould_: props.Mould, pour: float) -> float:
    """Mould constant from properties, s/cm² (Flemings 1974 via tracker.design.rules)."""
    t_melt = 0.5 * (alloy.liquidus_c + alloy.solidus_c)
    return rules.mould_constant_from_properties(
        alloy.density_kg_m3, alloy.latent_j_kg, alloy.specific_heat_j_kgk,
        max(pour - alloy.liquidus_c, 0.0), t_melt, props.MOULD_INITIAL_C,
        mould_.conductivity_w_mk, mould_.density_kg_m3, mould_.specific_heat_j_kgk)


def _axis(breaks, h, lo_margin, hi_margin, growth=GROWTH):
    """Cell edges (mm): uniform cells of about h between breaks, graded into the margins."""
    b = np.unique(np.round(np.asarray(breaks, dtype=float), 6))
    keep = [b[0]]
    for v in b[1:]:
        if v - keep[-1] > 0.3 * h:
            keep.append(v)
        else:
            keep[-1] = max(keep[-1], v) if len(keep) > 1 else keep[-1]
    b = np.array(keep)
    uniform = [b[0]]
    for lo, hi in zip(b[:-1], b[1:], strict=False):
        n = max(1, int(round((hi - lo) / h)))
        uniform.extend(np.linspace(lo, hi, n + 1)[1:])
    edges = np.array(uniform)

    def grade(margin):
        out, size, pos = [], h, 0.0
        while pos < margin - 1e-9:
            size = min(size * growth, 4.0 * h)
            pos += size
            out.append(pos)
        return np.array(out)

    if lo_margin > 0:
        edges = np.concatenate([edges[0] - grade(lo_margin)[::-1], edges])
    if hi_margin > 0:
        edges = np.concatenate([edges, edges[-1] + grade(hi_margin)])
    return edges


def _paint(xe, ze, rects):
    xc = 0.5 * (xe[1:] + xe[:-1])
    zc = 0.5 * (ze[1:] + ze[:-1])
    region = np.full((zc.size, xc.size), MOULD, dtype=np.int8)
    for x0, x1, z0, z1, code in rects:
        inx = (xc > x0) & (xc < x1)
        inz = (zc > z0) & (zc < z1)
        region[np.ix_(inz, inx)] = code
    return region


def _volume_cm3(case: ThermalCase) -> float:
    """The zone's volume, cm³, where the section's plan needs it (no width, or no length given)."""
    if case.volume_cm3 is None:
        raise BadInput("width-mm", None, "give the section's width (or the zone's volume)")
    return case.volume_cm3


def section_dims(case: ThermalCase, kind: str) -> tuple[float, float]:
    """(thickness, extent) of the section in the model, mm.

    axisymmetric: (T, disc radius); planar: (2-D thickness, length from the
    riser or, for a top riser, half the length).
    """
    t = case.thickness_mm
    if kind == "axisymmetric":
        plan = case.length_mm * case.width_mm if case.length_mm and case.width_mm else _volume_cm3(case) * 1000.0 / t
        return t, math.sqrt(plan / math.pi)
    if "edges" in (case.joined_faces or ""):
        t2 = t          # the plate's sides are joined: only its faces cool
    elif case.width_mm:
        t2 = case.width_mm * t / (case.width_mm + t)
    elif case.volume_cm3 and case.area_cm2:
        t2 = min(t, 20.0 * case.volume_cm3 / case.area_cm2)
    else:
        t2 = t
    length = case.length_mm or math.sqrt(_volume_cm3(case) * 1000.0 / t)
    if case.placement == "top":
        length /= 2.0
    return t2, length


def neck_note(neck_mm: float, riser_mm: float, system: str = "metric") -> str:
    """The note of a neck given wider than its riser, its figures in ``system``."""
    return (f"the neck ({units.show('diameter_mm', neck_mm, system)}) is wider than the riser: taken as "
            f"wide as the riser ({units.show('diameter_mm', riser_mm, system)})")


@dataclass
class _Sizes:
    """The figures the layout and the time step start from (mm, s, W/(m·K))."""

    t_sec: float                # the section's thickness in the model, mm
    extent: float               # disc radius or length from the riser, mm (``section_dims``)
    m_riser: float              # the riser's modulus, cm
    t_sec_est: float            # Chvorinov's freezing time of the section, s
    t_riser_est: float          # and of the riser (with its sleeve), s
    sleeved: bool
    wall: float                 # sleeve wall, mm (0 where bare)
    k_sleeve: float             # the sleeve wall's conductivity (the mould's where bare)
    margin: float               # mould around the metal, mm


def _sizes(case: ThermalCase, kind: str, alloy: props.ThermalAlloy, mould_: props.Mould, pour: float) -> _Sizes:
    """Section and riser sizes, Chvorinov's estimates, the sleeve and the mould margin of one case."""
    d, hgt = case.diameter_mm, case.height_mm
    t_sec, extent = section_dims(case, kind)
    m_riser = float(geometry.cylinder_modulus(d / 10, hgt / 10, case.placement))     # cm
    b = _chvorinov_b(alloy, mould_, pour)
    m_sec = t_sec * extent / (2 * extent + 2 * t_sec) / 10.0 if kind == "axisymmetric" else t_sec / 20.0
    t_sec_est = b * m_sec**2
    t_riser_est = b * (case.sleeve_factor * m_riser) ** 2
    sleeved = case.sleeve_factor > 1.0 + 1e-9
    wall = props.sleeve_wall_mm(d) if sleeved else 0.0
    k_sleeve = _sleeve_k(round(case.sleeve_factor, 3), round(wall, 1), round(m_riser * 10, 1), alloy.key,
                         mould_.key, round(pour)) if sleeved else mould_.conductivity_w_mk
    alpha = mould_.conductivity_w_mk / mould_.volumetric_heat
    t_end = 1.5 * max(t_sec_est, t_riser_est)
    # deep enough that the heat does not reach the mould's edge by the end of the solve
    margin = float(np.clip(3.5 * math.sqrt(alpha * t_end) * 1000.0, 25.0, 250.0))
    return _Sizes(t_sec, extent, m_riser, t_sec_est, t_riser_est, sleeved, wall, k_sleeve, margin)


@dataclass
class _Layout:
    """The bodies of one model as rectangles (x0, x1, z0, z1, region code) in mm, the
    breaks the grid lines keep, and the mould margins beyond x's ends."""

    rects: list
    xb: list
    zb: list
    x_lo: float
    x_hi: float


def _axisymmetric_layout(case: ThermalCase, s: _Sizes, neck_d: float | None, notes: list) -> _Layout:
    """Riser, neck and section disc on the axis (r from 0), riser on top."""
    t_sec, wall, sleeved = s.t_sec, s.wall, s.sleeved
    r_sec = s.extent
    r_riser = case.diameter_mm / 2.0
    ln = NECK_LENGTH_SHARE * neck_d if neck_d else 0.0
    z_rb = t_sec + ln
    z_rt = z_rb + case.height_mm
    rects = []
    if sleeved:
        rects.append((r_riser, r_riser + wall, z_rb, z_rt, SLEEVE))
    rects.append((0.0, r_riser, z_rb, z_rt, RISER))
    if neck_d:
        rects.append((0.0, neck_d / 2.0, t_sec, z_rb, NECK))
    rects.append((0.0, r_sec, 0.0, t_sec, SECTION))
    xb = [0.0, r_riser, r_sec] + ([r_riser + wall] if sleeved else []) + ([neck_d / 2] if neck_d else [])
    zb = [0.0, t_sec, z_rb, z_rt]
    if r_riser + wall > r_sec:
        notes.append("riser wider than the section's equivalent disc")
    return _Layout(rects, xb, zb, 0.0, s.margin)


def _side_layout(case: ThermalCase, s: _Sizes, neck_d: float | None) -> _Layout:
    """Planar cut: the riser left of the section's fed end (x = 0), joined by its neck."""
    t_sec, wall, sleeved, extent = s.t_sec, s.wall, s.sleeved, s.extent
    hgt = case.height_mm
    w = 2.0 * s.m_riser * 10 * hgt / (hgt - 2.0 * s.m_riser * 10)
    n2 = min(neck_d / 2.0, t_sec, hgt) if neck_d else min(t_sec, hgt)
    ln = max(NECK_LENGTH_SHARE * neck_d if neck_d else 0.0, wall)
    zc = min(t_sec / 2.0, hgt - n2 / 2.0)
    x_r1 = -ln
    x_r0 = x_r1 - w
    rects = []
    if sleeved:
        rects.append((x_r0 - wall, x_r1 + wall, 0.0, hgt, SLEEVE))
    rects.append((x_r0, x_r1, 0.0, hgt, RISER))
    if ln > 0:
        rects.append((x_r1 - 1e-6, 0.0, zc - n2 / 2.0, zc + n2 / 2.0, NECK))
    rects.append((0.0, extent, 0.0, t_sec, SECTION))
    xb = [x_r0, x_r1, 0.0, extent] + ([x_r0 - wall, x_r1 + wall] if sleeved else [])
    zb = [0.0, t_sec, hgt, zc - n2 / 2.0, zc + n2 / 2.0]
    return _Layout(rects, xb, zb, s.margin, s.margin)


def _top_planar_layout(case: ThermalCase, s: _Sizes, neck_d: float | None) -> _Layout:
    """Planar cut of a long plate: half the riser on top of the section's middle (x = 0)."""
    t_sec, wall, sleeved, extent = s.t_sec, s.wall, s.sleeved, s.extent
    hgt = case.height_mm
    w = 2.0 * s.m_riser * 10 * hgt / (hgt - s.m_riser * 10)
    n2 = min(neck_d / 2.0, w) if neck_d else 0.0
    ln = NECK_LENGTH_SHARE * neck_d if neck_d else 0.0
    z_rb = t_sec + ln
    z_rt = z_rb + hgt
    rects = []
    if sleeved:
        rects.append((w / 2.0, w / 2.0 + wall, z_rb, z_rt, SLEEVE))
    rects.append((0.0, w / 2.0, z_rb, z_rt, RISER))
    if neck_d:
        rects.append((0.0, n2 / 2.0, t_sec, z_rb, NECK))
    rects.append((0.0, extent, 0.0, t_sec, SECTION))
    xb = [0.0, w / 2.0, extent] + ([w / 2 + wall] if sleeved else []) + ([n2 / 2] if neck_d else [])
    zb = [0.0, t_sec, z_rb, z_rt]
    return _Layout(rects, xb, zb, 0.0, s.margin)


def _layout(case: ThermalCase, kind: str, s: _Sizes, notes: list) -> _Layout:
    """The model's bodies; a neck wider than the riser is taken as wide as the riser (noted)."""
    d = case.diameter_mm
    neck_d = case.neck_diameter_mm
    if neck_d is not None and neck_d > d:
        notes.append(neck_note(neck_d, d))
        neck_d = d
    if kind == "axisymmetric":
        return _axisymmetric_layout(case, s, neck_d, notes)
    if case.placement == "side":
        return _side_layout(case, s, neck_d)
    return _top_planar_layout(case, s, neck_d)


def _cells_at(lay: _Layout, h: float, margin_z: float) -> int:
    """Cells of the model at a section cell size of ``h`` mm (the axes' own count)."""
    xe = _axis(lay.xb, h, lay.x_lo, lay.x_hi)
    ze = _axis(lay.zb, h, margin_z, margin_z)
    return (xe.size - 1) * (ze.size - 1)


def _estimate_cells(lay: _Layout, h: float, margin: float) -> float:
    """About how many cells the model holds at cell size ``h`` mm, without building an axis."""
    graded = math.log(4.0) / math.log(GROWTH) + margin / (4.0 * h)     # cells of one graded margin
    span_x = max(lay.xb) - min(lay.xb)
    span_z = max(lay.zb) - min(lay.zb)
    return (span_x / h + 2 * graded) * (span_z / h + 2 * graded)


def _cell_size(lay: _Layout, t_sec: float, cells_across: int, margin: float, notes: list,
               thickness_mm: float | None = None) -> float:
    """The section's cell size, mm: t_sec / ``cells_across``, coarser where the model would
    hold more than MAX_CELLS cells (said in ``notes``). Refused (BadInput naming the cells and
    the memory) where even MIN_CELLS_ACROSS cells across the section would exceed it."""
    h = t_sec / cells_across
    for _ in range(8):
        est = _estimate_cells(lay, h, margin)
        if est <= MAX_CELLS:
            break
        h *= math.sqrt(est / MAX_CELLS) * 1.01
    while _cells_at(lay, h, margin) > MAX_CELLS:
        h *= 1.05
    across = t_sec / h
    if across < MIN_CELLS_ACROSS - 1e-9:
        h = t_sec / MIN_CELLS_ACROSS
        need = _estimate_cells(lay, h, margin)
        if need > 2 * HARD_MAX_CELLS or _cells_at(lay, h, margin) > HARD_MAX_CELLS:
            span_x = max(lay.xb) - min(lay.xb)
            span_z = max(lay.zb) - min(lay.zb)
            raise BadInput("thickness-mm", thickness_mm if thickness_mm is not None else round(t_sec, 3),
                           f"a model {span_x:,.0f} mm by {span_z:,.0f} mm with {MIN_CELLS_ACROSS} cells across "
                           f"this section needs about {need:,.0f} cells (about "
                           f"{need * BYTES_PER_CELL / 1e6:,.0f} MB); the limit is {HARD_MAX_CELLS:,} cells: the "
                           "section is too thin for the length and riser given; check the dimensions, or model "
                           "a shorter part of the section")
        notes.append(f"{MIN_CELLS_ACROSS} cells across the section take more than the {MAX_CELLS:,} cells of a "
                     "default grid: a slower solve")
        return h
    if across < cells_across - 1e-9:
        notes.append(f"grid coarsened to {h:.2f} mm cells ({across:.1f} across the section instead of "
                     f"{cells_across}) to stay within {MAX_CELLS:,} cells")
    return h


def _time_step(s: _Sizes, steps_per_section: int, notes: list, diameter_mm: float | None = None) -> float:
    """The time step, s: the section's estimated freezing time / ``steps_per_section``, longer
    where the solve would take more than MAX_STEPS (said in ``notes``); BadInput where that
    leaves fewer than MIN_STEPS_PER_SECTION steps within the section's freezing time."""
    dt = s.t_sec_est / steps_per_section
    span = 1.5 * max(s.t_sec_est, s.t_riser_est)
    if span / dt <= MAX_STEPS:
        return dt
    dt = span / MAX_STEPS
    per_section = s.t_sec_est / dt
    if per_section < MIN_STEPS_PER_SECTION:
        raise BadInput("diameter-mm", diameter_mm,
                       f"the riser freezes about {s.t_riser_est / s.t_sec_est:,.0f} times later than the section "
                       f"(about {s.t_riser_est:,.0f} s against {s.t_sec_est:,.3g} s by Chvorinov's rule); a solve "
                       f"of both needs over {span / s.t_sec_est * MIN_STEPS_PER_SECTION:,.0f} time steps, the "
                       f"limit is {MAX_STEPS:,}: check the dimensions (a riser that size does not feed a "
                       "section that thin)")
    notes.append(f"time step lengthened to {dt:.3g} s ({per_section:.0f} steps within the section's "
                 f"estimated freezing time instead of {steps_per_section}) to stay within {MAX_STEPS:,} steps")
    return dt


INSULATED_K = 1e-4      # W/(m·K): a joined face passes next to no heat (sand's is about 0.6)


def _runs(region: np.ndarray, lines, start, step) -> list:
    """Cells of the contiguous mould run of each line from ``start`` in direction ``step``."""
    out = []
    n = region.shape[0] if step[0] else region.shape[1]
    for line in lines:
        i = start
        while 0 <= i < n:
            cell = (i, line) if step[0] else (line, i)
            if region[cell] != MOULD:
                break
            out.append(cell)
            i += step[0] or step[1]
    return out


def joined_mask(region: np.ndarray, joined: str | None) -> np.ndarray:
    """The mould cells against the section's joined faces (``geometry.JOINED_FACES``): the
    run of mould below its bottom, above its top (where no riser or neck stands) and beyond
    its far edge."""
    mask = np.zeros(region.shape, bool)
    faces = (joined or "").split(";")
    sec = region == SECTION
    if not joined or not sec.any():
        return mask
    rows, cols = np.nonzero(sec.any(axis=1))[0], np.nonzero(sec.any(axis=0))[0]
    cells = []
    if "bottom" in faces:
        cells += _runs(region, cols, rows.min() - 1, (-1, 0))
    if "top" in faces:
        cells += _runs(region, cols, rows.max() + 1, (1, 0))
    if "edges" in faces:
        cells += _runs(region, rows, cols.max() + 1, (0, 1))
    for c in cells:
        mask[c] = True
    return mask


def _properties(region: np.ndarray, alloy: props.ThermalAlloy, mould_: props.Mould, k_sleeve: float,
                pour: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Conductivity W/(m·K), volumetric heat J/(m³·K) and starting temperature °C of every cell."""
    k = np.full(region.shape, mould_.conductivity_w_mk)
    heat = np.full(region.shape, mould_.volumetric_heat)
    metal = np.isin(region, (SECTION, RISER, NECK))
    k[metal] = alloy.conductivity_w_mk
    heat[metal] = alloy.volumetric_heat
    k[region == SLEEVE] = k_sleeve
    heat[region == SLEEVE] = props.SLEEVE_DENSITY_KG_M3 * props.SLEEVE_SPECIFIC_HEAT_J_KGK
    t_init = np.where(metal, pour, props.MOULD_INITIAL_C)
    return k, heat, t_init


def build(case: ThermalCase, cells_across: int = DEFAULT_CELLS_ACROSS,
          steps_per_section: int = STEPS_PER_SECTION) -> Built:
    """The grid, properties and time step of one case (cells about T / ``cells_across``
    mm; a time step of the section's estimated freezing time / ``steps_per_section``)."""
    case = validate(case)
    alloy = props.thermal_alloy(case.alloy)
    mould_ = props.mould(case.mould)
    pour = case.pour_temp_c if case.pour_temp_c is not None else alloy.pour_temp_c
    kind = model_kind(case)
    notes: list = []
    s = _sizes(case, kind, alloy, mould_, pour)
    lay = _layout(case, kind, s, notes)
    h = _cell_size(lay, s.t_sec, cells_across, s.margin, notes, case.thickness_mm)
    dt = _time_step(s, steps_per_section, notes, case.diameter_mm)
    xe = _axis(lay.xb, h, lay.x_lo, lay.x_hi)
    ze = _axis(lay.zb, h, s.margin, s.margin)
    region = _paint(xe, ze, lay.rects)
    k, heat, t_init = _properties(region, alloy, mould_, s.k_sleeve, pour)
    joined = geometry.joined_faces(case.joined_faces)
    if joined:
        k[joined_mask(region, joined)] = INSULATED_K
        notes.append(f"faces joined to the rest of the casting ({joined.replace(';', ', ')}) insulated")
    grid = Grid(xe / 1000.0, ze / 1000.0, region, kind == "axisymmetric")
    # joined faces do not cool: the section may take several times Chvorinov's estimate
    return Built(grid, k, heat, t_init, PhaseCurve.from_alloy(alloy), alloy, kind, pour, dt,
                 (32.0 if joined else 8.0) * max(s.t_sec_est, s.t_riser_est), h, s.t_sec_est, s.t_riser_est, notes)


__all__ = ["ThermalCase", "Built", "build", "model_kind", "validate"]
