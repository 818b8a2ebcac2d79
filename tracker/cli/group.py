"""The ``pourback`` group and the list of its commands: every command is added
here, by name, and nowhere else."""

from __future__ import annotations

import click

from tracker import __version__
from tracker.cli.cmd_action import action
from tracker.cli.cmd_advise import fit_model, suggest, what_if
from tracker.cli.cmd_app import dashboard, demo_command
from tracker.cli.cmd_casting import casting
from tracker.cli.cmd_copy import copy_log_command
from tracker.cli.cmd_design import check, patterns, size
from tracker.cli.cmd_log import backup, correct, history, import_, init, log, restore, settings
from tracker.cli.cmd_review import review
from tracker.cli.cmd_thermal import thermal
from tracker.cli.cmd_track import track_record
from tracker.cli.cmd_users import audit, user
from tracker.cli.command import group


@group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="pourback")
def main() -> None:
    """Pourback: riser design tied to the scrap it causes.

    Judge and size risers by the published rules, log inspection results per
    pour lot, review scrap by pattern each week, and get riser suggestions.
    """


COMMANDS: tuple[click.Command, ...] = (
    init, settings, import_, log, correct, history, backup, restore, copy_log_command,  # the log
    size, check, patterns, thermal, casting,                                             # riser design
    review, action,                                                                      # the weekly review
    suggest, what_if, fit_model, track_record,                                           # suggestions, the model
    dashboard, demo_command,                                                             # the dashboard
    user, audit,                                                                         # accounts, the audit
)

for _command in COMMANDS:
    main.add_command(_command)
