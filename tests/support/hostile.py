"""What the hostile-input tests share: the day they import as, and a log's snapshot."""

import datetime as dt

from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)


def snap(path):
    """Every row of the log at ``path`` (to show a refusal changed nothing)."""
    with Store(path, create=False) as s:
        return s.snapshot()
