"""Driving the dashboard headless (streamlit's AppTest): open a page, read its
texts and charts, upload a file, find a lot with room for one more record."""

import json
import re

from streamlit.testing.v1 import AppTest

from tests.support import APP
from tracker.log.store import Store


def open_page(db, page, monkeypatch) -> AppTest:
    monkeypatch.setenv("POURBACK_DB", str(db))
    at = AppTest.from_file(str(APP), default_timeout=60)
    at.run()
    if page != "log_results.py":
        at.switch_page(page).run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def texts(elements) -> list[str]:
    """Element texts as a reader sees them (markdown backslash escapes of user text removed)."""
    return [re.sub(r"\\(.)", r"\1", e.value) for e in elements]


def chart_specs(at) -> list[dict]:
    return [json.loads(el.proto.spec) for el in at.get("vega_lite_chart")]


def chart_data(el, layer: dict):
    """The rows a chart layer draws (streamlit ships each dataset as Arrow next to the spec)."""
    import pyarrow as pa

    name = layer["data"]["name"]
    blob = next(d.data.data for d in el.proto.datasets if d.name == name)
    return pa.ipc.open_stream(blob).read_pandas()


def layers(spec: dict) -> list[dict]:
    out = []
    for layer in spec.get("layer", [spec]):
        out.extend(layers(layer) if "layer" in layer else [layer])
    return out


def mark(layer: dict) -> str:
    m = layer.get("mark")
    return m["type"] if isinstance(m, dict) else m


def metric(at, label: str) -> str:
    hits = [m.value for m in at.metric if m.label == label]
    assert hits, f"no metric {label!r}; metrics are {[m.label for m in at.metric]}"
    return hits[0]


def snapshot(db) -> dict:
    with Store(db) as s:
        return s.snapshot()


def lot_with_room(db):
    """A lot of the newest pour week whose visual inspection total leaves room for one more casting."""
    from tracker.views import log_results as views

    with Store(db) as s:
        lots = views.lot_options(s)
        totals = s.lot_totals(lots["lot"].head(40).tolist())
        for row in lots.head(40).itertuples():
            t = totals.get(row.lot, {"rejected": 0, "methods": {}})
            if t["methods"].get("visual", 0) < row.castings and t["rejected"] < row.castings:
                return row.lot, row.pattern
    raise AssertionError("no lot with room in the demo")


def upload(at, name: str, content: str, by="Test Person"):
    at.selectbox(key="kind").set_value("inspections")
    at.file_uploader(key="upload").set_value((name, content.encode("utf-8"), "text/csv"))
    at.run()
    at.text_input(key="import_by").input(by)
    return at.button(key="import").click().run()
