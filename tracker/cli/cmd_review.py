"""Review command: the weekly scrap review as text, Markdown, HTML, CSV or JSON."""

from __future__ import annotations

import pathlib

import click

from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import (
    db_option,
    open_store,
    plant_option,
    target_option,
    units_option,
    week_option,
    weeks_option,
)
from tracker.cli.output import emit, show_progress
from tracker.cli.steps import Steps
from tracker.log.settings import resolve_units
from tracker.review.report import FORMATS


@command()
@week_option
@weeks_option
@target_option
@click.option("--format", "fmt", type=click.Choice(FORMATS), default=None,
              help="Output format [default: table].")
@click.option("--json", "as_json", is_flag=True, help="Shorthand for --format json.")
@click.option("--out", "out_path", type=click.Path(dir_okay=False, writable=True), default=None,
              help="Write the review to this file instead of standard output.")
@plant_option
@click.option("--compare-plants", is_flag=True,
              help="Compare the plants side by side for one alloy (give --alloy) instead of the review.")
@click.option("--alloy", default=None, help="The alloy to compare plants on (with --compare-plants).")
@units_option
@db_option
@handle_errors
def review(week, weeks, target, fmt, as_json, out_path, plant, compare_plants, alloy, units_override, db_path):
    """Weekly scrap review: scrap by pattern and defect, trend, control, riser revisions.

    Figures cover the review week and the weeks before it; problem patterns
    are those signalling on their weekly p-chart in the latest two weeks, or
    whose reject or shrinkage rate is surely above the target. As html or md
    it is the printable review pack: also the riser suggestions with their
    money and thermal verdicts, each pattern against the target, and the open
    actions (html with its charts; prints on A4 and Letter).

    Example:

        pourback review --week 2026-W47 --format html --out review-2026-W47.html
    """
    if as_json and fmt not in (None, "json"):
        raise click.UsageError(f"--json asks for JSON but --format asks for {fmt}; give only one")
    if compare_plants and alloy is None:
        raise click.UsageError("--compare-plants compares the plants for one alloy: give --alloy too")
    if compare_plants and plant is not None:
        raise click.UsageError("--compare-plants shows every plant; leave out --plant")
    if alloy is not None and not compare_plants:
        raise click.UsageError("--alloy is for --compare-plants; the review covers every alloy")
    fmt = "json" if as_json else (fmt or "table")

    from tracker.review.plants import compare_plants as compare
    from tracker.review.report import render, render_plants
    from tracker.review.weekly import in_system, weekly_review
    from tracker.views.pack import PACK_FORMATS, build_pack, render_pack

    with Steps(show_progress(fmt == "json")) as steps:
        with open_store(db_path) as store:
            system = resolve_units(store, units_override)
            if compare_plants:
                steps.step(f"Comparing the plants for {alloy}")
                data = compare(store, alloy, week=week, weeks=weeks, target=target)
            else:
                steps.step(f"Reviewing {week or 'the latest week'} ({weeks} weeks)")
                data = in_system(weekly_review(store, week=week, weeks=weeks, target=target, plant=plant), system)
                if fmt in PACK_FORMATS:  # the printable pack: suggestions, actions, charts
                    steps.step("Gathering the suggestions, actions and charts of the review pack")
                    pack = build_pack(store, data, draw=fmt == "html", system=system)
        steps.step(f"Writing the {fmt} review")
        if compare_plants:
            text = render_plants(data, fmt)
        else:
            text = render_pack(pack, fmt) if fmt in PACK_FORMATS else render(data, fmt)
    if out_path:
        path = pathlib.Path(out_path)
        try:
            path.write_text(text, encoding="utf-8")
        except OSError as exc:
            raise click.ClickException(f"cannot write {path}: {exc.strerror}; check the folder exists "
                                       "and is writable") from None
        emit(f"Wrote the {fmt} review of {data['week']} to {path}", False)
    else:
        emit(text.rstrip("\n"), False)
