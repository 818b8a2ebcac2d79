"""The track record (tracker.advice.track_record): pours to a verdict against
statsmodels' power functions, the verdict's interval against scipy, no
hindsight, and the demo's resized riser."""

from __future__ import annotations

import json
import shutil
import sqlite3

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.power import NormalIndPower
from statsmodels.stats.proportion import proportion_effectsize

from tracker.advice import track_record as tr


@pytest.mark.parametrize("before, after, n_before", [(0.12, 0.03, 200), (0.12, 0.003, 197), (0.05, 0.02, 2000),
                                                      (0.30, 0.20, 500)])
def test_castings_to_verdict_is_statsmodels_power(before, after, n_before):
    n = tr.castings_to_verdict(before, after, n_before)
    assert tr.cohens_h(before, after) == pytest.approx(abs(proportion_effectsize(before, after)), rel=1e-12)
    h = abs(proportion_effectsize(before, after))
    power = NormalIndPower()

    # statsmodels' two-sample z-test power, nobs1 = castings after, ratio = before / after
    def p(k):
        return power.power(effect_size=h, nobs1=k, alpha=0.05, ratio=n_before / k, alternative="two-sided")

    assert p(n) >= 0.80 > p(n - 1)


def test_no_number_of_castings_tells_equal_rates_apart():
    assert tr.castings_to_verdict(0.05, 0.05, 500) is None
    assert tr.castings_to_verdict(0.05, 0.04, 30) is None  # too few castings before to ever tell
    assert tr.castings_to_verdict(None, 0.04, 300) is None


def test_verdict_interval_is_the_binomial_quantiles():
    # draws all at one rate: the interval is scipy's binomial 5 % and 95 % quantiles
    draws = np.full(50, 0.08)
    lo, hi = tr.observed_interval(draws, 400)
    assert lo * 400 == stats.binom.ppf(0.05, 400, 0.08) and hi * 400 == stats.binom.ppf(0.95, 400, 0.08)
    assert tr.verdict(0.0, lo, hi, 400, 100) == "better than predicted"
    assert tr.verdict(0.2, lo, hi, 400, 100) == "worse than predicted"
    assert tr.verdict(0.08, lo, hi, 400, 100) == "as predicted"
    assert tr.verdict(0.2, lo, hi, 99, 100) == "too early"
    assert tr.verdict(0.2, lo, hi, 400, None) == "too early"


def test_summary_counts_coverage_and_log_loss():
    rows = [{"verdict": "as predicted", "shrinkage_rejects_after": 2, "castings_after": 100,
             "predicted_rate_after": 0.03},
            {"verdict": "worse than predicted", "shrinkage_rejects_after": 30, "castings_after": 200,
             "predicted_rate_after": 0.05},
            {"verdict": "too early", "shrinkage_rejects_after": 0, "castings_after": 5, "predicted_rate_after": 0.1}]
    s = tr.summary(rows)
    assert (s["revisions"], s["judged"], s["coverage"]) == (3, 2, 0.5)
    # binomial log loss per casting, by hand
    want = -(2 * np.log(0.03) + 98 * np.log(0.97) + 30 * np.log(0.05) + 170 * np.log(0.95)) / 300
    assert s["log_loss"] == pytest.approx(want, rel=1e-12)
    assert sum(c["rows"] for c in s["calibration"]) == 2


@pytest.fixture(scope="module")
def demo_record(demo_db):
    from tracker.log.store import Store

    with Store(demo_db) as s:
        return tr.track_record(s)


def test_the_demo_resized_riser_is_in_the_track_record(demo_record):
    rows = [r for r in demo_record["revisions"] if (r["pattern"], r["riser"]) == ("P-1031", "R1")]
    assert len(rows) == 1
    r = rows[0]
    assert set(tr.ROW_KEYS) <= set(r)
    assert (r["revision"], r["zone"], r["effective_from"]) == ("2", "volute", "2026-08-24")
    assert r["predicted_rate_after_low"] <= r["predicted_rate_after"] <= r["predicted_rate_after_high"]
    assert r["verdict"] in ("too early", "as predicted", "worse than predicted", "better than predicted")
    assert r["castings_after"] > 0 and r["predicted_rate_after"] < r["rate_before"]
    assert demo_record["summary"]["revisions"] == len(demo_record["revisions"])


def test_no_hindsight_the_log_cut_at_the_change_gives_the_same_prediction(demo_db, demo_record, tmp_path):
    from tracker.log.store import Store

    if "://" in str(demo_db):
        pytest.skip("the cut is made with SQLite statements")
    r = next(r for r in demo_record["revisions"] if r["pattern"] == "P-1031")
    cut = tmp_path / "cut.db"
    shutil.copy(demo_db, cut)
    with sqlite3.connect(cut) as conn:  # every pour from the change's day on goes
        conn.execute("PRAGMA foreign_keys = OFF")
        conn.execute("DELETE FROM inspections WHERE lot IN (SELECT lot FROM lots WHERE poured_on >= ?)",
                     (r["effective_from"],))
        conn.execute("DELETE FROM lots WHERE poured_on >= ?", (r["effective_from"],))
    with Store(str(cut)) as s:
        again = next(x for x in tr.track_record(s)["revisions"] if (x["pattern"], x["riser"]) == ("P-1031", "R1"))
    for k in ("predicted_rate_after", "predicted_rate_after_low", "predicted_rate_after_high",
              "predicted_rate_before", "rate_before", "castings_before"):
        assert again[k] == r[k], k  # to the last digit
    assert again["castings_after"] == 0 and again["verdict"] == "too early"


def test_track_record_command_json(runner, demo_db):
    from tracker.cli.group import main

    result = runner.invoke(main, ["track-record", "--pattern", "P-1031", "--json", "--db", str(demo_db)])
    assert result.exit_code == 0, result.output
    out = json.loads(result.output)
    assert set(out) == {"revisions", "summary"}
    assert [r["riser"] for r in out["revisions"]] == ["R1"]
    text = runner.invoke(main, ["track-record", "--db", str(demo_db)])
    assert text.exit_code == 0, text.output
    assert "P-1031" in text.output and "volute" in text.output
    bad = runner.invoke(main, ["track-record", "--pattern", "NOPE", "--db", str(demo_db)])
    assert bad.exit_code != 0 and "Traceback" not in bad.output


def test_the_review_says_the_castings_to_a_verdict(demo_db):
    import copy

    from tracker.log.store import Store
    from tracker.review.weekly import weekly_review

    with Store(demo_db) as s:
        review = weekly_review(s, week="2026-W47")
        rev = next(r for r in review["revisions"] if r["pattern"] == "P-1031")
        assert [t["riser"] for t in rev["track_record"]] == ["R1"]
        assert [t["riser"] for t in review["track_record"]["revisions"]] == ["R1"]
        # the same revision, as if it were still under judgement with few castings after
        pending = copy.deepcopy(rev)
        pending["verdict"] = "not_enough_data"
        pending["after"]["inspected"] = 10
        tr.review_section(s, [pending], review["week_end"])
    b = pending["before"]
    want = tr.castings_to_verdict(b["shrinkage_rejected"] / b["inspected"], pending["predicted_rate_after"],
                                  b["inspected"])
    assert pending["predicted_rate_after"] == rev["track_record"][0]["predicted_rate_after"]
    assert pending["castings_to_verdict"] == want and want is not None
    assert pending["more_castings_to_verdict"] == max(0, want - 10)
    assert (pending["verdict_power"], pending["verdict_alpha"]) == (0.80, 0.05)
