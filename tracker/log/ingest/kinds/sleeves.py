"""The sleeves file: one row per riser sleeve (its size, modulus factor and feeding efficiency)."""

from __future__ import annotations

from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import SLEEVE_KINDS
from tracker.log.ingest.kinds.base import Validator
from tracker.numbers import finite


class SleevesValidator(Validator):
    """Checks the rows of a sleeves file."""

    kind = "sleeves"

    def validate(self, c: Checks) -> list[tuple]:
        sleeve = c.text("sleeve", max_len=64)
        kind = c.code("kind", SLEEVE_KINDS)
        dia = c.measure("inner_diameter_mm")
        h = c.measure("height_mm")
        f = c.number("modulus_factor", low=1.0, low_inclusive=True, high=2.0)
        eps = c.number("feeding_efficiency", low=0, high=1.0, unit="(a fraction, 0.30 = 30 %)")
        cost = c.measure("unit_cost", required=False)
        # finite(): a refused number arrives as NaN (never infinite), stored as NULL
        return [(s, k, d, hh, ff, e, finite(u))
                for s, k, d, hh, ff, e, u in zip(sleeve, kind, dia, h, f, eps, cost, strict=False)]
