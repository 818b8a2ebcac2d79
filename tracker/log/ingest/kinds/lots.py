"""The lots file: one row per poured lot (its pattern, pour date, heat and molds)."""

from __future__ import annotations

from tracker.limits import POUR_TEMP_RANGE_C
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.kinds.base import Validator
from tracker.numbers import finite, missing


class LotsValidator(Validator):
    """Checks the rows of a lots file."""

    kind = "lots"

    def validate(self, c: Checks) -> list[tuple]:
        lot = c.text("lot", max_len=64)
        pattern = c.text("pattern", max_len=64)
        poured = c.date("poured_on", not_after=self.today, today=self.today)
        heat = c.text("heat", max_len=64)
        molds = c.number("molds", low=0, whole=True, high=100000)
        lo, hi = POUR_TEMP_RANGE_C
        temp = c.number("pour_temp_c", required=False, low=lo, low_inclusive=True, high=hi, unit="°C")
        self.known_patterns(c, pattern)
        # finite(): a refused number arrives as NaN (never infinite), stored as NULL
        return [(lt, p, d, h, m if missing(m) else int(m), finite(t))
                for lt, p, d, h, m, t in zip(lot, pattern, poured, heat, molds, temp, strict=False)]
