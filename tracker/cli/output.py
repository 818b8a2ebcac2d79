"""All output of the commands: JSON for machines, text tables for people, the
caution, and progress on standard error."""

from __future__ import annotations

import contextlib
import json
import os
import sys
from collections.abc import Callable, Iterator
from typing import Any

import click
import numpy as np

from tracker.cautions import SAFETY_CAUTION_SHORT
from tracker.cli.steps import terminal
from tracker.numbers import finite, jsonable


def emit(data: Any, as_json: bool, human: Callable[[Any], str] | None = None) -> None:
    """The one place output is written: JSON for machines, text for people."""
    if as_json:
        click.echo(json.dumps(jsonable(data), indent=2, ensure_ascii=False))
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

    def line(vals: list[str]) -> str:
        return "  ".join(v.rjust(w) if _numeric(v) else v.ljust(w)
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


def _cell(v: Any) -> str:
    if v is None:
        return "-"
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        f = finite(v)
        if f is None:
            return "-"
        return f"{f:.3g}" if abs(f) < 0.01 and f != 0 else f"{f:,.2f}"
    return str(v)


def caution_text() -> str:
    """The caution in its short command-line form (two lines; the full text is in the README,
    the dashboard and the reports)."""
    return SAFETY_CAUTION_SHORT


# --- progress on standard error ----------------------------------------------------------

def stderr_is_terminal() -> bool:
    """True when standard error is a terminal (progress is shown only then)."""
    return terminal(sys.stderr)


def show_progress(as_json: bool = False) -> bool:
    """Progress is shown on a terminal only, and never with ``--json``."""
    return not as_json and stderr_is_terminal()


@contextlib.contextmanager
def progress_bar(show: bool, length: int, label: str) -> Iterator[Any]:
    """A click progress bar on standard error; drawn only when ``show`` (see
    :func:`show_progress`), else updates go nowhere."""
    if show:
        with click.progressbar(length=length, label=label, show_eta=True, file=sys.stderr) as bar:
            yield bar
        return
    with open(os.devnull, "w") as sink, click.progressbar(length=length, label=label, file=sink) as bar:
        yield bar
