"""``pourback casting`` (the model kept with its pattern) and ``thermal --pattern P --whole``
(the stored casting with the current revision's positioned risers)."""

import hashlib
import json

import pandas as pd
import trimesh

from tracker.cli import main
from tracker.log.store import Store
from tracker.solid import stl


def _log(tmp_path, runner, riser_rows):
    db = str(tmp_path / "t.db")
    (tmp_path / "patterns.csv").write_text(
        "pattern,description,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg\n"
        "PL-1,invented plate,steel,35.3,1,2.5\n")
    (tmp_path / "zones.csv").write_text("pattern,zone,volume_cm3,cooling_area_cm2\nPL-1,plate,300,310\n")
    (tmp_path / "risers.csv").write_text(
        "pattern,revision,effective_from,riser,zone,placement,top,diameter_mm,height_mm,x_mm,y_mm,z_mm,axis\n"
        + riser_rows)
    assert runner.invoke(main, ["init", "--db", db]).exit_code == 0
    for kind in ("patterns", "zones", "risers"):
        res = runner.invoke(main, ["import", kind, str(tmp_path / f"{kind}.csv"), "--db", db])
        assert res.exit_code == 0, res.output
    return db


def _plate(tmp_path):
    path = tmp_path / "plate.stl"
    stl.write(trimesh.creation.box((100.0, 100.0, 30.0)).apply_translation((0, 0, 15.0)), path)
    return path


def test_casting_is_stored_with_digest_and_units_and_writes_zones(tmp_path, runner):
    db = _log(tmp_path, runner, "PL-1,1,2026-01-05,R1,plate,top,blind,50,50,0,0,30,z\n")
    path = _plate(tmp_path)
    res = runner.invoke(main, ["casting", "PL-1", "--stl", str(path), "--db", db, "--write-zones",
                               str(tmp_path / "z.csv"), "--cell-mm", "10", "--json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    # the digest is the file's SHA-256 (FIPS 180-4, through hashlib)
    assert out["digest"] == hashlib.sha256(path.read_bytes()).hexdigest() and out["units"] == "mm"
    with Store(db) as s:
        row = s.casting("PL-1")
    assert row["stl"] == path.read_bytes() and row["digest"] == out["digest"]
    zones = pd.read_csv(tmp_path / "z.csv", encoding="utf-8-sig")
    assert list(zones["zone"])[:1] == ["H1"] and zones["volume_cm3"].sum() <= 300.0 + 1e-6
    res = runner.invoke(main, ["import", "zones", str(tmp_path / "z.csv"), "--db", db])
    assert res.exit_code == 0, res.output


def test_whole_solves_the_stored_casting_with_the_logged_risers(tmp_path, runner):
    db = _log(tmp_path, runner, "PL-1,1,2026-01-05,R1,plate,top,blind,60,60,0,0,30,z\n")
    runner.invoke(main, ["casting", "PL-1", "--stl", str(_plate(tmp_path)), "--db", db])
    res = runner.invoke(main, ["thermal", "--pattern", "PL-1", "--whole", "--cell-mm", "10", "--db", db, "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert [r["riser"] for r in d["risers"]] == ["R1"] and d["risers"][0]["feeds"] == [1]
    # the riser (modulus D/5 = 12 mm on the plate, common practice) outlives the 30 mm plate (M about 12 mm
    # with its edges but its centre under the riser)
    assert d["riser_freeze_s"] > 0


def test_a_riser_without_position_is_one_line(tmp_path, runner):
    db = _log(tmp_path, runner, "PL-1,1,2026-01-05,R1,plate,top,blind,60,60,,,,\n")
    runner.invoke(main, ["casting", "PL-1", "--stl", str(_plate(tmp_path)), "--db", db])
    res = runner.invoke(main, ["thermal", "--pattern", "PL-1", "--whole", "--db", db])
    assert res.exit_code == 1
    assert res.output == ("Error: risers: got 'R1'; riser R1 of PL-1 revision 1 has no position; give x_mm, y_mm, "
                          "z_mm (and axis) in the risers import\n")


def test_riser_positions_are_checked_on_import(tmp_path, runner):
    db = str(tmp_path / "t.db")
    _log(tmp_path, runner, "PL-1,1,2026-01-05,R1,plate,top,blind,60,60,0,0,30,z\n")
    (tmp_path / "r2.csv").write_text(
        "pattern,revision,effective_from,riser,zone,placement,top,diameter_mm,height_mm,x_mm,y_mm,z_mm,axis\n"
        "PL-1,2,2026-02-05,R1,plate,top,blind,60,60,0,,30,up\n")
    res = runner.invoke(main, ["import", "risers", str(tmp_path / "r2.csv"), "--db", db])
    assert res.exit_code == 1
    assert "row 2, column axis: got 'up'; axis must be one of x, -x, y, -y, z, -z" in res.output
    assert "row 2, column x_mm: got '0'; give all three of x_mm, y_mm and z_mm" in res.output


def test_the_pattern_files_3d_view_holds_the_model_hot_spots_and_slices(tmp_path, runner):
    from tracker.views.casting_3d import casting_view, has_casting

    db = _log(tmp_path, runner, "PL-1,1,2026-01-05,R1,plate,top,blind,60,60,0,0,30,z\n")
    with Store(db) as s:
        assert not has_casting(s, "PL-1")
    runner.invoke(main, ["casting", "PL-1", "--stl", str(_plate(tmp_path)), "--db", db])
    with Store(db) as s:
        view = casting_view(s, "PL-1", cell_mm=10.0)
    # a box: 8 corners, 12 triangles (elementary geometry)
    assert len(view["casting"]["x"]) == 8 and len(view["casting"]["i"]) == 12
    assert view["with_risers"] and [r["riser"] for r in view["risers_mesh"]] == ["R1"]
    assert [sl["plane"][0] for sl in view["slices"]] == ["x", "y", "z"]
    # every slice's cells are the metal's freezing times, in minutes, at most the casting's
    top = view["summary"]["casting_freeze_s"] / 60
    assert all(v is None or 0 <= v <= max(top, view["risers"][0]["freeze_s"] / 60) + 1e-9
               for sl in view["slices"] for row in sl["minutes"] for v in row)


def test_shrinkage_rejects_are_shown_at_the_zones_placed_on_the_model(tmp_path, runner):
    from tracker.views.casting_3d import rejects_at_zones

    db = _log(tmp_path, runner, "PL-1,1,2026-01-05,R1,plate,top,blind,60,60,0,0,30,z\n")
    (tmp_path / "z2.csv").write_text("pattern,zone,volume_cm3,cooling_area_cm2,x_mm,y_mm,z_mm\n"
                                     "PL-1,H1,100,120,0,0,20\n")
    (tmp_path / "lots.csv").write_text("lot,pattern,poured_on,heat,molds\nL1,PL-1,2026-02-02,H-1,10\n")
    (tmp_path / "inspections.csv").write_text(
        "lot,inspected_on,method,quantity,result,defect,zone\n"
        "L1,2026-02-03,visual,7,accept,,\nL1,2026-02-03,visual,3,reject,shrinkage,H1\n")
    for kind, f in (("zones", "z2.csv"), ("lots", "lots.csv"), ("inspections", "inspections.csv")):
        res = runner.invoke(main, ["import", kind, str(tmp_path / f), "--db", db])
        assert res.exit_code == 0, res.output
    with Store(db) as s:
        # the three castings logged as shrinkage rejects in zone H1, at its position
        assert rejects_at_zones(s, "PL-1") == [{"zone": "H1", "x_mm": 0.0, "y_mm": 0.0, "z_mm": 20.0,
                                                "shrinkage_rejects": 3}]
