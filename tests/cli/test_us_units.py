"""US customary units at the edges: `size --units us` and imports with customary
columns, checked against the metric path and against the `pint` units library
(an outside reference for every conversion the tests make)."""

import json
import math
import re
import shutil

import pandas as pd
import pint
import pytest
from click.testing import CliRunner

from tests.support import GOOD, SAMPLE
from tracker import units
from tracker.cli import main
from tracker.design import geometry
from tracker.design.alloys import get_alloy
from tracker.log.ingest import import_dir
from tracker.log.store import Store

U = pint.UnitRegistry()


def q(value, metric, us):
    """``value`` in ``metric`` units, in ``us`` units (pint's definitions)."""
    return U.Quantity(value, metric).to(us).magnitude


# --- size: the held-out sizing cases in both systems ----------------------------------

# The sizing cases of tests/design/test_sizing.py and tests/cli/test_cli_size.py (Caine's curve,
# Caine 1949, constants from DOMAIN.md's table; the modulus rule 1.2 x M_c with
# M = D/6 for a side cylinder of H/D 1, common practice): (alloy, placement, V cm³,
# A cm², H/D, sleeve factor).
CAINE_ALLOYS = ["steel", "aluminum", "gray_iron", "cast_iron_brass", "aluminum_bronze"]
CASES = ([(a, p, v, ar, hd, f) for a in CAINE_ALLOYS for p in ("top", "side")
          for v, ar, hd, f in [(2000, 1100, 1.0, 1.0), (150, 160, 1.5, 1.3), (40000, 9000, 0.8, 1.0)]]
         + [("aluminum", "top", 20000, 12000, 1.0, 1.5), ("ductile_iron", "side", 2000, 1100, 1.0, 1.0)])


def _size(runner, *args):
    res = runner.invoke(main, ["size", *args, "--json"])
    assert res.exit_code == 0, res.output
    return json.loads(res.output)


def _caine_reference_mm(vc, ac, alloy, placement, hd, f):
    """Caine's curve solved afresh with scipy's brentq from the full cylinder formulas."""
    from scipy.optimize import brentq

    cn = get_alloy(alloy).caine
    mc = vc / ac

    def g(d):
        x = f * geometry.cylinder_modulus(d, hd * d, placement) / mc
        return x - (cn.a / (geometry.cylinder_volume(d, hd * d) / vc - cn.b) + cn.c)

    d_b = (4 * cn.b * vc / (math.pi * hd)) ** (1 / 3)
    return 10 * brentq(g, d_b * (1 + 1e-9), 100 * d_b + 100, xtol=1e-14)


@pytest.mark.parametrize("alloy,placement,vc,ac,hd,f", CASES)
def test_held_out_cases_give_the_same_diameters_in_both_systems(runner, alloy, placement, vc, ac, hd, f):
    common = ["--alloy", alloy, "--placement", placement, "--h-over-d", str(hd), "--sleeve-factor", str(f)]
    metric = _size(runner, *common, "--volume-cm3", str(vc), "--area-cm2", str(ac))
    # the inputs in inches by pint's definitions
    us = _size(runner, "--units", "us", *common, "--volume-in3", repr(q(vc, "cm**3", "inch**3")),
               "--area-in2", repr(q(ac, "cm**2", "inch**2")))
    for key in ("diameter", "caine_min_diameter", "modulus_min_diameter", "feed_min_diameter", "height"):
        if metric[f"{key}_mm"] is None:
            assert us[f"{key}_in"] is None
            continue
        # back to mm by pint: the same riser to 0.01 mm
        assert q(us[f"{key}_in"], "inch", "mm") == pytest.approx(metric[f"{key}_mm"], abs=0.01)
    assert us["governing_rule"] == metric["governing_rule"]
    assert us["freezing_ratio"] == pytest.approx(metric["freezing_ratio"], rel=1e-9)
    if alloy in CAINE_ALLOYS:
        # Caine's curve (Caine, 1949), root by scipy brentq, to 0.01 mm
        want = _caine_reference_mm(vc, ac, alloy, placement, hd, f)
        assert q(us["caine_min_diameter_in"], "inch", "mm") == pytest.approx(want, abs=0.01)


def test_modulus_rule_worked_in_inches(runner):
    # Modulus rule, common practice: a side cylinder of H/D 1 has M = D/6 (cooling
    # area: side and top), so 1.2 x M_c needs D = 7.2 x M_c; a section of
    # 100 in³ and 80 in² (M_c = 1.25 in) needs D = 9 in.
    d = _size(runner, "--units", "us", "--alloy", "steel", "--volume-in3", "100", "--area-in2", "80")
    assert d["section_modulus_in"] == pytest.approx(1.25, rel=1e-12)
    assert d["modulus_min_diameter_in"] == pytest.approx(9.0, rel=1e-12)


SIZE_US_KEYS = ["diameter_in", "height_in", "riser_volume_in3", "riser_modulus_in", "section_modulus_in",
                "caine_min_diameter_in", "modulus_min_diameter_in", "feed_min_diameter_in"]


def test_size_json_key_contract_in_us(runner):
    metric = _size(runner, "--alloy", "steel", "--volume-cm3", "2000", "--area-cm2", "1100",
                   "--thickness-mm", "60", "--width-mm", "300", "--length-mm", "200", "--step-mm", "10")
    us = _size(runner, "--units", "us", "--alloy", "steel", "--volume-in3", repr(q(2000, "cm**3", "inch**3")),
               "--area-in2", repr(q(1100, "cm**2", "inch**2")), "--thickness-in", repr(q(60, "mm", "inch")),
               "--width-in", repr(q(300, "mm", "inch")), "--length-in", repr(q(200, "mm", "inch")),
               "--step-in", "0.5")
    # issue 18: these keys, exactly, beside the unchanged ratios and governing rule
    for key in SIZE_US_KEYS + ["freezing_ratio", "volume_ratio", "governing_rule"]:
        assert key in us, key
    metric_only = [k for k in us if k.endswith(("_mm", "_cm", "_cm2", "_cm3", "_kg", "_per_kg"))
                   or k in ("pour_temp_c",)]
    assert metric_only == []
    # every other key is the converted twin of a metric one, one for one
    twins = {"diameter_in": "diameter_mm", "riser_weight_lb": "riser_weight_kg", "pour_temp_f": "pour_temp_c",
             "feeding_distance_in": "feeding_distance_mm", "rounded_diameter_in": "rounded_diameter_mm",
             "step_in": "step_mm", "neck_modulus_in": "neck_modulus_cm"}
    for us_key, metric_key in twins.items():
        assert metric_key in metric and us_key in us
    # one key for one: the keys without a unit are the same, every other is the metric key's twin
    assert sorted(us) == sorted(units.column_name(k, "us") for k in metric)
    # pint: lb and °F of the metric figures
    assert us["riser_weight_lb"] == pytest.approx(q(metric["riser_weight_kg"], "kg", "lb"), rel=1e-9)
    assert us["pour_temp_f"] == pytest.approx(U.Quantity(metric["pour_temp_c"], "degC").to("degF").magnitude)


def test_us_rounds_up_on_the_inch_grid(runner):
    d = _size(runner, "--units", "us", "--alloy", "steel", "--volume-in3", "122", "--area-in2", "170",
              "--step-in", "0.5")
    # a 1/2 in step: the smallest multiple of 0.5 in at or above the sized diameter
    assert d["rounded_diameter_in"] == pytest.approx(math.ceil(d["diameter_in"] / 0.5) * 0.5, abs=1e-12)
    assert d["step_in"] == 0.5


def test_us_default_step_is_half_an_inch(tmp_path, runner):
    db = tmp_path / "log.db"
    with Store(db) as s:
        import_dir(s, GOOD)
    d = _size(runner, "--db", str(db), "--units", "us", "--pattern", "T-100", "--zone", "flange")
    # common practice: US shops step riser diameters by 1/2 in
    assert d["step_in"] == 0.5
    assert (d["rounded_diameter_in"] / 0.5) == pytest.approx(round(d["rounded_diameter_in"] / 0.5), abs=1e-9)


@pytest.mark.parametrize("args,message", [
    (["--units", "us", "--volume-cm3", "2000", "--area-in2", "170"],
     "Error: --volume-cm3 is in metric units (cm³) but this command works in us (the log's setting or --units); "
     "give --volume-in3 (in³) instead, or add --units metric"),
    (["--volume-in3", "122", "--area-cm2", "1100"],
     "Error: --volume-in3 is in us units (in³) but this command works in metric"),
    (["--units", "us", "--volume-in3", "122", "--area-in2", "170", "--step-mm", "10"],
     "Error: --step-mm is in metric units (mm)"),
])
def test_options_of_the_other_system_are_refused(runner, args, message, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # no log here: metric unless --units
    res = runner.invoke(main, ["size", "--alloy", "steel", *args])
    assert res.exit_code == 2
    assert message in res.output
    assert "Traceback" not in res.output


def test_size_follows_the_logs_unit_system(tmp_path, runner):
    db = tmp_path / "log.db"
    assert runner.invoke(main, ["init", "--db", str(db), "--units", "us"]).exit_code == 0
    d = _size(runner, "--db", str(db), "--alloy", "steel", "--volume-in3", "122", "--area-in2", "170")
    assert "diameter_in" in d
    d = _size(runner, "--db", str(db), "--units", "metric", "--alloy", "steel", "--volume-cm3", "2000",
              "--area-cm2", "1100")
    assert "diameter_mm" in d


def test_us_bad_value_is_named_in_us(runner):
    res = runner.invoke(main, ["size", "--units", "us", "--alloy", "steel", "--volume-in3", "-1",
                               "--area-in2", "10"])
    assert res.exit_code == 1
    # 0.001 cm³ = 6.1023744e-05 in³ and 1e8 cm³ = 6,102,374.4 in³ (1 in = 2.54 cm exactly), each
    # rounded inwards so that the bound stays true
    assert res.output.strip() == ("Error: --volume-in3: got -1.0; volume_in3 must be a number of at least "
                                  "6.10238e-05 and at most 6,102,374 in³; check the figure and its unit")


# --- imports: a US-unit file gives the same log as its metric twin --------------------------

# metric column -> (customary column, pint metric unit, pint customary unit)
TWINS = {
    "casting_weight_kg": ("casting_weight_lb", "kilogram", "pound"),
    "metal_cost_per_kg": ("metal_cost_per_lb", "1/kilogram", "1/pound"),
    "volume_cm3": ("volume_in3", "centimeter**3", "inch**3"),
    "cooling_area_cm2": ("cooling_area_in2", "centimeter**2", "inch**2"),
    "thickness_mm": ("thickness_in", "millimeter", "inch"),
    "length_mm": ("length_in", "millimeter", "inch"),
    "width_mm": ("width_in", "millimeter", "inch"),
    "inner_diameter_mm": ("inner_diameter_in", "millimeter", "inch"),
    "height_mm": ("height_in", "millimeter", "inch"),
    "diameter_mm": ("diameter_in", "millimeter", "inch"),
    "neck_diameter_mm": ("neck_diameter_in", "millimeter", "inch"),
    "pour_temp_c": ("pour_temp_f", "degC", "degF"),
}
KINDS = ("patterns", "zones", "sleeves", "risers", "lots", "inspections")


def _us_twin(src, dst):
    """Copy the import files of ``src`` to ``dst`` with every metric measure in
    its customary column, converted by pint (full precision)."""
    dst.mkdir()
    for kind in KINDS:
        frame = pd.read_csv(src / f"{kind}.csv", dtype=str, keep_default_na=False)
        out = {}
        for col in frame.columns:
            if col in TWINS:
                name, metric, us = TWINS[col]
                out[name] = [repr(float(U.Quantity(float(v), metric).to(us).magnitude)) if v != "" else ""
                             for v in frame[col]]
            else:
                out[col] = frame[col]
        pd.DataFrame(out).to_csv(dst / f"{kind}.csv", index=False)


def _tables(store):
    tables = {}
    for kind in (*KINDS, "revisions"):
        frame = store.table(kind)
        tables[kind] = frame.drop(columns=[c for c in ("recorded_at",) if c in frame.columns])
    return tables


@pytest.mark.parametrize("src", [SAMPLE, GOOD], ids=["sample_data", "tests-data-good"])
def test_us_import_gives_the_same_log_as_its_metric_twin(tmp_path, src):
    _us_twin(src, tmp_path / "us")
    # the twin really is in customary units
    zones = pd.read_csv(tmp_path / "us" / "zones.csv")
    assert "volume_in3" in zones.columns and "volume_cm3" not in zones.columns
    with Store(tmp_path / "metric.db") as m, Store(tmp_path / "us.db") as u:
        import_dir(m, src, by="qe")
        import_dir(u, tmp_path / "us", by="qe")
        a, b = _tables(m), _tables(u)
    for kind in a:
        assert list(a[kind].columns) == list(b[kind].columns), kind
        assert len(a[kind]) == len(b[kind]) > 0, kind
        for row_a, row_b in zip(a[kind].itertuples(index=False), b[kind].itertuples(index=False), strict=False):
            for col, x, y in zip(a[kind].columns, row_a, row_b, strict=False):
                if isinstance(x, float) and not pd.isna(x):
                    # floats agree to 1e-9 relative (pint there, tracker.units back)
                    assert y == pytest.approx(x, rel=1e-9), (kind, col)
                else:
                    assert (pd.isna(x) and pd.isna(y)) or x == y, (kind, col, x, y)


def test_a_file_giving_both_columns_is_refused(tmp_path, mem_store):
    from tracker.errors import BadFile
    from tracker.log.ingest import import_file

    import_file(mem_store, "patterns", GOOD / "patterns.csv")
    f = tmp_path / "zones.csv"
    f.write_text("pattern,zone,volume_cm3,cooling_area_cm2,thickness_mm,thickness_in\n"
                 "T-100,flange,2000,1100,40,1.6\n")
    with pytest.raises(BadFile) as exc:
        import_file(mem_store, "zones", f)
    assert "columns thickness_mm and thickness_in both give the thickness" in str(exc.value)
    assert mem_store.count("zones") == 0


def test_a_range_is_named_in_the_columns_unit(tmp_path, mem_store):
    from tracker.errors import BadFile
    from tracker.log.ingest import import_file

    f = tmp_path / "sleeves.csv"
    f.write_text("sleeve,kind,inner_diameter_in,height_in,modulus_factor,feeding_efficiency\n"
                 "S1,insulating,0.1,4,1.2,0.3\n")
    with pytest.raises(BadFile) as exc:
        import_file(mem_store, "sleeves", f)
    # 5 mm is 0.1968504 in (pint), 3000 mm is 118.1102 in; a bound is printed so that it stays
    # true (issue 27): the lower one rounded up, the upper one down, to 6 significant digits
    low, high = q(5, "mm", "inch"), q(3000, "mm", "inch")
    assert 0.19685 < low < 0.196851 and 118.11 < high < 118.111
    assert ("sleeves.csv, row 2, column inner_diameter_in: got '0.1'; inner_diameter_in must be a number of "
            "at least 0.196851 and at most 118.11 in") in str(exc.value)
    # 0.19685 in is below 5 mm: refused, and the message does not claim it is allowed
    f.write_text("sleeve,kind,inner_diameter_in,height_in,modulus_factor,feeding_efficiency\n"
                 "S1,insulating,0.19685,4,1.2,0.3\n")
    with pytest.raises(BadFile) as exc:
        import_file(mem_store, "sleeves", f)
    assert "got '0.19685'; inner_diameter_in must be a number of at least 0.196851 and" in str(exc.value)
    f.write_text("sleeve,kind,inner_diameter_in,height_in,modulus_factor,feeding_efficiency\n"
                 "S1,insulating,0.196851,4,1.2,0.3\n")
    assert import_file(mem_store, "sleeves", f).added == 1


def test_a_pour_temperature_in_fahrenheit(tmp_path):
    shutil.copytree(GOOD, tmp_path / "good")
    lots = tmp_path / "good" / "lots.csv"
    frame = pd.read_csv(lots, dtype=str, keep_default_na=False)
    # 1600 °C is 2912 °F (pint's offset units)
    assert U.Quantity(1600, "degC").to("degF").magnitude == pytest.approx(2912)
    frame = frame.rename(columns={"pour_temp_c": "pour_temp_f"})
    frame["pour_temp_f"] = ["2912" if v == "1600" else repr(U.Quantity(float(v), "degC").to("degF").magnitude)
                            if v else "" for v in frame["pour_temp_f"]]
    frame.to_csv(lots, index=False)
    with Store(tmp_path / "log.db") as s:
        import_dir(s, tmp_path / "good")
        temps = s.table("lots").set_index("lot")["pour_temp_c"]
    assert temps["L1"] == pytest.approx(1600.0, abs=1e-9)


# --- no metric unit label left in --units us output ----------------------------------------


# A metric unit as a label, a suffix or an option: mm, cm, cm², cm³, kg, °C, "per kg"
# (SI brochure, 9th edition, table 2 and 4 spellings; "per kg" is the trade's money per mass).
METRIC_LABEL = re.compile(r"\bmm\b|\bcm\b|cm²|cm³|\bkg\b|°C|per kg|_mm\b|_cm\b|_cm2\b|_cm3\b|_kg\b|_per_kg\b")


def _visible(text: str) -> str:
    """The text a person reads: an HTML page without its style sheet and tags."""
    text = re.sub(r"<style.*?</style>", " ", text, flags=re.S)
    return re.sub(r"<[^>]+>", " ", text)


def _us_copy(demo_db, session_logs, folder):
    """A copy of the demo log (on the backend under test) set to US units."""
    if session_logs.backend == "sqlite":
        db = folder / "us.db"
        shutil.copyfile(demo_db, db)
    else:
        db = session_logs.copy(demo_db, "us")
    res = CliRunner().invoke(main, ["settings", "--db", str(db), "--units", "us"])
    assert res.exit_code == 0, res.output
    return db


@pytest.fixture
def us_log(demo_db, session_logs, tmp_path):
    """A private copy of the demo log set to US units (suggest and what-if store the
    model they fit: a test running them gets a log of its own)."""
    return _us_copy(demo_db, session_logs, tmp_path)


def _rows(store):
    return {t: store.count(t) for t in store.log_tables()}


@pytest.fixture(scope="module")
def us_log_shared(demo_db, session_logs, tmp_path_factory):
    """One copy of the demo log set to US units per backend for the module, and its
    row counts: for commands that only read it."""
    db = _us_copy(demo_db, session_logs, tmp_path_factory.mktemp("us-shared"))
    with Store(db) as s:
        return db, _rows(s)


@pytest.fixture
def us_log_read(us_log_shared):
    """The module's shared US log, checked to hold what it held when made."""
    db, counts = us_log_shared
    with Store(db) as s:
        assert _rows(s) == counts, "an earlier test wrote to the shared US log"
    return db


# Commands that fit the reject model and store it in the log (a write).
WRITES_THE_LOG = {"suggest", "what-if"}


US_COMMANDS = [
    ["size", "--alloy", "steel", "--volume-in3", "122", "--area-in2", "170", "--thickness-in", "2.5",
     "--step-in", "0.5"],
    ["size", "--alloy", "ductile_iron", "--volume-in3", "500", "--area-in2", "150", "--mould", "rigid"],
    ["size", "--pattern", "P-1004", "--zone", "body"],
    ["check"],
    ["suggest", "--no-thermal"],
    ["what-if", "--pattern", "P-1017", "--riser", "R3", "--diameter-in", "5"],
    ["patterns"],
    ["review"],
    ["review", "--format", "md"],
    ["review", "--format", "html"],
    ["review", "--format", "csv"],
]


@pytest.mark.parametrize("args", US_COMMANDS, ids=lambda a: " ".join(a[:3]))
@pytest.mark.parametrize("as_json", [False, True], ids=["text", "json"])
def test_no_metric_unit_label_in_us_output(request, session_logs, runner, args, as_json):
    if as_json and args[0] == "review" and len(args) > 1:
        pytest.skip("review takes --json or a --format")
    # session_logs above: the backend, so the log fixture picked here runs on each
    us_log = request.getfixturevalue("us_log" if args[0] in WRITES_THE_LOG else "us_log_read")
    res = runner.invoke(main, [*args, "--db", str(us_log)] + (["--json"] if as_json else []))
    assert res.exit_code == 0, res.output
    found = sorted({m.group(0) for m in METRIC_LABEL.finditer(_visible(res.output))})
    assert found == [], (found, res.output[:3000])
    if not as_json:
        # and the customary ones are there (a length or a weight, at least)
        assert re.search(r"\bin\b|_in\b|\(in\)|\blb\b|_lb\b|\(lb\)", res.output)


def test_metric_override_on_a_us_log(us_log_read, runner):
    res = runner.invoke(main, ["check", "--db", str(us_log_read), "--units", "metric"])
    assert res.exit_code == 0, res.output
    assert "D (mm)" in res.output and "D (in)" not in res.output


# --- a rule published in inches: the bar feeding distance --------------------------------

@pytest.mark.parametrize("t_in,want_in", [(4.0, 12.0), (2.25, 9.0), (9.0, 18.0)])
def test_bar_feeding_distance_from_its_published_form(runner, t_in, want_in):
    # Bishop-Pellini, square steel bar to a free end: 6 sqrt(T) inches, T in inches
    # (from memory, DOMAIN.md "Feeding distance, plates and bars"): 4 in -> 12 in,
    # 2.25 in -> 9 in, 9 in -> 18 in (below the plate's 4.5 T each time)
    assert want_in == pytest.approx(6 * math.sqrt(t_in)) and want_in < 4.5 * t_in
    us = _size(runner, "--units", "us", "--alloy", "steel", "--volume-in3", "100", "--area-in2", "200",
               "--thickness-in", str(t_in), "--width-in", str(t_in), "--length-in", str(want_in))
    assert us["section_shape"] == "bar"
    assert us["feeding_distance_in"] == pytest.approx(want_in, rel=1e-12)
    assert us["feeding_distance_ok"] is True
    # the same bar in mm (pint: T in mm) reaches the same distance in mm
    metric = _size(runner, "--alloy", "steel", "--volume-cm3", repr(q(100, "inch**3", "cm**3")),
                   "--area-cm2", repr(q(200, "inch**2", "cm**2")), "--thickness-mm", repr(q(t_in, "inch", "mm")),
                   "--width-mm", repr(q(t_in, "inch", "mm")))
    assert metric["feeding_distance_mm"] == pytest.approx(q(want_in, "inch", "mm"), rel=1e-12)


# --- the one resolver ------------------------------------------------------------------

def test_resolve_units_override_then_log_then_metric(mem_store):
    from tracker.errors import BadInput
    from tracker.log.settings import resolve_units, set_units

    # common practice: a command's own option wins over the log's setting
    assert resolve_units(None, None) == "metric"
    assert resolve_units(mem_store, None) == "metric"
    set_units(mem_store, "us")
    assert resolve_units(mem_store, None) == "us"
    assert resolve_units(mem_store, "Metric") == "metric"
    assert resolve_units(None, "us") == "us"
    with pytest.raises(BadInput):
        resolve_units(mem_store, "imperial")


def test_suggest_in_us_steps_on_the_inch_grid(us_log, runner):
    res = runner.invoke(main, ["suggest", "--no-thermal", "--db", str(us_log), "--json"])
    assert res.exit_code == 0, res.output
    enlarged = [r for r in json.loads(res.output) if r["action"] == "enlarge"]
    assert enlarged
    for r in enlarged:
        # a 1/2 in step (common practice in US shops): whole multiples of 0.5 in
        assert r["suggested_diameter_in"] / 0.5 == pytest.approx(round(r["suggested_diameter_in"] / 0.5), abs=1e-9)
        # the same riser in mm by pint's inch
        assert q(r["suggested_diameter_in"], "inch", "mm") == pytest.approx(
            round(r["suggested_diameter_in"] / 0.5) * 12.7, abs=1e-9)


def test_what_if_takes_inches_and_refuses_mm_in_us(us_log, runner):
    res = runner.invoke(main, ["what-if", "--db", str(us_log), "--pattern", "P-1017", "--riser", "R3",
                               "--diameter-mm", "140"])
    assert res.exit_code == 2
    assert "--diameter-mm is in metric units (mm)" in res.output and "--diameter-in" in res.output
    us = runner.invoke(main, ["what-if", "--db", str(us_log), "--pattern", "P-1017", "--riser", "R3",
                              "--diameter-in", "5.5", "--json"])
    metric = runner.invoke(main, ["what-if", "--db", str(us_log), "--units", "metric", "--pattern", "P-1017",
                                  "--riser", "R3", "--diameter-mm", repr(q(5.5, "inch", "mm")), "--json"])
    a, b = json.loads(us.output), json.loads(metric.output)
    # 5.5 in is 139.7 mm (pint): the same riser judged alike in both systems
    assert b["diameter_mm"] == pytest.approx(139.7)
    assert a["diameter_in"] == pytest.approx(5.5)
    assert a["modulus_ratio"] == pytest.approx(b["modulus_ratio"], rel=1e-12)
    assert a["added_metal_lb_per_mold"] == pytest.approx(q(b["added_metal_kg_per_mold"], "kg", "lb"), rel=1e-9)


def test_niyama_in_us_units_against_pint():
    from tracker.thermal import _Judged, _reasons

    # pint: (delta_degC min)^0.5 / cm -> (delta_degF min)^0.5 / in
    want = U.Quantity(1.0, "delta_degC**0.5 * minute**0.5 / centimeter").to(
        "delta_degF**0.5 * minute**0.5 / inch").magnitude
    assert units.value_in("niyama", 1.0, "us") == pytest.approx(want, rel=1e-12)
    assert units.value_from("niyama", want, "us") == pytest.approx(1.0, rel=1e-12)
    # Niyama et al. (1982) threshold about 1 (°C·min)^0.5/cm (from memory): 3.41 in US units
    judged = _Judged("modulus_sequence", 0.5, 0.0, False, 0.0, 0.5, None, 1.0)
    text = _reasons(judged, "us")
    assert text == [f"Niyama {0.5 * want:.2f} below {want:.2f} (°F·min)^0.5/in in the section"]
    assert _reasons(judged) == ["Niyama 0.50 below 1 (°C·min)^0.5/cm in the section"]
