"""The dashboard in US customary units, run headless with streamlit's AppTest.

The sidebar's switch opens on the log's unit system and changes only this
browser session; every page then labels its tables, metrics, captions, form
fields and chart axes in in, in², in³, lb and °F, with the values converted by
the exact factors (25.4 mm per inch and 0.45359237 kg per pound: the
international yard and pound of 1959, NIST SP 811 (2008) appendix B.8), and
what a form takes in inches reaches the library as the same millimetres its
metric twin sends.
"""

import json
import re

import pytest
from streamlit.testing.v1 import AppTest

from tests.support import APP
from tests.support.dashboard import chart_data, layers, mark
from tracker.log import accounts as auth
from tracker.log import settings
from tracker.log.store import Store

PAGES = ["log_results.py", "weekly_review.py", "design_map.py", "pattern_file.py", "suggestions.py"]

# Exact by definition (1959 international yard and pound; NIST SP 811 (2008) B.8).
MM_PER_IN = 25.4
KG_PER_LB = 0.45359237

# A metric unit written as a unit (not inside a word or a column name such as diameter_mm).
METRIC_UNIT = re.compile(r"(?<![A-Za-z0-9_])(mm|cm|cm²|cm³|kg|°C)(?![A-Za-z0-9_²³])|\bper kg\b")


def open_in(db, page, monkeypatch, system: str | None = "us", timeout: int = 60) -> AppTest:
    """``page`` on the log ``db`` with the sidebar switch on ``system`` (None: left alone)."""
    monkeypatch.setenv("POURBACK_DB", str(db))
    at = AppTest.from_file(str(APP), default_timeout=timeout)
    if system is not None:
        at.session_state["unit_system"] = system
    at.run()
    if page != "log_results.py":
        at.switch_page(page).run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _plain(text) -> str:
    return re.sub(r"\\(.)", r"\1", str(text))


def _spec_titles(node) -> list[str]:
    """Every title in a Vega-Lite spec: axes, legends, tooltips."""
    out = []
    if isinstance(node, dict):
        for key, value in node.items():
            if key == "title" and isinstance(value, str):
                out.append(value)
            else:
                out.extend(_spec_titles(value))
    elif isinstance(node, list):
        for value in node:
            out.extend(_spec_titles(value))
    return out


def chart_specs(at) -> list[dict]:
    return [json.loads(el.proto.spec) for el in at.get("vega_lite_chart")]


def page_texts(at) -> list[str]:
    """What the page writes for a reader: headings, text, metrics (label, value, help),
    messages, table headings, widget labels, options and help, chart titles."""
    out = []
    for kind in ("title", "header", "subheader", "markdown", "caption", "text", "info", "warning", "error",
                 "success"):
        out += [_plain(e.value) for e in getattr(at, kind)]
    for m in at.metric:
        out += [m.label, str(m.value), _plain(m.proto.help)]
    for d in at.dataframe:
        out += [str(c) for c in d.value.columns]
    for kind in ("number_input", "selectbox", "radio", "text_input", "toggle", "multiselect", "date_input"):
        for w in getattr(at, kind):
            if w.key == "unit_system":
                continue  # the switch itself names both systems' units
            out += [w.label, _plain(getattr(w, "help", "") or "")]
            out += [str(o) for o in getattr(w, "options", [])]
    for spec in chart_specs(at):
        out += _spec_titles(spec)
    return out


def metric_units_left(at) -> list[str]:
    """Texts naming a metric unit; a source quoted in its published units is left as published."""
    from dashboard.common import PUBLISHED_FORM

    return [t for t in page_texts(at) if METRIC_UNIT.search(t.split(PUBLISHED_FORM)[0])]


def metric(at, label: str) -> str:
    hits = [m.value for m in at.metric if m.label == label]
    assert hits, f"no metric {label!r}; metrics are {[m.label for m in at.metric]}"
    return hits[0]


def table(at, column: str):
    return next(d.value for d in at.dataframe if column in d.value.columns)


# --- the switch ----------------------------------------------------------------------------------

def test_the_switch_opens_on_the_logs_setting(app_demo_db, app_db, monkeypatch):
    at = open_in(app_demo_db, "pattern_file.py", monkeypatch, system=None)
    assert at.radio(key="unit_system").value == "metric"
    assert "Casting weight (kg)" in [m.label for m in at.metric]
    with Store(app_db) as s:
        settings.set_units(s, "us")
    at = open_in(app_db, "pattern_file.py", monkeypatch, system=None)
    assert at.radio(key="unit_system").value == "us"
    assert "Casting weight (lb)" in [m.label for m in at.metric]


def test_switching_changes_this_session_only_until_made_the_logs_default(app_db, monkeypatch):
    at = open_in(app_db, "pattern_file.py", monkeypatch, system=None)
    assert not at.button(key="units_make_default") if "units_make_default" in [b.key for b in at.button] else True
    at.radio(key="unit_system").set_value("us").run()
    assert not at.exception
    assert "Casting weight (lb)" in [m.label for m in at.metric]
    with Store(app_db) as s:
        assert settings.units(s) == "metric"  # the switch wrote nothing
    # the local desk may change the log's settings: it is offered the button
    at.button(key="units_make_default").click().run()
    assert not at.exception and not at.error
    with Store(app_db) as s:
        assert settings.units(s) == "us"
    assert "units_make_default" not in [b.key for b in at.button]  # now the log's default


@pytest.mark.parametrize("role,offered", [("reviewer", False), ("admin", True)])
def test_only_a_role_that_may_change_settings_is_offered_the_default(role, offered, app_db, monkeypatch):
    with Store(app_db) as s:
        auth.add_user(s, "pat", role, "long enough password 1")
        session = auth.sign_in(s, "pat", "long enough password 1")
    monkeypatch.setenv("POURBACK_SIGN_IN", "1")
    monkeypatch.setenv("POURBACK_DB", str(app_db))
    at = AppTest.from_file(str(APP), default_timeout=60)
    at.session_state["pourback_session"] = session
    at.session_state["unit_system"] = "us"
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    assert ("units_make_default" in [b.key for b in at.button]) is offered
    with Store(app_db) as s:
        assert settings.units(s) == "metric"


# --- each page -----------------------------------------------------------------------------------

@pytest.mark.parametrize("page", PAGES)
def test_every_page_in_us_names_no_metric_unit(page, app_demo_db, monkeypatch):
    at = open_in(app_demo_db, page, monkeypatch)
    assert not at.error, [e.value for e in at.error]
    assert metric_units_left(at) == []


def test_pattern_file_in_inches_and_pounds(app_demo_db, monkeypatch):
    at = open_in(app_demo_db, "pattern_file.py", monkeypatch)
    at.selectbox(key="pattern").set_value("P-1031").run()
    with Store(app_demo_db) as s:
        pattern = s.pattern("P-1031")
        risers = s.risers_frame(pattern="P-1031").set_index(["revision", "riser"])
        zones = s.zones_frame("P-1031").set_index("zone")
    # 1 lb = 0.45359237 kg exactly (NIST SP 811 B.8)
    assert float(metric(at, "Casting weight (lb)")) == pytest.approx(pattern["casting_weight_kg"] / KG_PER_LB,
                                                                      rel=5e-4)
    design = table(at, "diameter (in)").set_index(["revision", "riser"])
    assert {"height (in)", "riser weight (lb)"} <= set(design.columns)
    assert not {"diameter (mm)", "height (mm)", "riser weight (kg)"} & set(design.columns)
    # 1 in = 25.4 mm exactly (NIST SP 811 B.8): a 140 mm riser is 5.5118 in
    for key, row in risers.iterrows():
        assert design.loc[key, "diameter (in)"] == pytest.approx(row["diameter_mm"] / MM_PER_IN, rel=1e-12)
    margins = table(at, "zone modulus (in)")
    assert "riser modulus (in)" in margins.columns
    z = table(at, "volume (in³)").set_index("zone")
    # 1 in³ = 2.54³ cm³ = 16.387064 cm³ exactly (from 1 in = 2.54 cm, NIST SP 811 B.8)
    for zone, row in zones.iterrows():
        assert z.loc[zone, "volume (in³)"] == pytest.approx(row["volume_cm3"] / 2.54 ** 3, rel=1e-12)
        assert z.loc[zone, "cooling area (in²)"] == pytest.approx(row["cooling_area_cm2"] / 2.54 ** 2, rel=1e-12)


def _balance(at, weight_col):
    return table(at, weight_col).set_index(["pattern", "zone"])[weight_col].dropna()


def test_suggestions_in_inches_and_pounds_match_the_metric_page(app_demo_db, monkeypatch):
    us = open_in(app_demo_db, "suggestions.py", monkeypatch)
    si = open_in(app_demo_db, "suggestions.py", monkeypatch, system="metric")
    now_in = table(us, "now: diameter (in)").set_index(["pattern", "zone"])
    now_mm = table(si, "now: diameter (mm)").set_index(["pattern", "zone"])
    for col in ("now: diameter", "suggested: diameter"):
        a, b = now_in[f"{col} (in)"].dropna(), now_mm[f"{col} (mm)"].dropna()
        assert len(a) == len(b) > 0
        # 1 in = 25.4 mm exactly (NIST SP 811 B.8)
        assert (a * MM_PER_IN).to_numpy() == pytest.approx(b.to_numpy(), rel=1e-12)
    lb, kg = _balance(us, "added metal (lb per mold)"), _balance(si, "added metal (kg per mold)")
    # 1 lb = 0.45359237 kg exactly (NIST SP 811 B.8)
    assert (lb * KG_PER_LB).to_numpy() == pytest.approx(kg.to_numpy(), rel=1e-12)
    # money totals do not change with the units
    money = [c for c in table(si, "pays off").columns if "/year)" in c]
    assert money and table(us, "pays off")[money].equals(table(si, "pays off")[money])


def test_what_if_typed_in_inches_reaches_the_library_as_its_metric_twin(app_demo_db, monkeypatch):
    us = open_in(app_demo_db, "suggestions.py", monkeypatch)
    si = open_in(app_demo_db, "suggestions.py", monkeypatch, system="metric")
    field = us.number_input(key="whatif_dia_us_P-1017_R3")
    assert field.label == "Diameter (in)"
    # the demo's bare 100 mm riser, shown in inches; a 1/2 in step (common practice)
    assert field.value == pytest.approx(100 / MM_PER_IN, rel=1e-12) and field.step == pytest.approx(0.5)
    # 5 in = 127 mm exactly (NIST SP 811 B.8)
    field.set_value(5.0).run()
    si.number_input(key="whatif_dia_P-1017_R3").set_value(127.0).run()
    assert not us.exception and not us.error and not si.exception and not si.error
    for label in ("Modulus ratio (rule: 1.2 or more)", "Caine margin (0 or more passes)",
                  "Feed margin (0 or more passes)", "Rules", "Predicted rate changed", "Yield changed",
                  "Extra riser metal (EUR/year)", "Yearly balance (EUR/year)"):
        assert metric(us, label) == metric(si, label), label
    head = [m for m in (_plain(e.value) for e in us.markdown) if "revision" in m and "riser R3" in m]
    assert head and " in, " in head[0] and " mm" not in head[0]


def _thermal(db, monkeypatch, system):
    at = open_in(db, "pattern_file.py", monkeypatch, system=system, timeout=180)
    at.selectbox(key="pattern").set_value("P-1004").run()
    at.toggle(key="thermal_on").set_value(True).run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _cells(at) -> list:
    """The freezing-time map's cells of each riser (the rect layer with a freezing time)."""
    out = []
    for el in at.get("vega_lite_chart"):
        spec = json.loads(el.proto.spec)
        for layer in layers(spec):
            if mark(layer) == "rect" and "freeze_min" in json.dumps(layer.get("encoding", {})):
                out.append((spec, chart_data(el, layer)))
    return out


def test_thermal_view_in_inches_and_fahrenheit(app_demo_db, monkeypatch):
    us, si = _thermal(app_demo_db, monkeypatch, "us"), _thermal(app_demo_db, monkeypatch, "metric")
    assert metric_units_left(us) == []
    us_maps, si_maps = _cells(us), _cells(si)
    assert len(us_maps) == len(si_maps) > 0
    for (spec, cells), (_, metric_cells) in zip(us_maps, si_maps, strict=False):
        titles = _spec_titles(spec)
        assert any(t.endswith("(in) from the riser's axis") or "x (in) along" in t for t in titles), titles
        assert "z (in), height" in titles
        # 1 in = 25.4 mm exactly (NIST SP 811 B.8)
        for col in ("x0", "x1", "z0", "z1"):
            assert (cells[col] * MM_PER_IN).to_numpy() == pytest.approx(metric_cells[col].to_numpy(), rel=1e-9)
    # °F = °C × 9/5 + 32 (NIST SP 811 B.8, degree Fahrenheit); the caption gives the pouring temperature
    pour = lambda at, unit: [float(m.group(1)) for c in at.caption  # noqa: E731 (a one-line local helper)
                             for m in [re.search(rf"pouring at (-?\d+) {unit}", _plain(c.value))] if m]
    f, c = pour(us, "°F"), pour(si, "°C")
    assert f and len(f) == len(c)
    assert f == pytest.approx([x * 9 / 5 + 32 for x in c], abs=1.0)  # both shown rounded to whole degrees
    niyama = [t for t in page_texts(us) if "Niyama" in t]
    assert any("(°F·min)^0.5/in" in t for t in niyama)


def _import(at, kind: str, name: str, content: str):
    at.selectbox(key="kind").set_value(kind).run()
    at.file_uploader(key="upload").set_value((name, content.encode("utf-8"), "text/csv"))
    at.run()
    at.text_input(key="import_by").input("Test Person")
    return at.button(key="import").click().run()


def test_a_file_in_pounds_stores_what_its_metric_twin_stores(app_db, monkeypatch):
    kg, cost_per_kg = 12.5, 1.8
    us = open_in(app_db, "log_results.py", monkeypatch)
    us.selectbox(key="kind").set_value("patterns").run()
    help_line = next(_plain(c.value) for c in us.caption if _plain(c.value).startswith("Columns: "))
    assert "casting_weight_lb" in help_line and "metal_cost_per_lb" in help_line, help_line
    # 1 lb = 0.45359237 kg exactly (NIST SP 811 B.8): the same casting and metal price in pounds
    _import(us, "patterns", "patterns-us.csv",
            "pattern,description,alloy,casting_weight_lb,castings_per_mold,metal_cost_per_lb\n"
            f"T-US,twin in pounds,steel,{kg / KG_PER_LB!r},2,{cost_per_kg * KG_PER_LB!r}\n")
    assert not us.error, [e.value for e in us.error]
    si = open_in(app_db, "log_results.py", monkeypatch, system="metric")
    _import(si, "patterns", "patterns-si.csv",
            "pattern,description,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg\n"
            f"T-SI,twin in kilograms,steel,{kg},2,{cost_per_kg}\n")
    assert not si.error, [e.value for e in si.error]
    with Store(app_db) as s:
        a, b = s.pattern("T-US"), s.pattern("T-SI")
    for key in ("casting_weight_kg", "metal_cost_per_kg"):
        assert a[key] == pytest.approx(b[key], rel=1e-12), key
