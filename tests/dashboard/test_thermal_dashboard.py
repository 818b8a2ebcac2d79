"""The thermal view in the pattern file, run headless with streamlit's AppTest."""

import json
import re

from streamlit.testing.v1 import AppTest

from tests.support import APP
from tracker.thermal import THERMAL_CAUTION


def _marks(spec):
    out = []
    for layer in spec.get("layer", [spec]):
        if "layer" in layer:
            out += _marks(layer)
        else:
            m = layer.get("mark")
            out.append(m["type"] if isinstance(m, dict) else m)
    return out


def test_pattern_file_thermal_view_draws_maps_and_the_caution(app_demo_db, monkeypatch):
    monkeypatch.setenv("POURBACK_DB", str(app_demo_db))
    at = AppTest.from_file(str(APP), default_timeout=120)
    at.query_params["pattern"] = "P-1004"
    at.run()
    at.switch_page("pattern_file.py").run()
    assert not at.exception
    at.toggle(key="thermal_on").set_value(True).run()
    assert not at.exception, [e.value for e in at.exception]
    labels = [m.label for m in at.metric]
    assert "Thermal check" in labels and "Last to freeze" in labels
    specs = [json.loads(el.proto.spec) for el in at.get("vega_lite_chart")]
    maps = [s for s in specs if "rect" in _marks(s)]
    # each riser: a freezing-time map (cells, outlines, the last point) and a Niyama map
    assert len(maps) >= 2
    assert any({"rect", "rule", "point"} <= set(_marks(s)) for s in maps)
    # the caution as a reader sees it (markdown escapes removed)
    assert any(THERMAL_CAUTION in re.sub(r"\\(.)", r"\1", i.value) for i in at.info)


def test_what_if_thermal_view_solves_the_changed_riser(app_demo_db, monkeypatch):
    monkeypatch.setenv("POURBACK_DB", str(app_demo_db))
    at = AppTest.from_file(str(APP), default_timeout=180)
    at.run()
    at.switch_page("suggestions.py").run()
    assert not at.exception, [e.value for e in at.exception]
    at.toggle(key="whatif_thermal").set_value(True).run()
    assert not at.exception, [e.value for e in at.exception]
    assert "Thermal check" in [m.label for m in at.metric]
    specs = [json.loads(el.proto.spec) for el in at.get("vega_lite_chart")]
    assert any({"rect", "rule", "point"} <= set(_marks(s)) for s in specs)
