"""Hostile figures for `size` (issue 27), with a log of each backend: the import's
bounds on the section, a shop's diameter step, NaN, and an error naming the option
as typed with the value as typed. Each is one line, never a traceback, and the
log is unchanged. Plumbing tests; no trade figures here.
"""

import pytest

from tests.support.hostile import snap
from tracker.cli import main

SIZE = ["size", "--alloy", "steel", "--placement", "side"]
SECTION = ["--volume-cm3", "2000", "--area-cm2", "1100"]
US_SECTION = ["--units", "us", "--volume-in3", "122", "--area-in2", "170"]


@pytest.mark.parametrize("args, message", [
    # The import's lower bounds: 0.001 cm³ and 0.01 cm² (tracker/limits.py)
    (["--volume-cm3", "1e-300", "--area-cm2", "1e-300"],
     "--volume-cm3: got 1e-300; volume_cm3 must be a number of at least 0.001 and at most 100,000,000 cm³; "
     "check the figure and its unit"),
    (["--volume-cm3", "2000", "--area-cm2", "1e-300"],
     "--area-cm2: got 1e-300; area_cm2 must be a number of at least 0.01 and at most 10,000,000 cm²; check "
     "the figure and its unit"),
    ([*SECTION, "--step-mm", "1e300"],
     "--step-mm: got 1e+300; the diameter step must be a number of at least 0.5 and at most 500 mm; check the "
     "figure and its unit"),
    ([*SECTION, "--step-mm", "nan"],
     "--step-mm: got nan; the diameter step must be a number of at least 0.5 and at most 500 mm; check the "
     "figure and its unit"),
    ([*SECTION, "--thickness-mm", "40", "--width-mm", "nan", "--length-mm", "nan"],
     "--width-mm: got nan; width_mm must be a number of at least 0.1 and at most 20,000 mm; check the figure "
     "and its unit"),
    ([*SECTION, "--length-mm", "1e300"],
     "--length-mm: got 1e+300; length_mm must be a number of at least 0.1 and at most 20,000 mm; check the "
     "figure and its unit"),
    # In inches: the option and the value as typed, and a bound that stays true
    # (5 mm = 0.19685039 in: at least 0.196851, not 0.19685, which is below it)
    ([*US_SECTION, "--pour-temp-f", "1e300"],
     "--pour-temp-f: got 1e+300; a pour temperature lies between 752 °F and 3,272 °F; check the figure and its "
     "unit"),
    ([*US_SECTION, "--step-in", "1e300"],
     "--step-in: got 1e+300; the diameter step must be a number of at least 0.0196851 and at most 19.685 in; "
     "check the figure and its unit"),
    ([*US_SECTION, "--thickness-in", "0.0039"],
     "--thickness-in: got 0.0039; thickness_in must be a number of at least 0.00393701 and at most 196.85 in; "
     "check the figure and its unit"),
])
def test_size_refuses_figures_out_of_bounds(runner, demo_db, args, message):
    before = snap(demo_db)
    result = runner.invoke(main, [*SIZE, *args, "--db", demo_db])
    assert result.exit_code == 1, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert result.output.strip().splitlines() == [f"Error: {message}"]
    assert snap(demo_db) == before


def test_size_takes_figures_at_the_bounds(runner, demo_db):
    # The bounds themselves are allowed: the smallest section the import takes, a 0.5 mm step.
    result = runner.invoke(main, [*SIZE, "--volume-cm3", "0.001", "--area-cm2", "0.06", "--step-mm", "0.5",
                                  "--db", demo_db, "--json"])
    assert result.exit_code == 0, result.output
