"""The log's own settings: the currency, set once (`pourback init --currency`),
changeable later (`pourback settings --currency`), named by its ISO 4217 code
wherever money is shown, with thousands separators."""

import json

import pytest

from tracker.cli import main
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.log.store import Store


def test_init_sets_the_currency_and_settings_changes_it(tmp_path, runner):
    db = str(tmp_path / "plant.db")
    res = runner.invoke(main, ["init", "--db", db, "--currency", "eur"])
    assert res.exit_code == 0, res.output
    assert "money in EUR" in res.output
    res = runner.invoke(main, ["settings", "--db", db, "--json"])
    assert json.loads(res.output) == {"currency": "EUR", "units": "metric"}
    res = runner.invoke(main, ["settings", "--db", db, "--currency", "USD"])
    assert res.exit_code == 0 and res.output == "currency: USD\nunits: metric\n"
    with Store(db) as s:
        assert s.get_meta("currency") == "USD"


@pytest.mark.parametrize("code", ["EU", "EURO", "€", "12A", ""])
def test_a_bad_currency_code_is_refused_and_nothing_changes(tmp_path, runner, code):
    db = str(tmp_path / "plant.db")
    runner.invoke(main, ["init", "--db", db, "--currency", "GBP"])
    res = runner.invoke(main, ["settings", "--db", db, "--currency", code])
    assert res.exit_code == 1
    # ISO 4217: a currency's code is three letters
    assert res.output == (f"Error: currency: got {code!r}; give the three-letter ISO 4217 code of the "
                          "currency the log's costs are in, e.g. EUR, USD or GBP\n")
    with Store(db) as s:
        assert s.get_meta("currency") == "GBP"


def test_the_default_is_shown_as_a_code(empty_db, runner):
    res = runner.invoke(main, ["settings", "--db", str(empty_db)])
    assert res.output == f"currency: {DEFAULT_CURRENCY}\nunits: metric\n" and len(DEFAULT_CURRENCY) == 3


def test_init_sets_the_units_and_settings_changes_them(tmp_path, runner):
    db = str(tmp_path / "plant.db")
    res = runner.invoke(main, ["init", "--db", db, "--units", "us"])
    assert res.exit_code == 0, res.output
    assert "units us" in res.output
    res = runner.invoke(main, ["settings", "--db", db, "--json"])
    assert json.loads(res.output)["units"] == "us"
    res = runner.invoke(main, ["settings", "--db", db, "--units", "metric"])
    assert res.exit_code == 0 and "units: metric" in res.output
    res = runner.invoke(main, ["settings", "--db", db, "--units", "imperial"])
    assert res.exit_code == 2 and "imperial" in res.output
    with Store(db) as s:
        assert s.get_meta("units") == "metric"


def test_review_and_reports_name_the_currency(app_db, runner):
    from tracker.review.report import render
    from tracker.review.weekly import weekly_review

    runner.invoke(main, ["settings", "--db", str(app_db), "--currency", "CHF"])
    with Store(app_db) as s:
        r = weekly_review(s)
    assert r["currency"] == "CHF" and r["units"]["scrap_cost"] == "CHF"
    cost = r["totals"]["window"]["scrap_cost"]
    assert cost >= 1000  # so the separator shows
    for fmt in ("table", "md", "html"):
        text = render(r, fmt)
        assert "Scrap cost (CHF)" in text, fmt
        assert f"{cost:,.0f}" in text, fmt  # thousands separated
        assert "currency units" not in text


def test_review_page_names_the_currency(app_db, runner, monkeypatch):
    from tests.support.dashboard import metric, open_page

    runner.invoke(main, ["settings", "--db", str(app_db), "--currency", "USD"])
    at = open_page(app_db, "weekly_review.py", monkeypatch)
    value = metric(at, "Scrap cost, window (USD)")
    assert "," in value and value.replace(",", "").isdigit()
    table = next(d.value for d in at.dataframe if "scrap cost (USD)" in d.value.columns)
    assert len(table)


def test_suggestions_page_names_the_currency(app_db, runner, monkeypatch):
    from tests.support.dashboard import open_page

    runner.invoke(main, ["settings", "--db", str(app_db), "--currency", "GBP"])
    at = open_page(app_db, "suggestions.py", monkeypatch)
    balance = next(d.value for d in at.dataframe if "yield after (%)" in d.value.columns)
    assert {"balance (GBP/year)", "scrap saved (GBP/year)", "extra cost (GBP/year)"} <= set(balance.columns)
    assert not any("currency units" in c for c in balance.columns)
    # the what-if's money: every figure headed with the currency, not only its help
    helps = [m.help for m in at.metric if m.label in ("Yearly balance (GBP/year)", "Scrap saved (GBP/year)")]
    assert len(helps) == 2 and all("GBP per year" in h for h in helps), helps
    money = [m.label for m in at.metric if "riser metal" in m.label or "Sleeves" in m.label]
    assert money == ["Extra riser metal (GBP/year)", "Sleeves (GBP/year)"]
    assert any(" GBP per scrapped casting" in c.value for c in at.caption)


def test_what_if_and_plant_comparison_name_the_currency(app_db, runner):
    import re

    from tracker.review.report_parts import plant_columns
    from tracker.views.review import plant_comparison_table

    runner.invoke(main, ["settings", "--db", str(app_db), "--currency", "CHF"])
    res = runner.invoke(main, ["what-if", "--db", str(app_db), "--pattern", "P-1017", "--riser", "R3",
                               "--diameter-mm", "130"])
    assert res.exit_code == 0, res.output
    assert re.search(r"Cost per scrapped casting [\d,]+ CHF;", res.output), res.output
    assert "scrap cost (CHF)" in plant_comparison_table({"currency": "CHF", "plants": []}).columns
    assert "Scrap cost (CHF)" in [h for h, _ in plant_columns("CHF")]
