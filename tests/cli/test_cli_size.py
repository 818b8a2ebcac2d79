import json

import pytest

from tracker.cli import main


def test_size_json_keys_and_values(runner):
    res = runner.invoke(main, ["size", "--alloy", "steel", "--volume-cm3", "2000", "--area-cm2", "1100",
                               "--placement", "side", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    for key in ["diameter_mm", "height_mm", "riser_volume_cm3", "riser_modulus_cm", "section_modulus_cm",
                "freezing_ratio", "volume_ratio", "caine_min_diameter_mm", "modulus_min_diameter_mm",
                "feed_min_diameter_mm", "governing_rule"]:
        assert key in d
    assert d["diameter_mm"] == max(d["caine_min_diameter_mm"], d["modulus_min_diameter_mm"],
                                   d["feed_min_diameter_mm"])
    # M_c = 2000/1100 cm; modulus rule 1.2 · M_c with M = D/6 gives D = 7.2 · M_c.
    assert d["modulus_min_diameter_mm"] == pytest.approx(72 * 2000 / 1100)
    assert d["governing_rule"] == "modulus"
    assert "caution" in d


def test_size_human_output_has_units_and_caution(runner):
    res = runner.invoke(main, ["size", "--alloy", "ductile_iron", "--volume-cm3", "2000", "--area-cm2", "1100"])
    assert res.exit_code == 0, res.output
    assert "Riser diameter (mm)" in res.output
    assert "not applied (no Caine constants for this alloy)" in res.output
    assert "CAUTION:" in res.output


@pytest.mark.parametrize("args,message", [
    (["--volume-cm3", "-1", "--area-cm2", "10"], "Error: --volume-cm3: got -1.0; volume_cm3 must be a number of at least 0.001 and at most 100,000,000 cm³"),  # noqa: E501 (one case a line)
    (["--volume-cm3", "0", "--area-cm2", "10"], "Error: --volume-cm3: got 0.0"),
    (["--volume-cm3", "100", "--area-cm2", "150", "--h-over-d", "3.1"], "Error: h_over_d: got 3.1; H/D must lie between 0.5 and 3.0"),
    (["--volume-cm3", "100", "--area-cm2", "150", "--efficiency", "0.02"], "Error: efficiency: got 0.02; must be above the metal to feed 0.0462 (shrinkage 0.035 + liquid contraction 0.0112)"),
    # A pour temperature out of the lots import's range is named as such, not as an
    # efficiency too low for an absurd liquid contraction.
    (["--volume-cm3", "100", "--area-cm2", "150", "--pour-temp-c", "99999"],
     "Error: --pour-temp-c: got 99999.0; a pour temperature lies between 400 °C and 1,800 °C"),
    (["--volume-cm3", "100", "--area-cm2", "150", "--pour-temp-c", "nan"], "Error: --pour-temp-c: got nan"),
    (["--volume-cm3", "1e12", "--area-cm2", "1e9"], "Error: --volume-cm3: got 1000000000000.0; volume_cm3 must be a number of at least 0.001 and at most 100,000,000 cm³"),  # noqa: E501 (one case a line)
    (["--volume-cm3", "100", "--area-cm2", "1e8"], "Error: --area-cm2: got 100000000.0; area_cm2 must be a number of at least 0.01 and at most 10,000,000 cm²"),  # noqa: E501 (one case a line)
])
def test_size_bad_input_one_line_no_traceback(runner, args, message):
    res = runner.invoke(main, ["size", "--alloy", "steel", *args])
    assert res.exit_code != 0
    assert message in res.output
    assert "Traceback" not in res.output


def test_size_unknown_alloy(runner):
    res = runner.invoke(main, ["size", "--alloy", "mithril", "--volume-cm3", "1", "--area-cm2", "6"])
    assert res.exit_code == 1
    assert res.output.strip() == ("Error: alloy: got 'mithril'; known alloys are aluminum, aluminum_bronze, "
                                  "cast_iron_brass, ductile_iron, gray_iron, silicon_bronze, steel")


def test_size_pour_below_the_liquidus_counts_no_liquid_contraction_and_says_so(runner):
    # Steel's liquidus in the alloy table is 1,510 °C (from memory): a pour at 1,450 °C
    # leaves nothing above it to contract, and the output says why.
    res = runner.invoke(main, ["size", "--alloy", "steel", "--volume-cm3", "100", "--area-cm2", "150",
                               "--pour-temp-c", "1450", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert d["liquid_contraction"] == 0.0
    assert any("below the alloy's liquidus" in n for n in d["notes"])


def test_size_pour_temperature_in_us_units_is_refused_in_fahrenheit(runner):
    res = runner.invoke(main, ["size", "--units", "us", "--alloy", "steel", "--volume-in3", "122",
                               "--area-in2", "170", "--pour-temp-f", "5000"])
    assert res.exit_code != 0
    # 400 °C = 752 °F and 1,800 °C = 3,272 °F (F = C x 9/5 + 32)
    assert "Error: --pour-temp-f: got 5000.0; a pour temperature lies between 752 °F and 3,272 °F" in res.output


def test_joined_faces_let_a_zone_exceed_half_its_thickness(runner):
    pad = ["size", "--alloy", "steel", "--volume-cm3", "2000", "--area-cm2", "600", "--thickness-mm", "50"]
    # A plate cooling on both faces has V/A <= T/2 (DOMAIN.md, "Geometry and modulus"): 3.33 cm > 2.5 cm
    res = runner.invoke(main, pad)
    assert res.exit_code == 1 and "is above half the thickness" in res.output and "--joined-faces" in res.output
    res = runner.invoke(main, [*pad, "--joined-faces", "bottom;edges", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert d["section_modulus_cm"] == pytest.approx(2000 / 600)
    assert any("joined to the rest of the casting: bottom, edges" in n for n in d["notes"])


@pytest.mark.parametrize("spelling", ["aluminium", "Aluminium", "aluminum"])
def test_aluminium_is_accepted_wherever_an_alloy_is_named(runner, spelling):
    res = runner.invoke(main, ["size", "--alloy", spelling, "--volume-cm3", "2000", "--area-cm2", "1100", "--json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["alloy"] == "aluminum"


def test_the_cast_iron_and_brass_caine_row_is_brass_and_refused_for_an_iron(runner):
    # Caine's table (from memory) has a row "cast iron & brass"; the project uses it for brass.
    res = runner.invoke(main, ["size", "--alloy", "brass", "--volume-cm3", "2000", "--area-cm2", "1100", "--json"])
    assert res.exit_code == 0 and json.loads(res.output)["alloy"] == "cast_iron_brass"
    res = runner.invoke(main, ["size", "--alloy", "cast iron", "--volume-cm3", "2000", "--area-cm2", "1100"])
    assert res.exit_code == 1
    assert res.output == ("Error: alloy: got 'cast iron'; Caine's row 'cast iron & brass' is used for brass only; "
                          "for an iron give gray_iron (Caine's grey cast iron row) or ductile_iron (pressure "
                          "control)\n")
