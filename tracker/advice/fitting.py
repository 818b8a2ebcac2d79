"""The reject model as the log has it: fitted on the whole history and stored,
and taken from the store while it was fitted on the log as it is now."""

from __future__ import annotations

import pandas as pd

from tracker.advice.features import fit_table
from tracker.advice.model import ShrinkageRejectModel
from tracker.errors import IncompatibleModel
from tracker.log.store import Store


def fit_model(store: Store, *, alpha: float = 10.0, save: bool = True,
              table: pd.DataFrame | None = None) -> ShrinkageRejectModel | None:
    """Fit the shrinkage reject model on the log's whole history (and store it).

    table: the log's ``fit_table`` when the caller has it already (the
    cross-validation reads the same). None when the log has no lot under a
    known riser design.
    """
    feats = fit_table(store) if table is None else table
    if feats.empty or feats["castings"].sum() == 0:
        return None
    model = ShrinkageRejectModel(alpha=alpha).fit(feats)  # sets data_until_
    if save:
        store.save_model(model.to_bytes(), rows=int(model.n_rows_), castings=int(model.n_castings_),
                         data_until=model.data_until_)
    return model


def _stored_model(store: Store) -> ShrinkageRejectModel | None:
    """The stored model if it was fitted on the log as it is now (up to its newest pour), else None."""
    saved = store.latest_model()
    _, last = store.pour_span()
    if saved is None or saved["data_until"] != last:
        return None
    try:
        return ShrinkageRejectModel.from_bytes(saved["blob"])
    except IncompatibleModel:
        return None  # fitted by another version


def get_model(store: Store, refit: bool = False, save: bool = True) -> ShrinkageRejectModel | None:
    """The stored model if it was fitted on the log as it is now, else a new fit
    (stored unless ``save`` is False: a reading such as the review pack writes nothing)."""
    model = None if refit else _stored_model(store)
    return model if model is not None else fit_model(store, save=save)


def model_is_current(store: Store) -> bool:
    """Whether :func:`get_model` takes the stored model as it is (no fit first): a
    long step at a large shop, worth saying before it starts."""
    return _stored_model(store) is not None
