"""A what-if or a suggestion saved as the pattern's next riser revision: the risers
it changes, as priced (the changed riser, and the risers on its zone that fail
the rules, given the same change), over every other riser carried over
(:func:`tracker.log.ingest.next_revision.save_next_revision`)."""

from __future__ import annotations

import datetime as dt

from tracker.errors import BadInput
from tracker.log.ingest.next_revision import save_next_revision, stored_risers
from tracker.log.store import Store
from tracker.numbers import finite


def _has_neck(row: dict) -> bool:
    """A side riser with a neck of a known width (as ``candidates.has_neck``)."""
    n = finite(row.get("neck_diameter_mm"))
    return row.get("placement") == "side" and n is not None and n > 0


def riser_changes(store: Store, pattern: str, revision: str, riser: str, *, diameter_mm: float,
                  height_mm: float, sleeve: str | None, neck_diameter_mm: float | None,
                  changed_risers: list[str]) -> dict[str, dict]:
    """The fields each changed riser takes: ``riser`` the new size, sleeve and
    neck; the others of ``changed_risers`` (its zone's risers that fail the
    rules) the same size and sleeve, and the new neck where they have a neck,
    as the pricing changes them (``pricing._changed_rows``)."""
    stored = {r["riser"]: r for r in stored_risers(store, pattern, revision)}
    size = {"diameter_mm": float(diameter_mm), "height_mm": float(height_mm), "sleeve": sleeve or None}
    out = {riser: {**size, "neck_diameter_mm": finite(neck_diameter_mm)}}
    for other in changed_risers:
        if other == riser or other not in stored:
            continue
        own = stored[other]
        neck = finite(neck_diameter_mm) if _has_neck(own) else own.get("neck_diameter_mm")
        out[other] = {**size, "neck_diameter_mm": neck}
    return out


def save_what_if(store: Store, result: dict, revision: str, effective_from, *, by: str | None = None,
                 today: dt.date | None = None) -> dict:
    """Save a what-if (``what_if.what_if``'s result, metric) as the next revision of
    its pattern, every riser it does not change carried over (see
    ``save_next_revision`` for the refusals)."""
    if not result.get("changed"):
        raise BadInput("revision", revision, f"the what-if changes no riser of {result['pattern']} revision "
                                             f"{result['revision']}; change its size or sleeve first")
    changes = riser_changes(store, result["pattern"], result["revision"], result["riser"],
                            diameter_mm=result["diameter_mm"], height_mm=result["height_mm"],
                            sleeve=result["sleeve"], neck_diameter_mm=result.get("neck_diameter_mm"),
                            changed_risers=result["changed_risers"])
    return save_next_revision(store, result["pattern"], revision, effective_from, changes,
                              base=result["revision"], by=by, today=today, origin="what-if")


def save_suggestion(store: Store, suggestion: dict, revision: str, effective_from, *, by: str | None = None,
                    today: dt.date | None = None) -> dict:
    """Save a suggestion (one record of ``suggest.suggest``, metric) as the next
    revision of its pattern, every riser it does not change carried over."""
    if suggestion.get("action") in (None, "no_riser_change") or not suggestion.get("riser"):
        raise BadInput("revision", revision, f"the suggestion for {suggestion.get('pattern')} changes no riser")
    changes = riser_changes(store, suggestion["pattern"], suggestion["revision"], suggestion["riser"],
                            diameter_mm=suggestion["suggested_diameter_mm"],
                            height_mm=suggestion["suggested_height_mm"], sleeve=suggestion["suggested_sleeve"],
                            neck_diameter_mm=suggestion.get("suggested_neck_diameter_mm"),
                            changed_risers=suggestion["changed_risers"])
    return save_next_revision(store, suggestion["pattern"], revision, effective_from, changes,
                              base=suggestion["revision"], by=by, today=today, origin="suggestion")
