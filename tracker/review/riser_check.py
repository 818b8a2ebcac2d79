"""The riser check on the log: every riser of the revision in effect on a day, judged by the rules.

The judging itself is pure (:func:`tracker.design.assess.assess_frame`); this
module reads the log's risers and revisions and hands them over.
"""

from __future__ import annotations

import datetime as dt

import pandas as pd

from tracker import units
from tracker.design import rules
from tracker.design.assess import RESULT_COLUMNS, assess_frame, revision_in_effect
from tracker.errors import NotFound
from tracker.log.store import Store


def check(store: Store, pattern: str | None = None, on: str | dt.date | None = None,
          modulus_factor: float = rules.DEFAULT_MODULUS_FACTOR, *, system: str = units.METRIC) -> pd.DataFrame:
    """Every riser of the revision in effect on ``on`` (default today), judged;
    ``system``: the unit system the notes word their figures in (columns stay metric)."""
    on = (on or dt.date.today())
    on = on.isoformat() if hasattr(on, "isoformat") else str(on)
    if pattern is not None:
        store.pattern(pattern)  # raises NotFound with a hint
    risers = store.risers_frame(pattern=pattern)
    if risers.empty:
        return pd.DataFrame(columns=RESULT_COLUMNS)
    current = revision_in_effect(store.revisions_frame(pattern), on)
    keep = risers.merge(current[["pattern", "revision"]], on=["pattern", "revision"])
    if keep.empty and pattern is not None:
        raise NotFound("riser revision", pattern, f"no revision of {pattern} is in effect on {on}")
    return assess_frame(keep, modulus_factor, system=system)
