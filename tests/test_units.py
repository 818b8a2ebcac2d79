"""The unit-system edge (tracker/units.py) against an outside reference: the
`pint` units library, and the exact definitions of the inch and the pound
(international yard and pound agreement, 1959; NIST SP 811, appendix B)."""

import numpy as np
import pandas as pd
import pint
import pytest

from tracker import units
from tracker.errors import BadInput

U = pint.UnitRegistry()

# (metric name, metric unit, customary unit) in pint's spelling
CASES = [
    ("diameter_mm", "millimeter", "inch"),
    ("section_modulus_cm", "centimeter", "inch"),
    ("cooling_area_cm2", "centimeter**2", "inch**2"),
    ("volume_cm3", "centimeter**3", "inch**3"),
    ("casting_weight_kg", "kilogram", "pound"),
]


@pytest.mark.parametrize("name,metric,us", CASES)
def test_factors_agree_with_pint(name, metric, us):
    for value in (0.0, 1.0, 25.4, 123.456, 1e4):
        # reference: pint's unit definitions
        want = U.Quantity(value, metric).to(us).magnitude
        assert units.to_system(name, value, "us") == pytest.approx(want, rel=1e-12, abs=1e-12)
        assert units.to_metric(name, want, "us") == pytest.approx(value, rel=1e-12, abs=1e-12)


def test_exact_definitions():
    # NIST SP 811 appendix B: 1 in = 25.4 mm exactly, 1 lb = 0.45359237 kg exactly
    assert units.to_metric("diameter_mm", 1.0, "us") == 25.4
    assert units.to_metric("casting_weight_kg", 1.0, "us") == 0.45359237
    # 1 in³ = 16.387064 cm³ exactly
    assert units.to_metric("volume_cm3", 1.0, "us") == pytest.approx(16.387064, rel=1e-15)


def test_money_per_mass():
    # a price per kg converts by the inverse of the mass factor: 2.00 per kg = 0.907... per lb
    want = (U.Quantity(2.0, "1/kilogram")).to("1/pound").magnitude
    assert units.to_system("metal_cost_per_kg", 2.0, "us") == pytest.approx(want, rel=1e-12)
    assert units.column_name("metal_cost_per_kg", "us") == "metal_cost_per_lb"


def test_temperatures_absolute_and_difference():
    for c in (-40.0, 0.0, 100.0, 1560.0):
        # reference: pint's offset units
        want = U.Quantity(c, "degC").to("degF").magnitude
        assert units.to_system("pour_temp_c", c, "us") == pytest.approx(want, rel=1e-12)
        assert units.to_metric("pour_temp_c", want, "us") == pytest.approx(c, abs=1e-9)
    # a difference of 50 K is 90 °F of difference (pint: delta_degC -> delta_degF)
    want = U.Quantity(50.0, "delta_degC").to("delta_degF").magnitude
    assert units.to_system("default_superheat_k", 50.0, "us") == pytest.approx(want)
    assert units.to_system("pour_temp_dev_c", 50.0, "us") == pytest.approx(want)


def test_names():
    assert units.column_name("diameter_mm", "us") == "diameter_in"
    assert units.column_name("riser_volume_cm3", "us") == "riser_volume_in3"
    assert units.column_name("cooling_area_cm2", "us") == "cooling_area_in2"
    assert units.column_name("pour_temp_c", "us") == "pour_temp_f"
    assert units.column_name("riser_modulus_cm", "us") == "riser_modulus_in"
    assert units.column_name("diameter_mm", "metric") == "diameter_mm"
    # no unit: unchanged, never converted (a Caine constant ends in _c but is no temperature)
    for name in ("freezing_ratio", "volume_ratio", "caine_c", "molds", "reject_rate_pct"):
        assert units.column_name(name, "us") == name
        assert units.to_system(name, 3.0, "us") == 3.0


def test_us_names_for_an_import_kind():
    got = units.us_names(["pattern", "zone", "volume_cm3", "cooling_area_cm2", "thickness_mm", "length_mm"])
    assert got == {"volume_in3": "volume_cm3", "cooling_area_in2": "cooling_area_cm2",
                   "thickness_in": "thickness_mm", "length_in": "length_mm"}


def test_record_and_frame():
    rec = units.convert_record({"diameter_mm": 254.0, "freezing_ratio": 1.3, "governing_rule": "caine",
                                "nested": {"height_mm": 25.4}, "flag": True}, "us")
    assert rec == {"diameter_in": 10.0, "freezing_ratio": 1.3, "governing_rule": "caine",
                   "nested": {"height_in": 1.0}, "flag": True}
    frame = pd.DataFrame({"diameter_mm": [25.4, 50.8], "lot": ["L1", "L2"]})
    out = units.convert_frame(frame, "us")
    assert list(out.columns) == ["diameter_in", "lot"]
    np.testing.assert_allclose(out["diameter_in"], [1.0, 2.0])
    assert frame["diameter_mm"].tolist() == [25.4, 50.8]  # the input is untouched


def test_check_system():
    assert units.check_system(" US ") == "us"
    assert units.check_system("metric") == "metric"
    with pytest.raises(BadInput, match="metric.*us"):
        units.check_system("imperial")


def test_default_step():
    # common practice: 10 mm steps in metric shops, 1/2 in in inch shops
    assert units.default_step_mm("metric") == 10.0
    assert units.default_step_mm("us") == 12.7
