"""Bad import files are refused with file, row, column and reason, and the log is
left exactly as it was.

The corpus is a table of cases built in the test from the small valid log in
tests/data/good/: each case is one valid new row (or file) of a kind with one
thing broken. Decisions these tests pin down:

- header only: a valid no-op import that adds nothing (an empty file, with no
  header, is an error);
- a byte-order mark, blank lines, trailing spaces, CRLF line ends and empty
  trailing cells (a spreadsheet's trailing comma) are accepted;
- a row with *filled* cells beyond the header refuses the whole file, even with
  --skip-bad: its values cannot be trusted to sit in the right columns;
- inspections have no natural key: two identical rows are two records, and
  re-importing a stored file adds nothing. Duplicate keys with other content
  are refused for the keyed kinds (patterns, zones, sleeves, risers, lots).
"""

import csv
import datetime as dt
import io
import shutil

import openpyxl
import pytest

from tests.support import BACKENDS, GOOD, LogFactory
from tracker.cli import main
from tracker.errors import BadFile
from tracker.log.ingest import import_dir, import_file
from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)

# One valid row per kind that the good log does not hold yet.
NEW = {
    "patterns": {"pattern": "T-300", "description": "new cover", "alloy": "steel",
                 "casting_weight_kg": "5", "castings_per_mold": "1", "metal_cost_per_kg": "1.8",
                 "processing_cost_per_casting": "10", "mould": ""},
    "zones": {"pattern": "T-100", "zone": "neck", "volume_cm3": "500", "cooling_area_cm2": "400",
              "thickness_mm": "30", "length_mm": "60", "required_xray_level": "2", "width_mm": "",
              "joined_faces": ""},
    "sleeves": {"sleeve": "EXO-150", "kind": "exothermic", "inner_diameter_mm": "150",
                "height_mm": "160", "modulus_factor": "1.4", "feeding_efficiency": "0.4",
                "unit_cost": "7"},
    "risers": {"pattern": "T-100", "revision": "B", "effective_from": "2026-04-01", "riser": "R1",
               "zone": "flange", "placement": "side", "top": "blind", "diameter_mm": "150",
               "height_mm": "150", "sleeve": "", "neck_diameter_mm": "95",
               # revision B keeps R1 only: it says so (issue 27: a riser left out is refused)
               "removed_risers": "R2"},
    "lots": {"lot": "L4", "pattern": "T-100", "poured_on": "2026-04-01", "heat": "H4", "molds": "5",
             "pour_temp_c": "1600"},
    "inspections": {"lot": "L3", "inspected_on": "2026-03-06", "method": "xray", "quantity": "2",
                    "result": "reject", "defect": "shrinkage", "zone": "boss", "xray_category": "CC",
                    "severity": "3", "serial": "", "inspector": "QE-B", "notes": ""},
}


def _csv(rows: list[list[str]]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    return buf.getvalue()


def new_file(kind: str, *edits: dict, drop=(), rename=None) -> str:
    """A CSV of ``kind`` with one row per edit (each applied to the NEW row)."""
    cols = [c for c in NEW[kind] if c not in drop]
    header = [rename.get(c, c) if rename else c for c in cols]
    rows = [header]
    for e in edits or ({},):
        row = {**NEW[kind], **e}
        rows.append([row[c] for c in cols])
    return _csv(rows)


@pytest.fixture
def store(logs):
    """A log holding the good data set, on each backend."""
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


@pytest.fixture(scope="module", params=BACKENDS)
def good_log(request, tmp_path_factory):
    """The good data set imported once per backend for this module, and its rows."""
    factory = LogFactory(request.param, tmp_path_factory.mktemp(f"good-{request.param}"))
    try:
        with Store(factory.new("good")) as s:
            import_dir(s, GOOD, today=TODAY)
            yield s, s.snapshot()
    finally:
        factory.close()


@pytest.fixture
def refusing_store(good_log):
    """The module's shared good log, for a test that only sees imports refused (each
    refusal checks that every table is unchanged, so the log stays as imported)."""
    s, rows = good_log
    assert s.snapshot() == rows, "an earlier test changed the shared good log"
    return s


def refuse(store, tmp_path, kind, content, name=None, skip_bad=False):
    """Import ``content`` and expect a refusal that leaves every table unchanged."""
    path = tmp_path / (name or f"{kind}.csv")
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8")
    before = store.snapshot()
    with pytest.raises(BadFile) as info:
        import_file(store, kind, path, today=TODAY, skip_bad=skip_bad)
    assert store.snapshot() == before
    return str(info.value)


def test_every_new_row_is_valid(store, tmp_path):
    # The cases below break exactly one thing; the unbroken rows must import.
    for kind in ("patterns", "zones", "sleeves", "risers", "lots", "inspections"):
        path = tmp_path / f"{kind}.csv"
        path.write_text(new_file(kind), encoding="utf-8")
        before = store.counts()
        r = import_file(store, kind, path, today=TODAY)
        assert (r.rows, r.added, r.refused) == (1, 1, 0), kind
        assert store.counts()[kind] == before[kind] + 1


# (id, kind, edits of the NEW row, column, expected reason) -> "file, row 2, column C: reason"
ROW_CASES = [
    # patterns
    ("alloy-unknown", "patterns", {"alloy": "unobtainium"}, "alloy",
     "got 'unobtainium'; alloy must be one of aluminum, aluminum_bronze, cast_iron_brass, "
     "ductile_iron, gray_iron, silicon_bronze, steel"),
    ("weight-text", "patterns", {"casting_weight_kg": "heavy"}, "casting_weight_kg",
     "got 'heavy'; casting_weight_kg must be a number of at least 0.001 and at most 300,000 kg"),
    ("per-mold-fraction", "patterns", {"castings_per_mold": "1.5"}, "castings_per_mold",
     "got '1.5'; castings_per_mold must be a whole number above 0 and at most 10,000"),
    ("per-mold-huge", "patterns", {"castings_per_mold": "1e300"}, "castings_per_mold",
     "got '1e300'; castings_per_mold must be a whole number above 0 and at most 10,000"),
    ("per-mold-zero", "patterns", {"castings_per_mold": "0"}, "castings_per_mold",
     "got '0'; castings_per_mold must be a whole number above 0 and at most 10,000"),
    ("metal-cost-negative", "patterns", {"metal_cost_per_kg": "-1"}, "metal_cost_per_kg",
     "got '-1'; metal_cost_per_kg must be a number of at least 0 and at most 100,000 per kg"),
    ("pattern-blank", "patterns", {"pattern": ""}, "pattern", "got ''; pattern is required"),
    ("mould-unknown", "patterns", {"mould": "clay"}, "mould", "got 'clay'; mould must be one of green_sand, rigid"),
    # zones
    ("zone-unknown-pattern", "zones", {"pattern": "T-999"}, "pattern",
     "got 'T-999'; unknown pattern; import it in patterns.csv first or check the code"),
    ("zone-volume-zero", "zones", {"volume_cm3": "0"}, "volume_cm3",
     "got '0'; volume_cm3 must be a number of at least 0.001 and at most 100,000,000 cm³"),
    # A plate of thickness T cooling on both faces has V/A = T/2 (geometry): 500/10 = 50 cm > 1.5 cm.
    ("zone-modulus-above-half-thickness", "zones", {"cooling_area_cm2": "10"}, "cooling_area_cm2",
     "got '10'; the modulus V/A = 50.00 cm is above half the thickness (1.50 cm), more than a plate "
     "of that thickness cooling on both faces can have; check the units (cm², cm³, mm), or name the faces "
     "joined to the rest of the casting in joined_faces"),
    ("zone-joined-faces-unknown", "zones", {"joined_faces": "bottom;inside"}, "joined_faces",
     "got 'bottom;inside'; joined_faces lists the faces joined to the rest of the casting: any of top, "
     "bottom, edges, separated by ';' (for example bottom;edges)"),
    ("zone-width-negative", "zones", {"width_mm": "-5"}, "width_mm",
     "got '-5'; width_mm must be a number of at least 0.1 and at most 20,000 mm"),
    ("zone-level-six", "zones", {"required_xray_level": "6"}, "required_xray_level",
     "got '6'; required_xray_level must be a whole number of at least 1 and at most 5"),
    # sleeves
    ("sleeve-kind-unknown", "sleeves", {"kind": "magic"}, "kind",
     "got 'magic'; kind must be one of insulating, exothermic"),
    ("sleeve-factor-below-one", "sleeves", {"modulus_factor": "0.9"}, "modulus_factor",
     "got '0.9'; modulus_factor must be a number of at least 1 and at most 2"),
    ("sleeve-efficiency-percent", "sleeves", {"feeding_efficiency": "40"}, "feeding_efficiency",
     "got '40'; feeding_efficiency must be a number above 0 and at most 1 (a fraction, 0.30 = 30 %)"),
    # risers
    ("placement-unknown", "risers", {"placement": "bottom"}, "placement",
     "got 'bottom'; placement must be one of top, side"),
    ("top-unknown", "risers", {"top": "wide"}, "top", "got 'wide'; top must be one of open, blind"),
    ("riser-zone-missing", "risers", {"zone": "web"}, "zone",
     "got 'web'; pattern T-100 has no such zone; its zones are body, flange; import it in zones.csv first"),
    ("riser-sleeve-unknown", "risers", {"sleeve": "INS-999"}, "sleeve",
     "got 'INS-999'; unknown sleeve; import it in sleeves.csv first"),
    ("riser-sleeve-diameter", "risers", {"sleeve": "INS-100"}, "diameter_mm",
     "got 150; sleeve INS-100 has an inner diameter of 100 mm; the riser diameter is the sleeve's"),
    ("riser-date-malformed", "risers", {"effective_from": "1/4/2026"}, "effective_from",
     "got '1/4/2026'; effective_from must be a date written YYYY-MM-DD"),
    ("riser-h-over-d", "risers", {"height_mm": "900"}, "height_mm",
     "got '900'; height over diameter must lie between 0.25 and 4"),
    ("riser-neck-on-top", "risers", {"placement": "top"}, "neck_diameter_mm",
     "got '95'; a neck is only given for a side riser"),
    # lots
    ("lot-future", "lots", {"poured_on": "2026-07-01"}, "poured_on",
     "got '2026-07-01'; poured_on lies in the future (after 2026-06-01)"),
    ("lot-date-impossible", "lots", {"poured_on": "2026-02-30"}, "poured_on",
     "got '2026-02-30'; poured_on must be a date written YYYY-MM-DD"),
    ("lot-unknown-pattern", "lots", {"pattern": "NOPE"}, "pattern",
     "got 'NOPE'; unknown pattern; import it in patterns.csv first or check the code"),
    ("lot-molds-negative", "lots", {"molds": "-3"}, "molds",
     "got '-3'; molds must be a whole number above 0 and at most 100,000"),
    ("lot-molds-fraction", "lots", {"molds": "2.5"}, "molds",
     "got '2.5'; molds must be a whole number above 0 and at most 100,000"),
    ("lot-molds-infinite", "lots", {"molds": "inf"}, "molds",
     "got 'inf'; molds must be a whole number above 0 and at most 100,000"),
    ("lot-temp-range", "lots", {"pour_temp_c": "2500"}, "pour_temp_c",
     "got '2500'; pour_temp_c must be a number of at least 400 and at most 1,800 °C"),
    # inspections
    ("insp-unknown-lot", "inspections", {"lot": "L9"}, "lot",
     "got 'L9'; unknown lot; import it in lots.csv first or check the code"),
    ("method-unknown", "inspections", {"method": "laser"}, "method",
     "got 'laser'; method must be one of visual, xray, ut, mt, pt, dimensional"),
    ("result-unknown", "inspections", {"result": "fine"}, "result",
     "got 'fine'; result must be one of accept, reject, rework"),
    ("defect-unknown", "inspections", {"defect": "bubbles"}, "defect",
     "got 'bubbles'; defect must be one of shrinkage, gas, sand, slag, misrun, cold_shut, "
     "hot_tear, crack, dimensional, other"),
    ("xray-category-unknown", "inspections", {"xray_category": "Z"}, "xray_category",
     "got 'Z'; xray_category must be one of A, B, CA, CB, CC, CD, D, E, F, G"),
    ("severity-zero", "inspections", {"severity": "0"}, "severity",
     "got '0'; severity must be a whole number of at least 1 and at most 5"),
    ("severity-six", "inspections", {"severity": "6"}, "severity",
     "got '6'; severity must be a whole number of at least 1 and at most 5"),
    ("quantity-zero", "inspections", {"quantity": "0"}, "quantity",
     "got '0'; quantity must be a whole number above 0 and at most 1,000,000"),
    ("quantity-negative", "inspections", {"quantity": "-2"}, "quantity",
     "got '-2'; quantity must be a whole number above 0 and at most 1,000,000"),
    ("quantity-fraction", "inspections", {"quantity": "1.5"}, "quantity",
     "got '1.5'; quantity must be a whole number above 0 and at most 1,000,000"),
    ("quantity-text", "inspections", {"quantity": "two"}, "quantity",
     "got 'two'; quantity must be a whole number above 0 and at most 1,000,000"),
    ("quantity-infinite", "inspections", {"quantity": "inf"}, "quantity",
     "got 'inf'; quantity must be a whole number above 0 and at most 1,000,000"),
    ("quantity-huge", "inspections", {"quantity": "1e30"}, "quantity",
     "got '1e30'; quantity must be a whole number above 0 and at most 1,000,000"),
    ("severity-nan", "inspections", {"severity": "nan"}, "severity",
     "got 'nan'; severity must be a whole number of at least 1 and at most 5"),
    # L3: 5 molds x 4 castings = 20 poured, none rejected so far
    ("rejects-above-poured", "inspections", {"quantity": "21"}, "quantity",
     "got 21; lot L3 would have 21 castings rejected but only 20 were poured"),
    ("inspected-before-pour", "inspections", {"inspected_on": "2026-03-01"}, "inspected_on",
     "got '2026-03-01'; lot L3 was poured on 2026-03-03; a casting is inspected after it is poured"),
    ("inspected-future", "inspections", {"inspected_on": "2026-06-02"}, "inspected_on",
     "got '2026-06-02'; inspected_on lies in the future (after 2026-06-01)"),
    ("inspected-date-malformed", "inspections", {"inspected_on": "06/03/2026"}, "inspected_on",
     "got '06/03/2026'; inspected_on must be a date written YYYY-MM-DD"),
    ("reject-without-defect", "inspections", {"defect": ""}, "defect",
     "got ''; a reject row needs the defect found; use one of shrinkage, gas, sand, slag, misrun, "
     "cold_shut, hot_tear, crack, dimensional, other"),
    ("category-with-visual", "inspections", {"method": "visual"}, "xray_category",
     "got 'CC'; a radiography category goes with method xray, not visual"),
    ("crack-accepted", "inspections", {"xray_category": "D", "severity": "", "result": "accept",
                                       "defect": ""}, "result",
     "got 'accept'; category D (cracks, hot tears) is not acceptable at any level"),
    ("insp-zone-unknown", "inspections", {"zone": "flange"}, "zone",
     "got 'flange'; pattern T-200 has no such zone; its zones are boss"),
    ("notes-control-chars", "inspections", {"notes": "bad\x07bell"}, "notes",
     "got 'bad\\x07bell'; notes holds control characters"),
    ("rework-without-defect", "inspections", {"result": "rework", "defect": "", "xray_category": "",
                                              "severity": ""}, "defect",
     "got ''; a rework row needs the defect found; use one of shrinkage, gas, sand, slag, misrun, "
     "cold_shut, hot_tear, crack, dimensional, other"),
    # plausibility: dates (before 1950, or more than a year ahead), with TODAY = 2026-06-01
    ("lot-year-0001", "lots", {"poured_on": "0001-01-01"}, "poured_on",
     "got '0001-01-01'; poured_on lies before 1950-01-01; check the year"),
    ("lot-before-1950", "lots", {"poured_on": "1949-12-31"}, "poured_on",
     "got '1949-12-31'; poured_on lies before 1950-01-01; check the year"),
    ("inspected-year-9999", "inspections", {"inspected_on": "9999-12-31"}, "inspected_on",
     "got '9999-12-31'; inspected_on lies in the future (after 2026-06-01)"),
    ("revision-years-ahead", "risers", {"effective_from": "2030-01-01"}, "effective_from",
     "got '2030-01-01'; effective_from lies more than a year ahead (after 2027-06-02); check the year"),
    ("revision-year-0001", "risers", {"effective_from": "0001-01-01"}, "effective_from",
     "got '0001-01-01'; effective_from lies before 1950-01-01; check the year"),
    # plausibility: physical ranges per column (tracker/limits.py, common practice)
    ("weight-1e300", "patterns", {"casting_weight_kg": "1e300"}, "casting_weight_kg",
     "got '1e300'; casting_weight_kg must be a number of at least 0.001 and at most 300,000 kg"),
    ("weight-1e-300", "patterns", {"casting_weight_kg": "1e-300"}, "casting_weight_kg",
     "got '1e-300'; casting_weight_kg must be a number of at least 0.001 and at most 300,000 kg"),
    ("metal-cost-1e300", "patterns", {"metal_cost_per_kg": "1e300"}, "metal_cost_per_kg",
     "got '1e300'; metal_cost_per_kg must be a number of at least 0 and at most 100,000 per kg"),
    ("processing-cost-1e300", "patterns", {"processing_cost_per_casting": "1e300"},
     "processing_cost_per_casting",
     "got '1e300'; processing_cost_per_casting must be a number of at least 0 and at most 10,000,000 "
     "per casting"),
    ("zone-volume-1e300", "zones", {"volume_cm3": "1e300"}, "volume_cm3",
     "got '1e300'; volume_cm3 must be a number of at least 0.001 and at most 100,000,000 cm³"),
    ("zone-thickness-tiny", "zones", {"thickness_mm": "1e-300"}, "thickness_mm",
     "got '1e-300'; thickness_mm must be a number of at least 0.1 and at most 5,000 mm"),
    ("zone-length-huge", "zones", {"length_mm": "1e9"}, "length_mm",
     "got '1e9'; length_mm must be a number of at least 0.1 and at most 20,000 mm"),
    ("sleeve-diameter-1e300", "sleeves", {"inner_diameter_mm": "1e300"}, "inner_diameter_mm",
     "got '1e300'; inner_diameter_mm must be a number of at least 5 and at most 3,000 mm"),
    ("sleeve-height-tiny", "sleeves", {"height_mm": "1e-300"}, "height_mm",
     "got '1e-300'; height_mm must be a number of at least 5 and at most 5,000 mm"),
    ("sleeve-cost-1e300", "sleeves", {"unit_cost": "1e300"}, "unit_cost",
     "got '1e300'; unit_cost must be a number of at least 0 and at most 100,000 per sleeve"),
    ("riser-diameter-1e300", "risers", {"diameter_mm": "1e300"}, "diameter_mm",
     "got '1e300'; diameter_mm must be a number of at least 5 and at most 3,000 mm"),
    ("riser-neck-tiny", "risers", {"neck_diameter_mm": "1e-300"}, "neck_diameter_mm",
     "got '1e-300'; neck_diameter_mm must be a number of at least 2 and at most 3,000 mm"),
    # invisible characters: zero-width, bidirectional overrides, word joiner, byte-order mark
    ("lot-zero-width-space", "lots", {"lot": "L4\u200b"}, "lot",
     "got 'L4\\u200b'; lot holds an invisible character (U+200B ZERO WIDTH SPACE) at character 3; retype the "
     "value without it"),
    ("pattern-bidi-override", "patterns", {"pattern": "T-\u202e003"}, "pattern",
     "got 'T-\\u202e003'; pattern holds an invisible character (U+202E RIGHT-TO-LEFT OVERRIDE) at character "
     "3; retype the value without it"),
    ("zone-byte-order-mark", "zones", {"zone": "ne\ufeffck"}, "zone",
     "got 'ne\\ufeffck'; zone holds an invisible character (U+FEFF ZERO WIDTH NO-BREAK SPACE) at character 3; "
     "retype the value without it"),
    ("inspector-word-joiner", "inspections", {"inspector": "QE\u2060B"}, "inspector",
     "got 'QE\\u2060B'; inspector holds an invisible character (U+2060 WORD JOINER) at character 3; retype "
     "the value without it"),
    ("notes-bidi-isolate", "inspections", {"notes": "ok \u2066x"}, "notes",
     "got 'ok \\u2066x'; notes holds an invisible character (U+2066 LEFT-TO-RIGHT ISOLATE) at character 4; "
     "retype the value without it"),
    # decimal commas, long values cut when echoed
    ("temp-decimal-comma", "lots", {"pour_temp_c": "1600,5"}, "pour_temp_c",
     "got '1600,5'; pour_temp_c must be a number of at least 400 and at most 1,800 °C; it is written with a "
     "decimal comma: write a decimal point, or import the file with `--decimal ','`"),
    ("notes-100-kb", "inspections", {"notes": "x" * 100_000}, "notes",
     "got '" + "x" * 58 + "…' (100,000 characters); notes is longer than 2000 characters"),
]


@pytest.mark.parametrize("case", ROW_CASES, ids=[c[0] for c in ROW_CASES])
def test_bad_row_is_refused_with_row_column_reason(refusing_store, tmp_path, case):
    _, kind, edit, column, reason = case
    msg = refuse(refusing_store, tmp_path, kind, new_file(kind, edit))
    assert f"{kind}.csv: refused, nothing written (1 bad row(s)):" in msg
    assert f"{kind}.csv, row 2, column {column}: {reason}" in msg.splitlines()


def test_a_zone_with_joined_faces_may_exceed_half_its_thickness(store, tmp_path):
    # The pad, 200 x 200 x 50 mm joined on its bottom and two edges: V 2,000 cm³,
    # cooling area 600 cm² (the top 400 cm² and two edges of 100 cm²), V/A 3.33 cm > T/2 =
    # 2.5 cm: right for a body whose faces do not all cool (DOMAIN.md, "Geometry and modulus").
    pad = {"zone": "pad", "volume_cm3": "2000", "cooling_area_cm2": "600", "thickness_mm": "50"}
    msg = refuse(store, tmp_path, "zones", new_file("zones", pad))
    assert "above half the thickness" in msg
    path = tmp_path / "zones.csv"
    path.write_text(new_file("zones", {**pad, "joined_faces": "Bottom + edges"}), encoding="utf-8")
    assert import_file(store, "zones", path, today=TODAY).added == 1
    assert store.zone("T-100", "pad")["joined_faces"] == "bottom;edges"


def test_severity_above_zone_level_cannot_be_accepted(refusing_store, tmp_path):
    # L1 is T-100; zone flange requires level 2, severity 4 is worse.
    edit = {"lot": "L1", "zone": "flange", "severity": "4", "xray_category": "CB",
            "result": "accept", "defect": "", "quantity": "1", "inspected_on": "2026-03-06"}
    msg = refuse(refusing_store, tmp_path, "inspections", new_file("inspections", edit))
    assert ("inspections.csv, row 2, column result: got 'accept'; severity 4 is above zone flange's "
            "required level 2: write reject or rework") in msg


def test_every_bad_row_is_listed_in_one_message(refusing_store, tmp_path):
    content = new_file("lots", {"lot": "L5", "molds": "0"}, {"lot": "L6"}, {"lot": "L7", "heat": ""})
    msg = refuse(refusing_store, tmp_path, "lots", content)
    assert "(2 bad row(s))" in msg
    assert "lots.csv, row 2, column molds: got '0';" in msg
    assert "lots.csv, row 4, column heat: got ''; heat is required" in msg


# --- whole-file problems ------------------------------------------------------------

HEADER = ",".join(NEW["inspections"])


FILE_CASES = [
    ("empty", "inspections", b"", "inspections.csv: the file is empty; it needs a header row and data rows"),
    ("whitespace-only", "inspections", b"\n \n\n",
     "inspections.csv: the file is empty; it needs a header row and data rows"),
    ("missing-column", "inspections", new_file("inspections", drop=("result",)),
     "inspections.csv, row 1 (header): missing column(s) result."),
    ("renamed-column", "lots", new_file("lots", rename={"molds": "moulds"}),
     "lots.csv, row 1 (header): missing column(s) molds; unknown column(s) 'moulds'."),
    ("repeated-column", "patterns",
     "pattern,description,alloy,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg\n"
     "P,x,steel,steel,1,1,1\n",
     "patterns.csv, row 1 (header): repeated column(s) alloy."),
    ("repeated-column-case", "lots", "lot,pattern,poured_on,heat,molds,Molds\nL4,T-100,2026-04-01,H,1,1\n",
     "lots.csv, row 1 (header): repeated column(s) molds."),
    ("non-utf8", "inspections",
     (HEADER + "\nL3,2026-03-06,visual,1,accept,,,,,,QE-B,ok\n").encode()
     + b"L3,2026-03-06,visual,1,accept,,,,,,QE-B,caf\xe9\n",
     "inspections.csv, row 3: byte 0xe9 is not UTF-8 text; save the file as UTF-8 "
     "(CSV UTF-8 in a spreadsheet program)"),
    ("utf16", "lots", new_file("lots").encode("utf-16"),
     "lots.csv: the file is UTF-16 text (it starts with a UTF-16 byte-order mark), not UTF-8; save it as CSV "
     "UTF-8 (comma delimited) in the spreadsheet program"),
    ("unclosed-quote", "inspections", HEADER + '\nL3,2026-03-06,visual,1,accept,,,,,,QE,"never closed\n',
     "inspections.csv: not a readable CSV (Error tokenizing data. C error: EOF inside string"),
    ("extra-filled-cell", "lots", "lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H4,5,1600\n",
     "lots.csv, row 2, column 6 (no header): got '1600'; the row has 6 cells but the header names 5 "
     "columns; quote a value that holds a comma, or remove the extra cells"),
    ("unquoted-comma-later-row", "inspections",
     HEADER + "\nL3,2026-03-06,visual,1,accept,,,,,,QE-B,\nL3,2026-03-06,visual,1,accept,,,,,,QE-B,a,b\n",
     "inspections.csv, row 3, column 13 (no header): got 'b'; the row has 13 cells"),
    ("unknown-suffix", "patterns", b"{}", "patterns.json: unknown file type '.json'; use .csv or .xlsx"),
    ("xlsx-not-a-workbook", "patterns", b"PK\x03\x04 not really a zip",
     "patterns.xlsx: not a readable .xlsx workbook (BadZipFile)"),
    # separators, decimal marks, encodings and line ends that are not what the import reads
    ("semicolons", "lots", new_file("lots").replace(",", ";"),
     "lots.csv: this file is separated by ';'; save it as comma-separated with decimal points, or import it "
     "with `--sep ';'`"),
    ("semicolons-decimal-commas", "lots", new_file("lots", {"pour_temp_c": "1600.5"}).replace(",", ";")
     .replace("1600.5", "1600,5"),
     "lots.csv: this file is separated by ';' with decimal commas; save it as comma-separated with decimal "
     "points, or import it with `--sep ';' --decimal ','`"),
    ("tabs", "lots", new_file("lots").replace(",", "\t"),
     "lots.csv: this file is separated by tabs; save it as comma-separated with decimal points, or import it "
     "with `--sep 'tab'`"),
    ("utf16-le-no-bom", "lots", new_file("lots").encode("utf-16-le"),
     "lots.csv: the file is UTF-16 text (little-endian, without a byte-order mark), not UTF-8; save it as CSV "
     "UTF-8 (comma delimited) in the spreadsheet program"),
    ("utf16-be-no-bom", "lots", new_file("lots").encode("utf-16-be"),
     "lots.csv: the file is UTF-16 text (big-endian, without a byte-order mark), not UTF-8; save it as CSV "
     "UTF-8 (comma delimited) in the spreadsheet program"),
    ("cr-only-line-ends", "lots", new_file("lots").replace("\n", "\r"),
     "lots.csv: the lines end in a carriage return alone (CR, an old Mac format); save the file with Windows "
     "(CRLF) or Unix (LF) line ends, or as CSV UTF-8 in a spreadsheet program"),
    ("last-line-cut-short", "lots", "lot,pattern,poured_on,heat,molds,pour_temp_c\nL4,T-100,2026-04-01,H4,5,1600\n"
     "L5,T-100,2026-04-01,H5,1",
     "lots.csv, row 3: the last line is cut short: it has 5 of the header's 6 cells and no line end; the file "
     "was probably cut off while being copied or saved: export it again"),
    ("cell-over-a-mebibyte", "inspections", HEADER + '\nL3,2026-03-06,visual,1,accept,,,,,,QE,"'
     + "y" * ((1 << 20) + 1) + '"\n',
     "inspections.csv, row 2, column notes: a cell is longer than 1,048,576 characters (the limit of one cell); "
     "a quote that is never closed takes in the rest of the file: check the quotes on that row"),
    ("unclosed-quote-swallows-the-file", "lots", "lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,\"H4,5\n"
     + "L5,T-100,2026-04-01,H5,5\n" * 50_000,
     "lots.csv, row 2, column heat: a cell is longer than 1,048,576 characters"),
    ("header-cell-over-a-mebibyte", "lots", 'lot,"pattern' + "x" * (1 << 20) + "\n",
     "lots.csv, row 1, column 2 (no header): a cell is longer than 1,048,576 characters"),
]
_NAMES = {"unknown-suffix": "patterns.json", "xlsx-not-a-workbook": "patterns.xlsx"}


@pytest.mark.parametrize("case", FILE_CASES, ids=[c[0] for c in FILE_CASES])
def test_bad_file_is_refused(refusing_store, tmp_path, case):
    cid, kind, content, expected = case
    msg = refuse(refusing_store, tmp_path, kind, content, name=_NAMES.get(cid))
    assert expected in msg


def test_extra_filled_cells_refuse_the_file_even_with_skip_bad(refusing_store, tmp_path):
    # Its values may sit in the wrong columns: no row of such a file is trusted.
    msg = refuse(refusing_store, tmp_path, "lots",
                 "lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H4,5\nL5,T-100,2026-04-01,H5,5,9\n",
                 skip_bad=True)
    assert "lots.csv, row 3, column 6 (no header): got '9';" in msg


# --- duplicates -----------------------------------------------------------------

DUPLICATE_CASES = [
    ("lot-stored", "lots", "lot,pattern,poured_on,heat,molds,pour_temp_c\nL1,T-100,2026-03-02,H1,11,1600\n",
     "lots.csv, row 2, column lot: got 'L1'; L1 is stored already with other molds; a key is imported "
     "once (change the key for a new item)"),
    ("lot-in-file", "lots", new_file("lots", {}, {"molds": "6"}),
     "lots.csv, row 3, column lot: got 'L4'; L4 appears twice in the file with different content"),
    ("pattern-stored", "patterns",
     "pattern,description,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg\n"
     "T-200,test bracket,steel,2.0,4,3.1\n",
     "patterns.csv, row 2, column pattern: got 'T-200'; T-200 is stored already with other alloy;"),
    ("zone-in-file", "zones", new_file("zones", {}, {"volume_cm3": "510"}),
     "zones.csv, row 3, column zone: got 'neck'; T-100 / neck appears twice in the file with different "
     "content"),
    ("zone-stored", "zones", new_file("zones", {"zone": "body"}),
     "zones.csv, row 2, column zone: got 'body'; T-100 / body is stored already with other volume_cm3,"),
    ("sleeve-stored", "sleeves", new_file("sleeves", {"sleeve": "EXO-80", "inner_diameter_mm": "80",
                                                      "height_mm": "90", "unit_cost": "9"}),
     "sleeves.csv, row 2, column sleeve: got 'EXO-80'; EXO-80 is stored already with other unit_cost;"),
    ("riser-in-file", "risers", new_file("risers", {}, {"diameter_mm": "160", "height_mm": "160"}),
     "risers.csv, row 3, column riser: got 'R1'; T-100 / B / R1 appears twice in the file with different "
     "content"),
    ("riser-stored", "risers", new_file("risers", {"revision": "A", "effective_from": "2026-01-05"}),
     "risers.csv, row 2, column revision: revision A of T-100 is stored already with other content; a "
     "stored revision is never changed: give the new design a new revision code and date"),
    ("revision-same-day", "risers", new_file("risers", {"effective_from": "2026-01-05"}),
     "risers.csv, row 2, column effective_from: revision B of T-100 takes effect on 2026-01-05, the same "
     "day as revision A; give each revision its own date"),
    ("revision-two-dates", "risers", new_file("risers", {}, {"riser": "R2", "effective_from": "2026-04-02"}),
     "risers.csv, row 3, column effective_from: got '2026-04-02'; revision B of T-100 is dated 2026-04-01 "
     "on an earlier row; all risers of one revision share one date"),
]


@pytest.mark.parametrize("case", DUPLICATE_CASES, ids=[c[0] for c in DUPLICATE_CASES])
def test_duplicate_key_with_other_content_is_refused(refusing_store, tmp_path, case):
    _, kind, content, expected = case
    assert expected in refuse(refusing_store, tmp_path, kind, content)


def test_reimport_of_stored_files_adds_nothing(store):
    before = store.snapshot()
    results = import_dir(store, GOOD, today=TODAY)
    assert [r.added for r in results] == [0] * 6
    assert [r.skipped for r in results] == [2, 3, 2, 3, 3, 6]
    assert store.snapshot() == before


def test_identical_inspection_rows_are_two_records(store, tmp_path):
    path = tmp_path / "inspections.csv"
    path.write_text(new_file("inspections", {}, {}), encoding="utf-8")
    r = import_file(store, "inspections", path, today=TODAY)
    assert (r.added, r.skipped) == (2, 0)
    r = import_file(store, "inspections", path, today=TODAY)
    assert (r.added, r.skipped) == (0, 2)


def test_riser_before_its_zones_refuses_the_whole_folder(tmp_path):
    # A folder with patterns and risers but no zones: the patterns are not kept either.
    folder = tmp_path / "in"
    folder.mkdir()
    for kind in ("patterns", "sleeves", "risers"):
        shutil.copy(GOOD / f"{kind}.csv", folder)
    with Store(tmp_path / "log.db") as s:
        before = s.snapshot()
        with pytest.raises(BadFile) as info:
            import_dir(s, folder, today=TODAY)
        assert s.snapshot() == before
        assert s.counts()["patterns"] == 0
    msg = str(info.value)
    assert "risers.csv: refused, nothing written (3 bad row(s)):" in msg
    assert "risers.csv, row 2, column zone: got 'flange'; pattern T-100 has no such zone; it has no zones yet; " \
           "import it in zones.csv first" in msg
    assert "risers.csv, row 4, column zone: got 'boss'; pattern T-200 has no such zone;" in msg


# --- accepted oddities ----------------------------------------------------------------

def _tables(store):
    """Every table without the import times (which differ between two imports) and
    without what depends on the file's bytes (its digest keys the records)."""
    snap = store.snapshot()
    snap["inspections"] = sorted(map(repr, store.table("inspections")
                                     .drop(columns=["recorded_at", "record_key"]).itertuples(index=False)))
    del snap["imports"]
    return snap


def test_byte_order_mark_is_accepted(tmp_path):
    bom = tmp_path / "bom"
    bom.mkdir()
    for f in GOOD.glob("*.csv"):
        (bom / f.name).write_bytes(b"\xef\xbb\xbf" + f.read_bytes())
    with Store(tmp_path / "plain.db") as plain, Store(tmp_path / "bom.db") as marked:
        import_dir(plain, GOOD, today=TODAY)
        results = import_dir(marked, bom, today=TODAY)
        assert [r.added for r in results] == [2, 3, 2, 3, 3, 6]
        assert _tables(marked) == _tables(plain)
        assert marked.table("patterns")["pattern"].tolist() == ["T-100", "T-200"]


def test_blank_lines_are_skipped_and_rows_keep_their_numbers(store, tmp_path):
    path = tmp_path / "lots.csv"
    path.write_text("lot,pattern,poured_on,heat,molds\n\nL4,T-100,2026-04-01,H4,5\n\n\n", encoding="utf-8")
    r = import_file(store, "lots", path, today=TODAY)
    assert (r.rows, r.added, r.refused) == (1, 1, 0)
    # the bad row is the file's row 5, blank lines counted
    msg = refuse(store, tmp_path, "lots", "lot,pattern,poured_on,heat,molds\n\nL5,T-100,2026-04-01,H,5\n\n"
                                          "L6,T-100,2026-04-01,H,x\n")
    assert "lots.csv, row 5, column molds: got 'x';" in msg


def test_trailing_spaces_crlf_and_trailing_commas_are_accepted(store, tmp_path):
    path = tmp_path / "lots.csv"
    path.write_bytes(b" lot , pattern ,poured_on,heat , molds ,,\r\n"
                     b" L4 , T-100 , 2026-04-01 , H4 , 5 ,,\r\n")
    r = import_file(store, "lots", path, today=TODAY)
    assert (r.added, r.refused) == (1, 0)
    assert store.lot("L4")["pattern"] == "T-100"
    assert store.lot("L4")["heat"] == "H4"
    assert store.lot("L4")["molds"] == 5


def test_header_only_is_a_valid_no_op(store, tmp_path):
    for kind in NEW:
        path = tmp_path / f"{kind}.csv"
        path.write_text(",".join(NEW[kind]) + "\n", encoding="utf-8")
        before = store.snapshot()
        r = import_file(store, kind, path, today=TODAY)
        assert (r.rows, r.added, r.refused) == (0, 0, 0)
        assert store.snapshot() == before


# --- xlsx -----------------------------------------------------------------------------

def _workbook(path, sheets: dict[str, list[list]], merge: str | None = None):
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for title, rows in sheets.items():
        ws = wb.create_sheet(title)
        for row in rows:
            ws.append(row)
        if merge:
            ws.merge_cells(merge)
    wb.save(path)
    return path


LOT_ROWS = [["lot", "pattern", "poured_on", "heat", "molds"], ["L4", "T-100", dt.date(2026, 4, 1), "H4", 5]]


def test_xlsx_with_two_sheets_none_named_after_the_kind_is_refused(store, tmp_path):
    path = _workbook(tmp_path / "lots.xlsx", {"Sheet1": LOT_ROWS, "notes": [["hello"]]})
    before = store.snapshot()
    with pytest.raises(BadFile) as info:
        import_file(store, "lots", path, today=TODAY)
    assert str(info.value) == ("lots.xlsx: the workbook has sheets Sheet1, notes; name the sheet to "
                               "import 'lots' or keep only one sheet")
    assert store.snapshot() == before


def test_xlsx_sheet_named_after_the_kind_is_taken(store, tmp_path):
    path = _workbook(tmp_path / "lots.xlsx", {"summary": [["x"], [1]], "lots": LOT_ROWS})
    r = import_file(store, "lots", path, today=TODAY)
    assert (r.added, r.refused) == (1, 0)
    assert store.lot("L4")["poured_on"] == "2026-04-01"  # a date cell becomes YYYY-MM-DD
    assert store.lot("L4")["molds"] == 5


def test_xlsx_with_a_merged_header_cell_is_refused(store, tmp_path):
    rows = [["lot", "pattern", "poured_on", None, "heat", "molds"],
            ["L4", "T-100", "2026-04-01", "", "H4", 5]]
    path = _workbook(tmp_path / "lots.xlsx", {"lots": rows}, merge="C1:D1")
    before = store.snapshot()
    with pytest.raises(BadFile) as info:
        import_file(store, "lots", path, today=TODAY)
    assert str(info.value) == ("lots.xlsx: the header row has empty or merged cells (lot, pattern, "
                               "poured_on, Unnamed: 3, heat, molds); put one column name in each header cell")
    assert store.snapshot() == before


def test_xlsx_repeated_column_and_bad_row(store, tmp_path):
    dup = _workbook(tmp_path / "lots.xlsx", {"lots": [LOT_ROWS[0] + ["pattern"], LOT_ROWS[1] + ["T-100"]]})
    assert "lots.xlsx, row 1 (header): repeated column(s) pattern." in refuse(
        store, tmp_path, "lots", dup.read_bytes(), name="lots.xlsx")
    bad = _workbook(tmp_path / "lots.xlsx", {"lots": LOT_ROWS + [[], ["L5", "T-100", "2026-04-01", "H", -1]]})
    msg = refuse(store, tmp_path, "lots", bad.read_bytes(), name="lots.xlsx")
    assert ("lots.xlsx, row 4, column molds: got '-1'; molds must be a whole number above 0 and at most "
            "100,000") in msg


# --- --skip-bad -----------------------------------------------------------------------

def test_skip_bad_writes_good_rows_and_returns_refused_ones(store, tmp_path):
    path = tmp_path / "lots.csv"
    path.write_text(new_file("lots", {"lot": "L4"}, {"lot": "L5", "molds": "-1"}, {"lot": "L6"}),
                    encoding="utf-8")
    r = import_file(store, "lots", path, today=TODAY, skip_bad=True)
    assert (r.rows, r.added, r.refused) == (3, 2, 1)
    assert {"L4", "L6"} <= set(store.table("lots")["lot"])
    assert "L5" not in set(store.table("lots")["lot"])
    assert r.refused_rows[0]["row"] == 3
    assert r.refused_rows[0]["reason"] == ("lots.csv, row 3, column molds: got '-1'; molds must be a "
                                           "whole number above 0 and at most 100,000")


def test_skip_bad_keeps_good_riser_revisions(store, tmp_path):
    # Revision B is new and good; revision C clashes with A's date: B is written, C refused.
    path = tmp_path / "risers.csv"
    path.write_text(new_file("risers", {}, {"revision": "C", "effective_from": "2026-01-05"}),
                    encoding="utf-8")
    r = import_file(store, "risers", path, today=TODAY, skip_bad=True)
    assert (r.added, r.refused) == (1, 1)
    assert set(store.revisions_frame()["revision"]) == {"A", "B", "1"}
    assert r.refused_rows[-1]["row"] == 3


def test_cli_skip_bad_writes_a_refused_csv(runner, tmp_path):
    db = tmp_path / "log.db"
    assert runner.invoke(main, ["init", "--db", str(db)]).exit_code == 0
    result = runner.invoke(main, ["import", str(GOOD), "--db", str(db)])
    assert result.exit_code == 0, result.output
    path = tmp_path / "lots.csv"
    path.write_text(new_file("lots", {"lot": "L4"}, {"lot": "L5", "pattern": "NOPE"}, {"lot": "L6"}),
                    encoding="utf-8")
    result = runner.invoke(main, ["import", "lots", str(path), "--skip-bad", "--db", str(db)])
    assert result.exit_code == 0, result.output
    refused = tmp_path / "lots.refused.csv"
    assert f"lots.csv: 1 row(s) refused, written to {refused}:" in result.output
    with refused.open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["row"] for r in rows] == ["3"]
    assert rows[0]["lot"] == "L5"
    assert rows[0]["reason"] == ("lots.csv, row 3, column pattern: got 'NOPE'; unknown pattern; import it "
                                 "in patterns.csv first or check the code")
    with Store(db) as s:
        assert {"L4", "L6"} <= set(s.table("lots")["lot"])


def test_cli_refusal_is_one_clear_error_without_traceback(runner, tmp_path):
    db = tmp_path / "log.db"
    assert runner.invoke(main, ["init", "--db", str(db)]).exit_code == 0
    assert runner.invoke(main, ["import", str(GOOD), "--db", str(db)]).exit_code == 0
    path = tmp_path / "lots.csv"
    path.write_text(new_file("lots", {"molds": "0"}), encoding="utf-8")
    with Store(db) as s:
        before = s.snapshot()
    result = runner.invoke(main, ["import", "lots", str(path), "--db", str(db)])
    assert result.exit_code == 1
    assert ("Error: lots.csv: refused, nothing written (1 bad row(s)):\nlots.csv, row 2, column molds: got "
            "'0'; molds must be a whole number above 0 and at most 100,000") in result.output
    assert "Traceback" not in result.output
    with Store(db) as s:
        assert s.snapshot() == before
