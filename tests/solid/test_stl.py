"""Reading STL: volume and area against their formulas, units, and the refusals."""

import math

import numpy as np
import pytest
import trimesh

from tracker.errors import BadInput, BadModel
from tracker.solid import stl, voxel


def _model(mesh, ascii_=False, units="mm"):
    return stl.read_bytes(stl.to_bytes(mesh, ascii_), units, "part.stl")


@pytest.mark.parametrize("ascii_", [False, True])
def test_box_volume_and_area_match_the_formulas(ascii_):
    m = _model(trimesh.creation.box((300.0, 200.0, 50.0)), ascii_)
    # a box: V = a·b·c, A = 2(ab + bc + ca) (elementary geometry)
    assert m.volume_cm3 == pytest.approx(300 * 200 * 50 / 1000.0, rel=1e-6)
    assert m.surface_area_cm2 == pytest.approx(2 * (300 * 200 + 200 * 50 + 50 * 300) / 100.0, rel=1e-6)
    assert m.bbox_text().startswith("300.0 x 200.0 x 50.0 mm")


def test_prism_volume_and_area_match_the_polygon_formulas():
    n, r, h = 48, 60.0, 120.0
    m = _model(trimesh.creation.cylinder(radius=r, height=h, sections=n))
    # binary STL holds float32 coordinates: within 1e-6
    # a regular n-gon of circumradius r: area n/2·r²·sin(2π/n), side 2r·sin(π/n) (elementary geometry)
    base = n / 2 * r**2 * math.sin(2 * math.pi / n)
    assert m.volume_cm3 == pytest.approx(base * h / 1000.0, rel=1e-6)
    assert m.surface_area_cm2 == pytest.approx((2 * base + n * 2 * r * math.sin(math.pi / n) * h) / 100.0, rel=1e-6)


def test_sphere_volume_and_area_approach_the_formulas():
    m = _model(trimesh.creation.icosphere(subdivisions=5, radius=50.0))
    # a sphere: V = 4/3·π·r³, A = 4·π·r² (an inscribed polyhedron of 20 480 faces lies within 0.2 %)
    assert m.volume_cm3 == pytest.approx(4 / 3 * math.pi * 50.0**3 / 1000.0, rel=2e-3)
    assert m.surface_area_cm2 == pytest.approx(4 * math.pi * 50.0**2 / 100.0, rel=2e-3)


def test_inches_are_scaled_to_mm():
    m = _model(trimesh.creation.box((2.0, 3.0, 1.0)), units="in")
    # 1 in = 25.4 mm exactly (international yard and pound, 1959)
    assert m.volume_cm3 == pytest.approx(6.0 * 25.4**3 / 1000.0, rel=1e-6)
    assert m.bbox_text().startswith("50.8 x 76.2 x 25.4 mm")
    with pytest.raises(BadInput, match="units: got 'cm'"):
        stl.check_units("cm")


def test_a_mesh_with_a_hole_is_refused_as_not_closed():
    box = trimesh.creation.box((10.0, 10.0, 10.0))
    box.update_faces(np.arange(len(box.faces)) > 0)
    with pytest.raises(BadModel, match=r"^part.stl: the mesh is not closed \(3 open edge\(s\)\)"):
        _model(box)


def test_an_inside_out_mesh_is_refused():
    box = trimesh.creation.box((10.0, 10.0, 10.0))
    box.invert()
    with pytest.raises(BadModel, match="the mesh is inside out"):
        _model(box)


def test_a_self_intersecting_mesh_is_refused_where_it_is_filled():
    a = trimesh.creation.box((40.0, 40.0, 40.0))
    b = trimesh.creation.box((40.0, 40.0, 40.0)).apply_translation((20.0, 0.0, 0.0))
    m = _model(trimesh.util.concatenate([a, b]))     # two closed shells, overlapping
    edges = tuple(voxel.axis_edges([-40, 60], 5.0, 0.0) for _ in range(3))
    with pytest.raises(BadModel, match="the mesh intersects itself"):
        voxel.fill(m.mesh, edges, m.name)


@pytest.mark.parametrize("data, words", [(b"", "the file is empty"), (b"solid x\nfacet nonsense\n", "")])
def test_empty_or_garbled_files_get_one_line(data, words):
    with pytest.raises(BadModel) as info:
        stl.read_bytes(data, "mm", "bad.stl")
    assert "\n" not in str(info.value) and words in str(info.value)


def test_the_fill_holds_the_volume_of_a_cylinder():
    cyl = trimesh.creation.cylinder(radius=40.0, height=80.0, sections=96)
    edges = tuple(voxel.axis_edges([-45, 45], 2.5, 0.0) for _ in range(3))
    inside = voxel.fill(cyl, edges) > 0
    g = voxel.Grid3(edges, inside, inside, 2.5)
    # V = π r² h (a 96-gon holds 99.93 % of it); cells of r/16 within 2 %
    assert float(g.volumes_mm3()[inside].sum()) == pytest.approx(math.pi * 40.0**2 * 80.0, rel=0.02)
