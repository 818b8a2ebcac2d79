"""Hostile command lines of issue 27, with a log of each backend: figures for
`size` (the import's bounds on the section, a shop's diameter step, NaN, an error
naming the option as typed with the value as typed), and `import` of rows found
from another file (named, and added with --new-records). Each refusal is one
line, never a traceback, and the log is unchanged. Plumbing tests; no trade
figures here.
"""

import pytest

from tests.support import GOOD
from tests.support.hostile import TODAY, snap
from tracker.cli import main
from tracker.log.ingest import import_dir
from tracker.log.store import Store

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


def test_import_names_the_earlier_file_and_adds_with_new_records(runner, logs, tmp_path):
    db = logs.new()
    with Store(db) as s:
        import_dir(s, GOOD, today=TODAY)
    day = tmp_path / "day.csv"
    day.write_text("lot,inspected_on,method,quantity,result\nL1,2026-03-06,ut,1,accept\n")
    shift2 = tmp_path / "shift2.csv"
    shift2.write_bytes(day.read_bytes())
    assert runner.invoke(main, ["import", "inspections", str(day), "--db", db]).exit_code == 0
    again = runner.invoke(main, ["import", "inspections", str(shift2), "--db", db])
    assert again.exit_code == 0, again.output
    [note] = [line for line in again.output.splitlines() if "warning" in line]
    assert note.startswith("shift2.csv: warning: row 2 already in the log from day.csv, imported ")
    assert note.endswith(" UTC (the same rows of the same bytes), not added again; if they are new "
                         "inspections, import again with --new-records")
    added = runner.invoke(main, ["import", "inspections", str(shift2), "--new-records", "--db", db, "--json"])
    assert added.exit_code == 0, added.output
    assert '"added": 1' in added.output
