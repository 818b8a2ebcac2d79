"""Account commands (`pourback user ...`) and the audit (`pourback audit`).

The command line is the local desk: whoever can write the log file manages its
accounts, and is recorded as the operating-system user or ``--by``.
"""

from __future__ import annotations

import sys

import click

from tracker.cli.command import command, group
from tracker.cli.errors import handle_errors
from tracker.cli.options import db_option, json_option, open_store, who
from tracker.cli.output import emit, table

by_option = click.option("--by", default=None, help="Who makes the change (recorded in the audit; "
                                                    "default: login name).")
password_stdin_option = click.option("--password-stdin", is_flag=True,
                                     help="Read the password from the first line of standard input "
                                          "instead of asking for it.")


def _read_password(from_stdin: bool) -> str:
    from tracker.log.accounts import MIN_PASSWORD_LENGTH

    if from_stdin:
        line = sys.stdin.readline()
        return line.rstrip("\r\n")
    return click.prompt(f"Password (at least {MIN_PASSWORD_LENGTH} characters)", hide_input=True,
                        confirmation_prompt="Repeat the password", prompt_suffix=": ")


@group()
def user():
    """Accounts that sign in to a served dashboard, and their roles.

    Example:

        pourback user add mlopez --role inspector
        pourback user list
    """


@user.command("add")
@click.argument("name")
@click.option("--role", required=True, help="inspector, methods, reviewer or admin (see `pourback user roles`).")
@password_stdin_option
@by_option
@db_option
@handle_errors
def user_add(name, role, password_stdin, by, db_path):
    """Add an account NAME with a ROLE; asks for its password (typed twice,
    not shown) unless --password-stdin.

    Example:

        pourback user add mlopez --role inspector
        printf '%s\\n' "$PASS" | pourback user add qa-lead --role admin --password-stdin
    """
    from tracker.log import accounts as auth

    auth.check_name(name)
    auth.check_role(role)
    password = _read_password(password_stdin)
    with open_store(db_path, create=True) as store:
        acc = auth.add_user(store, name, role, password, by=who(by))
    click.echo(f"Added user {acc['name']} (role {acc['role']}) to {store.name}")


@user.command("list")
@db_option
@json_option
@handle_errors
def user_list(db_path, as_json):
    """List the accounts: role, enabled, locked, last sign-in (never a password or its hash).

    Example:

        pourback user list
    """
    from tracker.log import accounts as auth

    with open_store(db_path) as store:
        rows = auth.list_users(store)
    emit(rows, as_json, lambda rs: table(rs, [
        ("name", "user"), ("role", "role"), ("enabled", "enabled"), ("locked", "locked"),
        ("last_sign_in", "last sign-in (UTC)"), ("password_set_at", "password set (UTC)"),
        ("created_by", "added by")]))


@user.command("passwd")
@click.argument("name")
@password_stdin_option
@by_option
@db_option
@handle_errors
def user_passwd(name, password_stdin, by, db_path):
    """Set a new password for NAME (also lifts a sign-in lock and ends its open sessions).

    Example:

        pourback user passwd mlopez
    """
    from tracker.log import accounts as auth

    with open_store(db_path) as store:
        auth.find_user(store, name)  # before asking for a password
        password = _read_password(password_stdin)
        acc = auth.set_password(store, name, password, by=who(by))
    click.echo(f"New password set for {acc['name']}; its open sessions are ended")


@user.command("disable")
@click.argument("name")
@by_option
@db_option
@handle_errors
def user_disable(name, by, db_path):
    """Disable NAME: it can no longer sign in and its open sessions end; the
    records it wrote keep its name.

    Example:

        pourback user disable mlopez
    """
    from tracker.log import accounts as auth

    with open_store(db_path) as store:
        acc = auth.set_enabled(store, name, False, by=who(by))
    click.echo(f"Disabled user {acc['name']}")
    if acc["enabled_admins"] == 0:
        click.echo("Note: the log has no enabled admin account now; the dashboard will not start beyond "
                   "this computer until one is added (`pourback user add NAME --role admin`).", err=True)


@user.command("enable")
@click.argument("name")
@by_option
@db_option
@handle_errors
def user_enable(name, by, db_path):
    """Enable NAME again (also lifts a sign-in lock).

    Example:

        pourback user enable mlopez
    """
    from tracker.log import accounts as auth

    with open_store(db_path) as store:
        acc = auth.set_enabled(store, name, True, by=who(by))
    click.echo(f"Enabled user {acc['name']}")


@user.command("roles")
@json_option
def user_roles(as_json):
    """The roles and what each may do (every role reads every page and report).

    Example:

        pourback user roles
    """
    from tracker.log import accounts as auth

    emit(auth.role_table(), as_json, lambda rs: table(rs, [("role", "role"), ("may", "may")]))


@command("audit")
@click.option("--since", default=None, help="Only entries from this date (YYYY-MM-DD) or time "
                                            "(YYYY-MM-DDTHH:MM, UTC) on.")
@db_option
@json_option
@handle_errors
def audit(since, db_path, as_json):
    """The audit: sign-ins, failed sign-ins, locks, account changes and what
    was written while the dashboard was served with sign-in, oldest first.

    Example:

        pourback audit --since 2026-12-01
    """
    from tracker.log import accounts as auth

    with open_store(db_path) as store:
        rows = auth.audit_log(store, since)
    emit(rows, as_json, lambda rs: table(rs, [
        ("at", "at (UTC)"), ("event", "event"), ("user", "by"), ("subject", "account"), ("detail", "detail"),
        ("via", "via")]))
