"""The ``pourback`` command line: parse, call the library, format.

No computation lives here; every command is a thin layer over ``tracker``.
"""

from __future__ import annotations

import contextlib
import errno
import functools
import inspect
import json
import math
import os
import sqlite3
import sys

import click
import numpy as np

from tracker import __version__, limits, units
from tracker.cautions import SAFETY_CAUTION_SHORT
from tracker.cli.steps import Steps, terminal  # noqa: F401 (Steps is used by the commands)
from tracker.design.alloys import ALLOYS
from tracker.errors import PourbackError

# --- output -----------------------------------------------------------------------

def _jsonable(obj):
    if isinstance(obj, dict):
        return {k: _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (np.floating, float)):
        f = float(obj)
        return f if math.isfinite(f) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    if hasattr(obj, "isoformat"):
        return obj.isoformat()
    return obj


def emit(data, as_json: bool, human=None):
    """The one place output is written: JSON for machines, text for people."""
    if as_json:
        click.echo(json.dumps(_jsonable(data), indent=2, ensure_ascii=False))
    else:
        click.echo(human(data) if human else str(data))


def table(rows: list[dict], columns: list[tuple[str, str]] | None = None) -> str:
    """A plain text table; ``columns`` is a list of (key, heading)."""
    if not rows:
        return "(none)"
    columns = columns or [(k, k) for k in rows[0]]
    cells = [[_cell(r.get(k)) for k, _ in columns] for r in rows]
    heads = [h for _, h in columns]
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(heads)]
    line = lambda vals: "  ".join(v.rjust(w) if _numeric(v) else v.ljust(w)  # noqa: E731
                                  for v, w in zip(vals, widths, strict=False)).rstrip()
    out = [line(heads), "  ".join("-" * w for w in widths)]
    out += [line(c) for c in cells]
    return "\n".join(out)


def _numeric(s: str) -> bool:
    try:
        float(s.replace(",", "").rstrip("%").strip())
        return True
    except ValueError:
        return False


def _cell(v) -> str:
    if v is None:
        return "-"
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        if not math.isfinite(v):
            return "-"
        return f"{v:.3g}" if abs(v) < 0.01 and v != 0 else f"{v:,.2f}"
    return str(v)


def caution_text() -> str:
    """The caution in its short command-line form (two lines; the full text is in the README,
    the dashboard and the reports)."""
    return SAFETY_CAUTION_SHORT


def handle_errors(fn):
    """Turn library errors into one clear line and a non-zero exit.

    Failures of the machine rather than of the input (a full disk while writing
    a report, a file that cannot be written, an SQLite error outside the log's
    own handling) are one line too, never a traceback."""
    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        try:
            return fn(*args, **kwargs)
        except PourbackError as exc:
            raise click.ClickException(str(exc)) from None
        except sqlite3.Error as exc:
            raise click.ClickException(f"the log could not be used ({exc}); nothing was written") from None
        except database_errors() as exc:
            # The server went away or refused a statement: one line, not a traceback.
            first = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
            raise click.ClickException(f"the database reported: {first}; check that the log's server "
                                       "is running and reachable, then try again") from None
        except OSError as exc:
            raise click.ClickException(os_error_text(exc)) from None
    return wrapper


def database_errors() -> tuple:
    from tracker.log.store import DATABASE_ERRORS

    return DATABASE_ERRORS


def os_error_text(exc: OSError) -> str:
    """One line for a file the command could not read or write."""
    where = f" {exc.filename}" if getattr(exc, "filename", None) else ""
    if exc.errno == errno.ENOSPC:
        return f"the disk is full: could not write{where}; free some space and try again"
    if exc.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        return f"no permission to write{where}; choose a place you can write to"
    if exc.errno == errno.ENOENT:
        return f"no such file or folder:{where or ' (not given)'}; check the path"
    return f"could not read or write{where}: {exc.strerror or exc}"


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


# --- unit systems ---------------------------------------------------------------------

units_option = click.option(
    "--units", "units_override", type=click.Choice(list(units.SYSTEMS), case_sensitive=False), default=None,
    help="Unit system numbers are typed and shown in: metric (mm, cm³, kg, °C) or us (in, in³, lb, °F) "
         "(default: the log's setting, see `pourback settings`; metric without a log).")


def measure_option(metric_name: str, help: str, **kwargs):
    """Two options for one measured quantity: the metric one (``--volume-cm3``)
    and its US customary twin (``--volume-in3``); ``help`` holds ``{unit}``.
    The command reads both through :func:`take_measures`."""
    us_name = units.column_name(metric_name, units.US)

    def deco(fn):
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
    return out


def resolve_units(store, override) -> str:
    """The unit system of a command: ``--units``, else the log's, else metric."""
    from tracker.log.settings import resolve_units as resolve

    return resolve(store, override)


# --- progress on standard error ----------------------------------------------------------

def stderr_is_terminal() -> bool:
    """True when standard error is a terminal (progress is shown only then)."""
    return terminal(sys.stderr)


def show_progress(as_json: bool = False) -> bool:
    """Progress is shown on a terminal only, and never with ``--json``."""
    return not as_json and stderr_is_terminal()


@contextlib.contextmanager
def progress_bar(show: bool, length: int, label: str):
    """A click progress bar on standard error; drawn only when ``show`` (see
    :func:`show_progress`), else updates go nowhere."""
    if show:
        with click.progressbar(length=length, label=label, show_eta=True, file=sys.stderr) as bar:
            yield bar
        return
    with open(os.devnull, "w") as sink, click.progressbar(length=length, label=label, file=sink) as bar:
        yield bar


# --- commands ---------------------------------------------------------------------

class _Command(click.Command):
    """A command whose help keeps its ``Example:`` block verbatim: one command per
    line, never rewrapped, so each line pastes into a terminal and runs."""

    def format_help_text(self, ctx, formatter):
        text = inspect.cleandoc(self.help or "").partition("\f")[0]
        prose, sep, example = text.partition("Example:")
        if prose.strip():
            formatter.write_paragraph()
            with formatter.indentation():
                formatter.write_text(prose.strip())
        if sep:
            formatter.write_paragraph()
            with formatter.indentation():
                formatter.write_text("Example:")
                formatter.write_paragraph()
                with formatter.indentation():
                    for line in example.strip("\n").splitlines():
                        formatter.write(f"{'':>{formatter.current_indent}}{line.strip()}\n" if line.strip()
                                        else "\n")


class _Group(click.Group):
    command_class = _Command
    group_class = type  # sub-groups (``pourback user``) format their examples the same way


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="pourback")
def main():
    """Pourback: riser design tied to the scrap it causes.

    Judge and size risers by the published rules, log inspection results per
    pour lot, review scrap by pattern each week, and get riser suggestions.
    """


DB_HELP = ("Log: an SQLite file, or a PostgreSQL server as postgresql://user@host:port/dbname "
           "(password from PGPASSWORD or ~/.pgpass) (default $POURBACK_DB, else ./pourback.db).")


def db_option(fn):
    """--db PATH-OR-URL (default $POURBACK_DB, else ./pourback.db)."""
    return click.option("--db", "db_path", type=click.Path(dir_okay=False), default=None,
                        metavar="PATH|URL", help=DB_HELP)(fn)


def open_store(db_path, create: bool = False):
    """The log in --db; a missing file is an error unless ``create`` (init only).
    A write that waits for another writer says so on stderr within a second."""
    from tracker.log.store import Store

    return Store(db_path, create=create, on_wait=lambda msg: click.echo(msg, err=True))


# Command groups register themselves on ``main`` when imported.
from tracker.cli import (
    cmd_advise,  # noqa: E402,F401
    cmd_app,  # noqa: E402,F401
    cmd_copy,  # noqa: E402,F401
    cmd_design,  # noqa: E402,F401
    cmd_log,  # noqa: E402,F401
    cmd_review,  # noqa: E402,F401
    cmd_thermal,  # noqa: E402,F401
    cmd_users,  # noqa: E402,F401
)

if __name__ == "__main__":  # pragma: no cover
    main(prog_name="pourback")
