"""copy-log with the review as a witness: a copy is kept only when the latest
week's review reads the same on both logs (above the log layer, since it runs
the review)."""

from __future__ import annotations

import math

from tracker import numbers
from tracker.log.copylog import copy_tables
from tracker.log.store import Store
from tracker.review import weekly as review


def copy_log(source: str, dest: str, *, progress=None) -> dict:
    """Copy the log at ``source`` into ``dest`` and verify it (tables and the
    latest week's review); see :func:`tracker.log.copylog.copy_tables`."""
    return copy_tables(source, dest, progress=progress, check=_same_review)


def _same_review(src: Store, dst: Store) -> tuple[str | None, bool]:
    """The latest week's review on both logs, compared as JSON."""
    if src.count("lots") == 0 or src.count("inspections") == 0:
        return None, True
    a = numbers.jsonable(review.weekly_review(src), day_only=True)
    b = numbers.jsonable(review.weekly_review(dst), day_only=True)
    return a["week"], _same(a, b)


def _same(a, b) -> bool:
    """Equal JSON values, floats within 1e-9 relative: the databases may add a
    column's rows in another order (the copy stores them in another physical
    order), which moves a sum's last bits, not its figure."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b, strict=False))
    if isinstance(a, float) and isinstance(b, (int, float)) or isinstance(b, float) and isinstance(a, int):
        return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12)
    return a == b
