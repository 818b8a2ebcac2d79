"""The 3-D solve checked against outside references: Neumann's solution, the
project's 2-D solver on an axisymmetric casting, Chvorinov's rule, grid
convergence and the inscribed-circle hot spot of a T junction.

Grids are coarse (a few thousand to a few tens of thousands of cells) so that
the file stays cheap; the full-size runs are in the benchmark.
"""

import math

import numpy as np
import pytest
import trimesh
from scipy import optimize

from tests.support.neumann import neumann_lambda
from tracker.solid import run, stl
from tracker.solid.solve3d import FIXED, SECTION, solve3
from tracker.thermal import ThermalCase
from tracker.thermal import properties as P
from tracker.thermal import run as run_2d
from tracker.thermal.solver import PhaseCurve

STEEL = P.thermal_alloy("steel")


def _model(mesh, name="part.stl"):
    return stl.read_bytes(stl.to_bytes(mesh), "mm", name)


def _cylinder(r, h, z0):
    return trimesh.creation.cylinder(radius=r, height=h, sections=96).apply_translation((0, 0, z0 + h / 2))




def test_front_in_a_slab_matches_neumanns_solution():
    pure = STEEL.with_overrides(liquidus_c=1500.0, solidus_c=1500.0)
    t_wall, t_init, dz, n = 1000.0, 1550.0, 1e-3, 80
    edges = [np.array([0.0, 0.01, 0.02]), np.array([0.0, 0.01, 0.02]), np.arange(-1, n + 1) * dz]
    region = np.broadcast_to(np.array([FIXED] + [SECTION] * n, dtype=np.int8), (2, 2, n + 1)).copy()
    k = np.where(region == FIXED, 1e6, pure.conductivity_w_mk)
    heat = np.full(region.shape, pure.volumetric_heat)
    t0 = np.where(region == FIXED, t_wall, t_init)
    out = solve3(edges, region, np.zeros(region.shape, np.int8), k, heat, PhaseCurve.from_alloy(pure), t0,
                 0.2, 200.0, niyama_share=0.1, feeding_fraction=0.7)
    lam = neumann_lambda(pure, t_wall, t_init)
    alpha = pure.conductivity_w_mk / pure.volumetric_heat
    for depth_mm in (10, 20, 30):
        z = (depth_mm + 1) * 1e-3       # a cell of pure metal is solid once the front leaves its far face
        # Neumann's exact solution (Carslaw and Jaeger, Conduction of Heat in Solids, §11.2):
        # X = 2·lambda·sqrt(alpha·t), so the front reaches z at t = (z / (2·lambda))² / alpha
        assert out.solid_time_s[0, 0, depth_mm + 1] == pytest.approx((z / (2 * lam)) ** 2 / alpha, rel=0.03)


def test_disc_with_a_central_top_riser_matches_the_2d_solver():
    r, t, d, h = 48.0, 20.0, 48.0, 48.0
    casting, riser = _model(_cylinder(r, t, 0.0)), _model(_cylinder(d / 2, h, t), "riser.stl")
    res = run.run(casting, riser, "steel", cell_mm=4.0)     # 5 cells across the disc
    side = r * math.sqrt(math.pi)        # the 2-D check's disc has the plan area length × width
    ref = run_2d(ThermalCase("steel", "top", t, side, side, d, h), keep_maps=False)
    # the project's 2-D axisymmetric solve of the same casting (the issue: within 3 %); the whole
    # casting's time is the later of the 2-D section's own time and its junction under the riser
    assert res.casting_freeze_s == pytest.approx(max(ref.section_freeze_s, ref.junction_freeze_s), rel=0.03)
    assert res.riser_freeze_s == pytest.approx(ref.riser_freeze_s, rel=0.03)
    assert res.risers[0]["feeds"] == [1] and res.thermal_ok, res.reasons


# The rule and the sand-mould solution assume a metal with no thermal resistance freezing at one
# temperature: steel's properties with a high conductivity and a 0.5 K range (as tests/thermal does).
FAST_STEEL = STEEL.with_overrides(solidus_c=STEEL.liquidus_c - 0.5, conductivity_w_mk=1000.0)


def _freeze(mesh, cell, alloy=STEEL):
    return run.run(_model(mesh), None, alloy, cell_mm=cell).casting_freeze_s


def test_sphere_cube_and_plate_follow_chvorinovs_rule():
    shapes = {"sphere": (trimesh.creation.icosphere(subdivisions=4, radius=45.0), 6.0),
              "cube": (trimesh.creation.box((60.0, 60.0, 60.0)), 6.0),
              "plate": (trimesh.creation.box((120.0, 120.0, 20.0)), 5.0)}
    times = {k: _freeze(m, c, FAST_STEEL) for k, (m, c) in shapes.items()}
    mod = {k: float(m.volume / m.area) for k, (m, _) in shapes.items()}
    for a, b in (("sphere", "cube"), ("cube", "plate"), ("sphere", "plate")):
        # Chvorinov's rule (Chvorinov 1940): t_a / t_b = (M_a / M_b)². One B for all shapes ignores
        # the curvature of the mould's heat flow, which makes compact shapes freeze sooner than a
        # plate of the same modulus (Flemings 1974, the n·k·t/2r term): the band here is 35 %
        assert times[a] / times[b] == pytest.approx((mod[a] / mod[b]) ** 2, rel=0.35), (a, b, times)
        assert times[a] > times[b]
    # the sphere against Flemings' sand-mould solution with its curvature term (n = 2, r = 45 mm):
    # V/A = dT/(rho·H')·[2/sqrt(pi)·e·sqrt(t) + 2·k·t/(2r)], within 20 % on 15 cells across
    h_eff = FAST_STEEL.latent_j_kg + FAST_STEEL.specific_heat_j_kgk * (FAST_STEEL.pour_temp_c - FAST_STEEL.liquidus_c)
    d_t = 0.5 * (FAST_STEEL.liquidus_c + FAST_STEEL.solidus_c) - P.MOULD_INITIAL_C
    sand = P.mould("silica_sand")

    def flemings(t):
        q = 2 / math.sqrt(math.pi) * sand.effusivity * math.sqrt(t) + 2 * sand.conductivity_w_mk * t / (2 * 0.045)
        return d_t / (FAST_STEEL.density_kg_m3 * h_eff) * q - 0.015
    assert times["sphere"] == pytest.approx(optimize.brentq(flemings, 1.0, 1e7), rel=0.20)


def test_grid_convergence_of_a_cube():
    cube = trimesh.creation.box((48.0, 48.0, 48.0))
    t = [_freeze(cube, c) for c in (12.0, 8.0, 6.0)]
    # refining the grid (4, 6, 8 cells across) changes the freezing time less each time, at the
    # rate of the scheme's order (the solution converges; common practice for a grid study)
    # a first-order scheme's changes go as the cell: (8 - 6) / (12 - 8) = 0.5; allow up to 0.7
    assert abs(t[2] - t[1]) < 0.7 * abs(t[1] - t[0])
    assert t[0] > t[1] > t[2]


def test_hot_spot_of_a_t_junction_lies_where_the_inscribed_circle_puts_it():
    th = 40.0
    flange = trimesh.creation.box((5 * th, 2 * th, th)).apply_translation((0, 0, th / 2))
    web = trimesh.creation.box((th, 2 * th, 2 * th)).apply_translation((0, 0, 2 * th))
    tee = trimesh.boolean.union([flange, web], engine="manifold")
    res = run.run(_model(tee), None, "steel", cell_mm=10.0)
    spot = res.hot_spots[0]
    # inscribed-circle method (common practice): the largest circle touching the flange's outer face
    # and both re-entrant corners has its centre on the web's axis at y = (W²/4 + T²) / (2T) = 5T/8
    z_ref = (th**2 / 4 + th**2) / (2 * th)
    assert abs(spot["x_mm"]) <= res.cell_mm / 2 + 1e-9
    assert abs(spot["y_mm"]) <= res.cell_mm / 2 + 1e-9
    assert abs(spot["z_mm"] - z_ref) <= res.cell_mm / 2 + 1e-9
    assert spot["modulus_cm"] == pytest.approx(math.sqrt(spot["freeze_s"] / res.mould_b_s_cm2))
