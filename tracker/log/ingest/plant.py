"""The plant that patterns imported without a plant column belong to."""

from __future__ import annotations

import re

from tracker.errors import BadInput
from tracker.log.ingest.columns import PLANT_CODE
from tracker.log.store import DEFAULT_PLANT_KEY, Store


def set_default_plant(store: Store, plant: str) -> None:
    """Name the plant that patterns imported without a plant column belong to."""
    plant = str(plant).strip()
    if not re.fullmatch(PLANT_CODE, plant):
        raise BadInput("plant", plant, "a plant code is 1 to 32 letters, digits, '.', '-' or '_' "
                                       "(e.g. NORTH or plant-2)")
    store.set_meta(DEFAULT_PLANT_KEY, plant)
