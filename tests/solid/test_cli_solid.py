"""``pourback thermal --stl``: the JSON contract, units and one-line errors."""

import json

import numpy as np
import trimesh

from tracker.cli import main
from tracker.solid import stl
from tracker.solid.run import HOT_SPOT_KEYS, JSON_KEYS


def _files(tmp_path, scale=1.0):
    cast = trimesh.creation.box((100.0, 100.0, 30.0)).apply_translation((0, 0, 15.0))
    riser = trimesh.creation.cylinder(radius=25.0, height=50.0, sections=48).apply_translation((0, 0, 55.0))
    c, r = tmp_path / "cast.stl", tmp_path / "riser.stl"
    stl.write(cast.apply_scale(scale), c)
    stl.write(riser.apply_scale(scale), r, ascii_=True)
    return str(c), str(r)


def test_json_has_the_issues_keys(runner, tmp_path):
    c, r = _files(tmp_path)
    res = runner.invoke(main, ["thermal", "--alloy", "steel", "--stl", c, "--riser-stl", r, "--cell-mm", "10",
                               "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert tuple(d) == JSON_KEYS and d["model"] == "3-D"
    assert tuple(d["hot_spots"][0]) == HOT_SPOT_KEYS
    assert [tuple(x) for x in d["risers"]] == [("riser", "freeze_s", "feeds")]
    # a box: V = a·b·c (elementary geometry)
    assert d["volume_cm3"] == 300.0 and d["cell_mm"] == 10.0
    assert d["riser_freeze_s"] == d["risers"][0]["freeze_s"]


def test_inches_give_the_same_solid_and_the_box_shows_it(runner, tmp_path):
    c, _ = _files(tmp_path, scale=1 / 25.4)
    res = runner.invoke(main, ["thermal", "--alloy", "aluminum", "--stl", c, "--units", "in", "--cell-mm", "10"])
    assert res.exit_code == 0, res.output
    assert "100.0 x 100.0 x 30.0 mm" in res.output
    assert "Thermal check              FAIL: no riser given" in res.output


def test_a_mesh_with_a_hole_is_one_line(runner, tmp_path):
    box = trimesh.creation.box((10.0, 10.0, 10.0))
    box.update_faces(np.arange(len(box.faces)) > 1)
    stl.write(box, tmp_path / "open.stl")
    res = runner.invoke(main, ["thermal", "--alloy", "steel", "--stl", str(tmp_path / "open.stl")])
    assert res.exit_code == 1
    assert res.output == ("Error: open.stl: the mesh is not closed (4 open edge(s)); close the holes in the CAD "
                          "model and export it again\n")


def test_2d_options_are_refused_beside_the_stl(runner, tmp_path):
    c, _ = _files(tmp_path)
    res = runner.invoke(main, ["thermal", "--alloy", "steel", "--stl", c, "--thickness-mm", "20"])
    assert res.exit_code == 1
    assert "thickness-mm: got 20.0; the geometry comes from the STL with --stl" in res.output
    res = runner.invoke(main, ["thermal", "--alloy", "steel", "--riser-stl", c])
    assert "stl: got None; --riser-stl and --cell-mm go with --stl" in res.output


def test_a_riser_apart_from_the_casting_is_refused(runner, tmp_path):
    c, _ = _files(tmp_path)
    far = trimesh.creation.cylinder(radius=25.0, height=50.0).apply_translation((0, 0, 300.0))
    stl.write(far, tmp_path / "far.stl")
    res = runner.invoke(main, ["thermal", "--alloy", "steel", "--stl", c, "--riser-stl", str(tmp_path / "far.stl"),
                               "--cell-mm", "10"])
    assert res.exit_code == 1
    assert "far.stl: riser R1 (centre 0, 0, 300 mm) does not touch the casting" in res.output


def test_ductile_iron_says_which_mould_its_verdict_assumes(runner, tmp_path):
    c, r = _files(tmp_path)
    res = runner.invoke(main, ["thermal", "--alloy", "ductile_iron", "--mould", "chemically_bonded", "--stl", c,
                               "--riser-stl", r, "--cell-mm", "10"])
    assert res.exit_code == 0, res.output
    # DOMAIN.md (Karsay's pressure control, from memory): say which mould the verdict assumes
    assert "Note: ductile iron judged by pressure control, assuming a rigid (chemically bonded) mould" in res.output
