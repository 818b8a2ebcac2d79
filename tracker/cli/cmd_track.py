"""The track-record command: what the model predicted for each riser change, beside what followed."""

from __future__ import annotations

import click

from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import db_option, json_option, open_store, weeks_option
from tracker.cli.output import caution_text, emit, table
from tracker.numbers import pct_text


@command("track-record")
@click.option("--pattern", default=None, help="Only this pattern (default: every pattern).")
@weeks_option
@db_option
@json_option
@handle_errors
def track_record(pattern, weeks, db_path, as_json):
    """What the model predicted for each riser change, beside what was observed since.

    One row per riser revision that changed a riser whose zone has shrinkage
    records. Each prediction is made only from what was poured before the
    revision took effect (the model refitted on those lots, the zone's rate
    calibrated on the weeks before). The verdict stays "too early" until the
    castings since the change are as many as the before/after test needs
    (5 % two-sided, 80 % power); then "as predicted" where the observed rate
    lies inside the prediction's 90 % interval for that many castings,
    "worse than predicted" or "better than predicted" outside it.

    Example:

        pourback track-record --pattern P-1031
    """
    from tracker.advice.track_record import track_record as run

    with open_store(db_path) as store:
        out = run(store, pattern=pattern, weeks=weeks)
    emit(out, as_json, _format)


def _format(out: dict) -> str:
    rows = out["revisions"]
    if not rows:
        return ("No riser change to judge: no revision changed a riser whose zone has shrinkage records.\n\n"
                + caution_text())
    show = [{**r, "predicted": pct_text(r["predicted_rate_after"], 2),
             "interval": f"{pct_text(r['predicted_rate_after_low'], 2)} to "
                         f"{pct_text(r['predicted_rate_after_high'], 2)}",
             "before": pct_text(r["rate_before"], 1),
             "observed": f"{pct_text(r['observed_rate_after'], 2)} ({r['shrinkage_rejects_after']} of "
                         f"{r['castings_after']})",
             "more": "-" if r["more_castings_to_verdict"] is None else r["more_castings_to_verdict"]}
            for r in rows]
    lines = [table(show, [("pattern", "pattern"), ("revision", "revision"), ("effective_from", "from"),
                          ("zone", "zone"), ("riser", "riser"), ("before", "observed before"),
                          ("predicted", "predicted after"), ("interval", "90 % interval"),
                          ("observed", "observed after"), ("more", "castings to a verdict"),
                          ("verdict", "verdict")])]
    s = out["summary"]
    cover = "-" if s["coverage"] is None else pct_text(s["coverage"], 0)
    loss = "-" if s["log_loss"] is None else f"{s['log_loss']:.4f}"
    lines += ["", f"Judged {s['judged']} of {s['revisions']}; inside their 90 % interval: {cover}; "
                  f"mean log loss per casting: {loss}."]
    if s["calibration"]:
        lines += ["", "Calibration (predicted against observed):",
                  table([{"bin": f"{pct_text(c['bin_low'], 0)} to {pct_text(c['bin_high'], 0)}",
                          "rows": c["rows"], "castings": c["castings"], "predicted": pct_text(c["predicted_rate"], 2),
                          "observed": pct_text(c["observed_rate"], 2)} for c in s["calibration"]])]
    return "\n".join(lines) + "\n\n" + caution_text()
