"""One 3-D solve of a casting and its risers, judged: ``run``.

The alloy's properties, the mould, the mould's starting temperature and the
default pouring temperature are those of the 2-D check
(tracker.thermal.properties); the mould constant B of Chvorinov's rule
comes from the same properties (Flemings 1974, tracker.design.rules) and
turns freezing times into moduli.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage

import tracker.thermal.properties as props
from tracker.design import rules
from tracker.errors import BadInput, BadModel
from tracker.solid import hotspots, voxel
from tracker.solid.solve3d import MOULD, RISER, SECTION, solve3
from tracker.solid.stl import Model
from tracker.solid.verdict import ISOLATED_MIN_SHARE, PRESSURE_CONTROL, feeding_verdict
from tracker.thermal.solver import PhaseCurve

STEPS_PER_CASTING = 60       # time steps within the casting's estimated freezing time
MOULD_DEPTHS = 3.0           # sand layer: this many heat penetration depths sqrt(alpha·t) of the slowest part
MAX_RISERS = 63             # one bit each in the solve's record of what feeds a cell
RIGID_MOULDS = ("chemically_bonded",)    # tracker.thermal.cases: a rigid mould is chemically bonded sand

JSON_KEYS = ("volume_cm3", "surface_area_cm2", "hot_spots", "casting_freeze_s", "risers", "riser_freeze_s",
             "isolated_liquid", "isolated_share", "min_niyama", "thermal_ok", "cells", "cell_mm", "solve_s",
             "model")
HOT_SPOT_KEYS = ("x_mm", "y_mm", "z_mm", "modulus_cm", "freeze_s", "volume_cm3")

SOLID_CAUTION = (
    "Screening solve, not a validated casting simulation: 3-D conduction on cubic cells with constant "
    "properties, no mould filling, fluid flow or air gap. Confirm by a full solidification simulation or "
    "trial pours; local codes, customer specifications and licensed practice prevail."
)


@dataclass
class SolidResult:
    """The judged 3-D solve: volumes cm³, areas cm², times s, positions mm."""

    volume_cm3: float
    surface_area_cm2: float
    hot_spots: list
    casting_freeze_s: float
    risers: list
    riser_freeze_s: float | None
    isolated_liquid: bool | None
    isolated_share: float | None
    min_niyama: float | None
    thermal_ok: bool
    cells: int
    cell_mm: float
    solve_s: float
    model: str = "3-D"
    reasons: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    alloy: str = ""
    mould: str = ""
    pour_temp_c: float = 0.0
    mould_b_s_cm2: float = 0.0
    bbox: str = ""
    grid: tuple = ()
    memory_mb: float = 0.0
    time_step_s: float = 0.0
    steps: int = 0
    isolated_at_mm: tuple | None = None
    niyama_threshold: float | None = None
    maps: dict = field(default_factory=dict, repr=False)

    def to_dict(self) -> dict:
        """The keys of ``pourback thermal --stl ... --json``."""
        d = {k: getattr(self, k) for k in JSON_KEYS}
        d["hot_spots"] = [{k: s[k] for k in HOT_SPOT_KEYS} for s in self.hot_spots]
        d["risers"] = [{k: r[k] for k in ("riser", "freeze_s", "feeds")} for r in self.risers]
        return d


def mould_constant(alloy: props.ThermalAlloy, mould: props.Mould, pour: float) -> float:
    """B of Chvorinov's rule from properties, s/cm² (as the 2-D check computes it)."""
    return rules.mould_constant_from_properties(
        alloy.density_kg_m3, alloy.latent_j_kg, alloy.specific_heat_j_kgk, max(pour - alloy.liquidus_c, 0.0),
        0.5 * (alloy.liquidus_c + alloy.solidus_c), props.MOULD_INITIAL_C,
        mould.conductivity_w_mk, mould.density_kg_m3, mould.specific_heat_j_kgk)


@dataclass
class Setup:
    """What the solve needs, before it runs: the grid, the properties and the time step."""

    grid: voxel.Grid3
    alloy: props.ThermalAlloy
    mould: props.Mould
    pour: float
    b: float
    dt: float
    t_max: float
    riser_names: list
    memory_mb: float


def _modulus_cm(mesh) -> float:
    return float(mesh.volume) / float(mesh.area) / 10.0


def prepare(casting: Model, risers: Model | list | None, alloy: str | props.ThermalAlloy, mould: str = "silica_sand",
            pour_temp_c: float | None = None, cell_mm: float | None = None,
            max_memory_mb: float = voxel.MAX_MEMORY_MB) -> Setup:
    """The grid and properties of one solve; the memory bound is checked before the cells are made.
    ``alloy``: a key of tracker.thermal.properties, or its properties (a ThermalAlloy); ``risers``: a
    model whose closed shells are the risers (named R1, R2, ... by their centres), or (name, mesh) pairs."""
    a = alloy if isinstance(alloy, props.ThermalAlloy) else props.thermal_alloy(alloy)
    m = props.mould(mould)
    pour = a.pour_temp_c if pour_temp_c is None else float(pour_temp_c)
    if not (a.liquidus_c < pour < a.liquidus_c + 500):
        raise BadInput("pour-temp-c", pour, f"must lie above the {a.key} liquidus {a.liquidus_c:g} °C and "
                       "within 500 K of it")
    b = mould_constant(a, m, pour)
    bodies = casting.bodies()
    if isinstance(risers, Model):
        shells = sorted(risers.bodies(), key=lambda r: tuple(np.round(r.centroid, 1)))
        named = [(f"R{i + 1}", b) for i, b in enumerate(shells)]
        riser_file = risers.name
    else:
        named, riser_file = list(risers or []), "the log's risers"
    riser_bodies = [b for _, b in named]
    if len(riser_bodies) > MAX_RISERS:
        raise BadInput("risers", len(riser_bodies), f"at most {MAX_RISERS} risers are solved together")
    m_cast = _modulus_cm(casting.mesh)
    m_slow = max([m_cast] + [1.3 * _modulus_cm(r) for r in riser_bodies])   # a riser on the casting: one face less
    t_cast, t_slow = b * m_cast**2, b * m_slow**2
    alpha = m.conductivity_w_mk / m.volumetric_heat
    margin = MOULD_DEPTHS * math.sqrt(alpha * 2.0 * t_slow) * 1000.0
    allm = [casting.mesh] + riser_bodies
    breaks = voxel.box_breaks([np.asarray(x.bounds, dtype=float) for x in allm])
    thin = voxel.thinnest_mm(bodies)
    margin = max(margin, thin)
    h, notes = voxel.choose_cell(thin, breaks, margin, cell_mm, max_memory_mb)
    edges = tuple(voxel.axis_edges(breaks[i], h, margin) for i in range(3))
    cells = int(np.prod([e.size - 1 for e in edges]))
    grid = voxel.Grid3(edges, np.full((0, 0, 0), MOULD, np.int8), np.zeros((0, 0, 0), np.int8), h, notes)
    names = [n for n, _ in named]
    grid.region, grid.body = _paint(casting, riser_bodies, edges, riser_file, names)
    mem = voxel.memory_mb(cells)
    notes.append(f"{cells:,} cells ({grid.shape[0]} x {grid.shape[1]} x {grid.shape[2]}), sand layer "
                 f"{margin:.0f} mm; memory bound {mem:,.0f} MB")
    return Setup(grid, a, m, pour, b, t_cast / STEPS_PER_CASTING, 4.0 * t_slow + 10 * t_cast / STEPS_PER_CASTING,
                 names, mem)


def _paint(casting: Model, riser_bodies, edges, riser_file: str, names: list[str]):
    """(region, body) of every cell: the casting, riser i (body i + 1) or mould."""
    inside = voxel.fill(casting.mesh, edges, casting.name) > 0
    if not inside.any():
        raise BadModel(casting.name, "no cell centre lies inside the casting; give a smaller --cell-mm")
    region = np.where(inside, SECTION, MOULD).astype(np.int8)
    body = np.zeros(region.shape, np.int8)
    grown = ndimage.binary_dilation(inside)
    for i, r in enumerate(riser_bodies):
        cells = (voxel.fill(r, edges, riser_file) > 0) & ~inside
        if (cells & (body > 0)).any():
            raise BadModel(riser_file, f"risers {names[body[cells & (body > 0)].max() - 1]} and {names[i]} "
                           "overlap; each closed shell is one riser")
        if not cells.any():
            raise BadModel(riser_file, f"riser {names[i]} holds no cell; give a smaller --cell-mm")
        if not (cells & grown).any():
            at = ", ".join(str(round(float(v)) + 0) for v in r.centroid)
            raise BadModel(riser_file, f"riser {names[i]} (centre {at} mm) does not touch the casting; check the "
                           "units and the position")
        region[cells] = RISER
        body[cells] = i + 1
    return region, body


def run(casting: Model, risers: Model | list | None, alloy: str | props.ThermalAlloy, mould: str = "silica_sand",
        pour_temp_c: float | None = None, cell_mm: float | None = None,
        max_memory_mb: float = voxel.MAX_MEMORY_MB, keep_maps: bool = True) -> SolidResult:
    """Solve the casting with its risers and judge it (see the package docstring)."""
    s = prepare(casting, risers, alloy, mould, pour_temp_c, cell_mm, max_memory_mb)
    g = s.grid
    metal = g.region != MOULD
    k = np.where(metal, s.alloy.conductivity_w_mk, s.mould.conductivity_w_mk)
    heat = np.where(metal, s.alloy.volumetric_heat, s.mould.volumetric_heat)
    t0 = np.where(metal, s.pour, props.MOULD_INITIAL_C)
    edges_m = [e / 1000.0 for e in g.edges]
    out = solve3(edges_m, g.region, g.body, k, heat, PhaseCurve.from_alloy(s.alloy), t0, s.dt, s.t_max,
                 niyama_share=props.NIYAMA_EVAL_SHARE, feeding_fraction=props.FEEDING_SOLID_FRACTION)
    return judge(casting, s, out, keep_maps)


def judge(casting: Model, s: Setup, out, keep_maps: bool = True) -> SolidResult:  # size: one record
    """The result of one solve (``prepare``'s setup, ``solve3``'s output)."""
    g = s.grid
    cast = g.region == SECTION
    metal = g.region != MOULD
    st = np.where(metal & np.isnan(out.solid_time_s), np.inf, out.solid_time_s)
    vol = g.volumes_mm3()
    centres = g.centres()
    exposed = hotspots.exposed_area_mm2(metal, cast, g.edges)
    spots = hotspots.find(st, cast, centres, vol, s.b, g.cell_mm, exposed)
    cast_vol = float(vol[cast].sum())
    risers, unfed = [], 0
    fed = out.fed
    contact = cast & ndimage.binary_dilation(g.region == RISER)
    for i, name in enumerate(s.riser_names):
        bit = np.int64(1) << i
        mine = g.body == i + 1
        feeds = [n + 1 for n, sp in enumerate(spots) if fed.ravel()[sp["cell"]] & bit]
        touch = contact & ndimage.binary_dilation(mine)
        section = cast & ((fed & bit) != 0)
        section = section if section.any() else cast
        risers.append({"riser": name, "freeze_s": float(np.max(st[mine])), "feeds": feeds,
                       "contact_freeze_s": float(np.max(st[touch])) if touch.any() else 0.0,
                       "contraction_end_s": float(np.nanmax(out.liquidus_time_s[section])),
                       "section_freeze_s": float(np.max(st[section]))})
    for sp in spots:
        bits = int(fed.ravel()[sp["cell"]])
        sp["fed_by"] = [name for i, name in enumerate(s.riser_names) if bits >> i & 1]
        unfed += not sp["fed_by"]
    iso, iso_share, iso_at = None, None, None
    if risers:
        cut = cast & (fed == 0)
        iso_share = float(vol[cut].sum()) / cast_vol
        iso = iso_share >= ISOLATED_MIN_SHARE
        if cut.any():
            lab, n = ndimage.label(cut)
            sizes = ndimage.sum(vol, lab, index=np.arange(1, n + 1))
            big = lab == (int(np.argmax(sizes)) + 1)
            idx = np.nonzero(big)
            iso_at = tuple(float(np.average(centres[a][idx[a]], weights=vol[big])) for a in range(3))
    thr = s.alloy.niyama_threshold
    ny = out.niyama[cast]
    min_ny = float(np.nanmin(ny)) if thr is not None and np.isfinite(ny).any() else None
    ok, reasons = feeding_verdict(s.alloy.key, rigid_mould=s.mould.key in RIGID_MOULDS, risers=risers,
                                  unfed_hot_spots=unfed, isolated_share=iso_share or 0.0, min_niyama=min_ny,
                                  niyama_threshold=thr)
    notes = list(g.notes)
    if s.alloy.key in PRESSURE_CONTROL:
        notes.append("ductile iron judged by pressure control, assuming a " + (
            "rigid (chemically bonded) mould: liquid sealed behind a frozen contact is fed by the graphite "
            "expansion" if s.mould.key in RIGID_MOULDS else
            "green-sand mould: its walls give way, so liquid sealed from every riser counts as a fault"))
    vox = cast_vol / 1000.0
    if abs(vox - casting.volume_cm3) > 0.1 * casting.volume_cm3:
        notes.append(f"the cells hold {vox:,.0f} cm³ of the model's {casting.volume_cm3:,.0f} cm³: the cell is "
                     "coarse for this shape; give a smaller --cell-mm")
    maps = {}
    if keep_maps:
        maps = {"edges_mm": g.edges, "region": g.region, "body": g.body, "solid_time_s": out.solid_time_s}
    return SolidResult(
        volume_cm3=casting.volume_cm3, surface_area_cm2=casting.surface_area_cm2, hot_spots=spots,
        casting_freeze_s=float(np.max(st[cast])), risers=risers,
        riser_freeze_s=min((r["freeze_s"] for r in risers), default=None), isolated_liquid=iso,
        isolated_share=iso_share, min_niyama=min_ny, thermal_ok=ok, cells=int(g.region.size),
        cell_mm=float(g.cell_mm), solve_s=float(out.solve_s), reasons=reasons, notes=notes,
        alloy=s.alloy.key, mould=s.mould.key, pour_temp_c=s.pour, mould_b_s_cm2=s.b, bbox=casting.bbox_text(),
        grid=g.shape, memory_mb=s.memory_mb, time_step_s=out.time_step_s, steps=out.steps, isolated_at_mm=iso_at,
        niyama_threshold=thr, maps=maps)
