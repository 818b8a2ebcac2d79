"""The patterns file: one row per pattern (the casting, its alloy, weight and costs)."""

from __future__ import annotations

import pandas as pd

from tracker.design.alloys import ALLOYS
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import MOULDS, PLANT_CODE
from tracker.log.ingest.kinds.base import Validator
from tracker.log.ingest.values import to_null
from tracker.log.store import DEFAULT_PLANT_KEY
from tracker.numbers import finite, missing


class PatternsValidator(Validator):
    """Checks the rows of a patterns file."""

    kind = "patterns"

    def validate(self, c: Checks) -> list[tuple]:
        pattern = c.text("pattern", max_len=64)
        desc = c.text("description", required=False, max_len=500, lines=True)
        alloy = c.code("alloy", sorted(ALLOYS))
        weight = c.measure("casting_weight_kg")
        per_mold = c.number("castings_per_mold", low=0, whole=True, high=10000)
        cost = c.measure("metal_cost_per_kg")
        proc = c.measure("processing_cost_per_casting", required=False)
        mould = c.code("mould", MOULDS, required=False)
        plant = self._plant(c)
        # finite(): a refused number arrives as NaN (never infinite), stored as NULL
        return [(p, d, a, w, n if missing(n) else int(n), m, finite(q), to_null(ml), f or None)
                for p, d, a, w, n, m, q, ml, f in zip(pattern, desc, alloy, weight, per_mold, cost, proc, mould,
                                                       plant, strict=False)]

    def _plant(self, c: Checks) -> pd.Series:
        """The plant column: a short code; empty takes the log's default plant
        (``pourback init --plant``), or none."""
        plant = c.text("plant", required=False, max_len=32)
        c.fail((plant != "") & ~plant.str.fullmatch(PLANT_CODE), "plant",
               "a plant code is letters, digits, '.', '-' or '_' (e.g. NORTH or plant-2)")
        default = self.store.get_meta(DEFAULT_PLANT_KEY) or ""
        return plant.where(plant != "", default)
