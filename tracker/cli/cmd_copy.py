"""copy-log: move a whole log between SQLite and PostgreSQL, verified."""

from __future__ import annotations

import click

from tracker.cli.command import command
from tracker.cli.errors import handle_errors
from tracker.cli.options import json_option
from tracker.cli.output import emit, table


def _format(d: dict) -> str:
    rows = [{"table": name, **r, "same": "yes" if r["same"] else "NO"} for name, r in d["tables"].items()]
    lines = [f"Copied {d['source']} to {d['dest']}:",
             table(rows, [("table", "table"), ("rows_from", "rows in FROM"), ("rows_to", "rows in TO"),
                          ("checksum_from", "checksum FROM"), ("checksum_to", "checksum TO"),
                          ("same", "same")])]
    if d["review_week"]:
        lines.append(f"Weekly review of {d['review_week']}: "
                     + ("the same figures on both" if d["review_same"] else "DIFFERS"))
    return "\n".join(lines)


@command("copy-log")
@click.argument("source", metavar="FROM")
@click.argument("dest", metavar="TO")
@json_option
@handle_errors
def copy_log_command(source, dest, as_json):
    """Copy a whole log FROM one place TO another: an SQLite file to a PostgreSQL
    server (postgresql://user@host:port/dbname) or back, then verify it.

    TO must be a new or empty log. Every table is copied in one transaction and
    checked before it commits: row counts and a checksum per table, and the
    same weekly review figures on both; any difference writes nothing. On a
    server: pourback copy-log plant.db postgresql://pourback@HOST:5432/foundry

    Example:

        pourback copy-log pourback.db plant-copy.db
    """
    from tracker.review.copycheck import copy_log

    emit(copy_log(source, dest), as_json, _format)
