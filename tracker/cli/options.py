"""The options several commands share, and what they resolve to: the log
(``--db``), its unit system (``--units`` and the measured quantities), the
review window, and who makes a change (``--by``). A command's unit system is
``tracker.log.settings.resolve_units(store, --units)``."""

from __future__ import annotations

import getpass
import os
import pathlib
from collections.abc import Callable
from typing import Any

import click

from tracker import limits, units
from tracker.log.store import Store, is_url, resolve_path

json_option = click.option("--json", "as_json", is_flag=True, help="Print JSON instead of a table.")
plant_option = click.option("--plant", default=None, metavar="CODE",
                            help="Only this plant's patterns (default: every plant).")

# The review window and the target: one name, default and help for `review` and `suggest`;
# the library checks the values (tracker.limits), so the range is checked in one place.
week_option = click.option("--week", default=None, metavar="YYYY-Www",
                           help="ISO week to review, e.g. 2026-W47 (default: the last complete week "
                                "with pours; a week still running is never the default).")
weeks_option = click.option("--weeks", type=int, default=limits.WEEKS_DEFAULT, show_default=True,
                            help=limits.WEEKS_HELP)
target_option = click.option("--target", type=float, default=limits.TARGET_DEFAULT, show_default=True,
                             help=limits.TARGET_HELP)


# --- the log ---------------------------------------------------------------------------

DB_HELP = ("Log: an SQLite file, or a PostgreSQL server as postgresql://user@host:port/dbname "
           "(password from PGPASSWORD or ~/.pgpass) (default $POURBACK_DB, else ./pourback.db).")


def db_option(fn: Callable[..., Any]) -> Callable[..., Any]:
    """--db PATH-OR-URL (default $POURBACK_DB, else ./pourback.db)."""
    return click.option("--db", "db_path", type=click.Path(dir_okay=False), default=None,
                        metavar="PATH|URL", help=DB_HELP)(fn)


def open_store(db_path: str | None, create: bool = False) -> Store:
    """The log in --db; a missing file is an error unless ``create`` (init only).
    A write that waits for another writer says so on stderr within a second."""
    return Store(db_path, create=create, on_wait=lambda msg: click.echo(msg, err=True))


def log_exists(db_path: str | None) -> bool:
    """A log is there to read the unit system from (for the commands that need no
    log): a file that exists, or a server's URL (a missing log there is named when opened)."""
    path = resolve_path(db_path)
    return is_url(path) or (path != ":memory:" and pathlib.Path(path).is_file())


def who(by: str | None) -> str:
    """Who makes a change: ``--by``, else $POURBACK_USER, else the login name."""
    if by:
        return by
    try:
        return os.environ.get("POURBACK_USER") or getpass.getuser()
    except Exception:  # no login name on some service accounts
        return "unknown"


# --- unit systems ---------------------------------------------------------------------

units_option = click.option(
    "--units", "units_override", type=click.Choice(list(units.SYSTEMS), case_sensitive=False), default=None,
    help="Unit system numbers are typed and shown in: metric (mm, cm³, kg, °C) or us (in, in³, lb, °F) "
         "(default: the log's setting, see `pourback settings`; metric without a log).")


def measure_option(metric_name: str, help: str, **kwargs: Any) -> Callable[[Callable[..., Any]], Any]:
    """Two options for one measured quantity: the metric one (``--volume-cm3``)
    and its US customary twin (``--volume-in3``); ``help`` holds ``{unit}``.
    The command reads both through :func:`take_measures`."""
    us_name = units.column_name(metric_name, units.US)

    def deco(fn: Callable[..., Any]) -> Any:
        fn = click.option(units.option_name(metric_name, units.US), us_name, type=float, default=None,
                          help=help.format(unit=units.symbol(metric_name, units.US)) + " (--units us)",
                          **kwargs)(fn)
        return click.option(units.option_name(metric_name, units.METRIC), metric_name, type=float,
                            default=None, help=help.format(unit=units.symbol(metric_name, units.METRIC)),
                            **kwargs)(fn)
    return deco


def take_measures(system: str, values: dict, *metric_names: str) -> dict:
    """The measures of ``metric_names`` in metric, from the options of ``system``
    (removed from ``values``, a command's keyword arguments). An option of the
    other system is refused, naming the one to give instead."""
    out = {}
    for name in metric_names:
        us_name = units.column_name(name, units.US)
        given = {units.METRIC: values.pop(name, None), units.US: values.pop(us_name, None)}
        other = units.METRIC if system == units.US else units.US
        if given[other] is not None:
            raise click.UsageError(
                f"{units.option_name(name, other)} is in {other} units ({units.symbol(name, other)}) but "
                f"this command works in {system} (the log's setting or --units); give "
                f"{units.option_name(name, system)} ({units.symbol(name, system)}) instead, or add "
                f"--units {other}")
        out[name] = units.value_from(name, given[system], system)
        if given[system] is not None:
            _note_typed(name, units.option_name(name, system), given[system])
    return out


TYPED_KEY = "pourback.typed_measures"


def _note_typed(metric_name: str, option: str, value: float) -> None:
    """Remember the option a measure was typed with and its value as typed, so
    that an error about the measure names them (see cli.errors.handle_errors)
    rather than the metric figure it was converted to."""
    ctx = click.get_current_context(silent=True)
    if ctx is None:
        return
    typed = ctx.meta.setdefault(TYPED_KEY, {})
    for system in (units.METRIC, units.US):
        column = units.column_name(metric_name, system)
        for key in (column, column.replace("_", "-")):
            typed[key] = (option, value)
