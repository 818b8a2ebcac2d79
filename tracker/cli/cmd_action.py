"""Action commands (`pourback action ...`): what the weekly review decided to do
on a pattern, who does it and by when, and when it was done."""

from __future__ import annotations

import click

from tracker.cli.command import group
from tracker.cli.errors import handle_errors
from tracker.cli.options import db_option, json_option, open_store, who
from tracker.cli.output import emit, table

ACTION_TABLE = [("id", "action"), ("pattern", "pattern"), ("text", "what"), ("owner", "owner"), ("due", "due"),
                ("status", "status"), ("done_at", "done (UTC)"), ("note", "note")]


@group()
def action():
    """Actions decided at the weekly review: add one, list them, mark one done.

    Example:

        pourback action list --open
    """


@action.command("add")
@click.argument("pattern")
@click.option("--text", required=True, help="What is to be done (one line).")
@click.option("--owner", required=True, help="Who does it.")
@click.option("--due", required=True, metavar="YYYY-MM-DD", help="When it is due.")
@click.option("--by", default=None, help="Who adds it (default: login name).")
@db_option
@json_option
@handle_errors
def action_add(pattern, text, owner, due, by, db_path, as_json):
    """Add an action on PATTERN for an owner, due on a date.

    Example:

        pourback action add P-1017 --text "check riser R3 neck on the next 5 molds" --owner M.Lopez --due 2026-12-11
    """
    from tracker.log.actions import add_action

    with open_store(db_path) as store:
        row = add_action(store, pattern, text, owner, due, by=who(by))
    emit(row, as_json, lambda r: f"Added action {r['id']} on {r['pattern']} for {r['owner']}, due {r['due']}")


@action.command("list")
@click.option("--open", "open_only", is_flag=True, help="Only the actions not done yet (open or overdue).")
@click.option("--pattern", default=None, help="Only this pattern's actions.")
@db_option
@json_option
@handle_errors
def action_list(open_only, pattern, db_path, as_json):
    """The actions by due date, with their status: open, overdue or done.

    Example:

        pourback action list --open
        pourback action list --json
    """
    from tracker.log.actions import list_actions

    with open_store(db_path) as store:
        rows = list_actions(store, open_only=open_only, pattern=pattern)
    emit(rows, as_json, lambda rs: table(rs, ACTION_TABLE))


@action.command("done")
@click.argument("action_id", metavar="ID", type=click.IntRange(1, 2**63 - 1))
@click.option("--note", default=None, help="What was done or found (one line).")
@click.option("--by", default=None, help="Who closes it (default: login name).")
@db_option
@json_option
@handle_errors
def action_done(action_id, note, by, db_path, as_json):
    """Mark action ID done, with an optional note.

    Example:

        pourback action done 1 --note "neck enlarged to 80 mm in revision 2"
    """
    from tracker.log.actions import close_action

    with open_store(db_path) as store:
        row = close_action(store, action_id, note, by=who(by))
    emit(row, as_json, lambda r: f"Action {r['id']} on {r['pattern']} done")
