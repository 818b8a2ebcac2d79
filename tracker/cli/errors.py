"""Failures as one clear line and a non-zero exit, never a traceback."""

from __future__ import annotations

import errno
import functools
import sqlite3
from collections.abc import Callable
from typing import Any

import click

from tracker.cli.options import TYPED_KEY
from tracker.errors import BadInput, PourbackError
from tracker.log.store import DATABASE_ERRORS


def handle_errors(fn: Callable[..., Any]) -> Callable[..., Any]:
    """Turn library errors into one clear line and a non-zero exit.

    Failures of the machine rather than of the input (a full disk while writing
    a report, a file that cannot be written, an SQLite error outside the log's
    own handling) are one line too, never a traceback."""
    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except BadInput as exc:
            raise click.ClickException(_as_typed(exc)) from None
        except PourbackError as exc:
            raise click.ClickException(str(exc)) from None
        except sqlite3.Error as exc:
            raise click.ClickException(f"the log could not be used ({exc}); nothing was written") from None
        except DATABASE_ERRORS as exc:
            # The server went away or refused a statement: one line, not a traceback.
            first = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
            raise click.ClickException(f"the database reported: {first}; check that the log's server "
                                       "is running and reachable, then try again") from None
        except OSError as exc:
            raise click.ClickException(os_error_text(exc)) from None
    return wrapper


def _as_typed(exc: BadInput) -> str:
    """The error of a measure typed as an option, naming that option and the value
    as typed (``--pour-temp-f: got 1e+300``), not the metric figure it became."""
    ctx = click.get_current_context(silent=True)
    typed = ctx.meta.get(TYPED_KEY, {}) if ctx is not None else {}
    field = str(exc.field).lstrip("-")
    if field not in typed:
        return str(exc)
    option, value = typed[field]
    return f"{option}: got {value!r}; {exc.reason}"


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
