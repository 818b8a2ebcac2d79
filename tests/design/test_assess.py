import json

import numpy as np
import pandas as pd
import pytest

from tests.support import GOOD
from tracker.cli import main
from tracker.design.assess import assess_frame
from tracker.design.sizing import size_riser
from tracker.log.ingest import import_file
from tracker.review.riser_check import check


def _write(path, header, rows):
    path.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


@pytest.mark.parametrize("alloy,placement,sleeve_f", [("steel", "side", 1.0), ("aluminum", "top", 1.0),
                                                       ("steel", "top", 1.3), ("ductile_iron", "side", 1.0)])
def test_check_agrees_with_size_on_the_same_geometry(tmp_path, mem_store, runner, alloy, placement, sleeve_f):
    # Caine (1949) and the modulus rule: a riser sized by `size` and stored in
    # the log must be judged at exactly the sizing point by `check`.
    vc, ac = 2000.0, 1100.0
    r = size_riser(vc, ac, alloy, placement, 1.0, sleeve_f)
    sleeve = ""
    files = [("patterns", "pattern,description,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg",
              [f"Q1,check test,{alloy},20,1,2"]),
             ("zones", "pattern,zone,volume_cm3,cooling_area_cm2", [f"Q1,z1,{vc},{ac}"])]
    if sleeve_f != 1.0:
        sleeve = "S1"
        files.append(("sleeves", "sleeve,kind,inner_diameter_mm,height_mm,modulus_factor,feeding_efficiency",
                      [f"S1,insulating,{r.diameter_mm},{r.height_mm},{sleeve_f},{r.efficiency}"]))
    files.append(("risers", "pattern,revision,effective_from,riser,zone,placement,top,diameter_mm,height_mm,sleeve",
                  [f"Q1,1,2026-01-05,R1,z1,{placement},blind,{r.diameter_mm!r},{r.height_mm!r},{sleeve}"]))
    for kind, header, rows in files:
        import_file(mem_store, kind, _write(tmp_path / f"{kind}.csv", header, rows))
    got = check(mem_store, on="2026-06-01").iloc[0]
    assert got["modulus_ratio"] == pytest.approx(r.freezing_ratio, rel=1e-9)
    assert got["volume_ratio"] == pytest.approx(r.volume_ratio, rel=1e-9)
    if r.caine_applied:
        assert got["caine_margin"] == pytest.approx(r.caine_margin, abs=1e-9)
    else:
        assert np.isnan(got["caine_margin"])
    assert bool(got["passes"])


def test_check_judges_every_current_riser_and_json_keys(good_store, runner, tmp_path, monkeypatch):
    frame = check(good_store, on="2026-06-01")
    assert len(frame) == 3
    # T-200's 60 mm bare top riser on a 300 cm³ / 260 cm² boss: M_r = 60/5 mm
    # = 1.2 cm against 1.2 x 1.154 = 1.385 cm required (modulus rule).
    bad = frame[frame["pattern"] == "T-200"].iloc[0]
    assert bad["modulus_ratio"] == pytest.approx(1.2 / (300 / 260))
    assert not bad["passes"] and "modulus" in bad["failed_rules"]


def test_check_cli_json(tmp_path, runner):
    from tracker.log.ingest import import_dir
    from tracker.log.store import Store

    db = tmp_path / "x.db"
    with Store(db) as s:
        import_dir(s, GOOD)
    res = runner.invoke(main, ["check", "--db", str(db), "--on", "2026-06-01", "--json"])
    assert res.exit_code == 0, res.output
    rows = json.loads(res.output)
    for key in ("pattern", "riser", "zone", "modulus_ratio", "caine_margin", "feed_ok", "passes"):
        assert key in rows[0]
    res = runner.invoke(main, ["check", "--db", str(db), "--pattern", "NOPE"])
    assert res.exit_code == 1
    assert "Error: unknown pattern 'NOPE'" in res.output


def test_revision_in_effect_follows_pour_date(good_store, tmp_path):
    import_file(good_store, "risers", _write(
        tmp_path / "r.csv", "pattern,revision,effective_from,riser,zone,placement,top,diameter_mm,height_mm",
        ["T-200,2,2026-04-01,R1,boss,top,open,80,80"]))
    assert check(good_store, "T-200", on="2026-03-31")["revision"].tolist() == ["1"]
    assert check(good_store, "T-200", on="2026-04-01")["revision"].tolist() == ["2"]


def test_feeding_distance_only_where_given_and_for_steel(good_store):
    frame = check(good_store, on="2026-06-01").set_index("zone")
    # Bishop-Pellini plate rule (from memory): 300 mm wide is over 5 T, a plate:
    # 4.5 x 40 mm = 180 mm >= 150 mm.
    assert frame.loc["flange", "feeding_distance_mm"] == pytest.approx(180.0)
    assert frame.loc["flange", "feeding_distance_ok"] == 1.0
    assert "by the plate rule" in frame.loc["flange", "notes"]
    # No thickness, width or length: not judged, never a pass or a fail.
    assert np.isnan(frame.loc["body", "feeding_distance_ok"])
    assert "feeding distance not judged (give the zone's thickness_mm, width_mm, length_mm)" \
        in frame.loc["body", "notes"]
    assert "not judged (the published rule is for steel)" in frame.loc["boss", "notes"]


def test_zone_shared_by_two_risers_splits_the_section():
    base = dict(pattern="P", revision="1", riser="R1", zone="z", alloy="steel", placement="side", top="blind",
                diameter_mm=100.0, height_mm=100.0, volume_cm3=2000.0, cooling_area_cm2=1100.0,
                shrinkage=0.035, bare_efficiency=0.14, caine_a=0.10, caine_b=0.03, caine_c=1.0)
    one = assess_frame(pd.DataFrame([{**base, "risers_on_zone": 1}])).iloc[0]
    two = assess_frame(pd.DataFrame([{**base, "risers_on_zone": 2}])).iloc[0]
    assert two["section_modulus_cm"] == pytest.approx(one["section_modulus_cm"])
    assert two["volume_ratio"] == pytest.approx(2 * one["volume_ratio"])
