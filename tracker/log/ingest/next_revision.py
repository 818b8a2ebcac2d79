"""The next riser revision of a pattern made from a few changed risers (a what-if,
a suggestion, a form): every riser of the newest revision that is not changed
is carried over as it is, on its zone, and the whole revision is checked as
the risers import checks one, then stored and audited in one transaction.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Mapping

import pandas as pd

from tracker.errors import BadInput, NotFound
from tracker.log import accounts as auth
from tracker.log.ingest.form_rows import write_form_rows
from tracker.log.store import Store, retrying

# A riser of a revision as the risers import takes it (metric columns).
RISER_FIELDS = ("riser", "zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm",
                "x_mm", "y_mm", "z_mm", "axis")


def carry_over(current: Iterable[Mapping], changes: Mapping[str, Mapping], removed: Iterable[str] = ()) -> list[dict]:
    """The risers of the next revision: each riser of ``current`` (RISER_FIELDS
    each) as it is, but for the fields ``changes[riser]`` gives, and without
    the risers ``removed``; risers of ``changes`` that ``current`` lacks are
    added at the end. Pure: no log access."""
    gone = set(removed)
    out, seen = [], set()
    for row in current:
        code = row["riser"]
        seen.add(code)
        if code in gone:
            continue
        out.append({k: row[k] for k in RISER_FIELDS if k in row} | dict(changes.get(code, {})))
    out += [{"riser": code, **dict(new)} for code, new in changes.items() if code not in seen and code not in gone]
    return out


def newest_revision(store: Store, pattern: str) -> dict | None:
    """The pattern's newest riser revision ({revision, effective_from}), None without one."""
    revs = store.revisions_frame(pattern)
    if revs.empty:
        return None
    last = revs.sort_values(["effective_from", "revision"]).iloc[-1]
    return {"revision": str(last["revision"]), "effective_from": str(last["effective_from"])}


def stored_risers(store: Store, pattern: str, revision: str) -> list[dict]:
    """The risers of one stored revision, RISER_FIELDS each (None for a blank)."""
    frame = store.risers_frame(pattern=pattern, revision=revision)[list(RISER_FIELDS)]
    return frame.astype(object).where(frame.notna(), None).to_dict("records")


def check_next_revision(store: Store, pattern: str, base: str | None, revision: str,
                        effective_from) -> tuple[dict, str]:
    """Refuse (BadInput, NotFound) a new revision ``revision`` from ``effective_from`` that
    cannot follow the pattern's newest one (``base``: the revision a change was made
    on, None to leave it unchecked); return the newest one and the date as text."""
    newest = newest_revision(store, pattern)
    if newest is None:
        raise NotFound("riser revision", pattern, "import the pattern's first revision (risers) first")
    code = str(revision or "").strip()
    if not code:
        raise BadInput("revision", revision, "give the new revision a code")
    revs = store.revisions_frame(pattern)
    hit = revs[revs["revision"] == code]
    if len(hit):
        raise BadInput("revision", code, f"{pattern} has a revision {code} already (in effect from "
                                         f"{hit['effective_from'].iat[0]}); give the new revision a new code")
    text = str(effective_from or "").strip()
    try:
        day = dt.date.fromisoformat(text)
    except ValueError:
        raise BadInput("effective_from", effective_from, "must be a date written YYYY-MM-DD") from None
    if day.isoformat() != text:
        raise BadInput("effective_from", effective_from, "must be a date written YYYY-MM-DD")
    if text <= newest["effective_from"]:
        raise BadInput("effective_from", text, f"the new revision must take effect after revision "
                                               f"{newest['revision']} of {pattern}, in effect from "
                                               f"{newest['effective_from']}")
    if base is not None and base != newest["revision"]:
        raise BadInput("revision", code, f"the change was made on revision {base} of {pattern}, but its newest "
                                         f"revision is {newest['revision']}; make the change on "
                                         f"{newest['revision']} again")
    return newest, text


def _changes_text(current: list[dict], rows: list[dict], changes: Mapping) -> str:
    """What the audit says: each changed riser before -> after, and the risers carried over."""
    before = {r["riser"]: r for r in current}

    def size(r: Mapping | None) -> str:
        if r is None:
            return "(new)"
        d = pd.to_numeric(pd.Series([r.get("diameter_mm"), r.get("height_mm")]), errors="coerce")
        return (f"{d[0]:g} x {d[1]:g} mm" + (f" {r['sleeve']}" if r.get("sleeve") else " bare")
                + (f" neck {float(r['neck_diameter_mm']):g}" if r.get("neck_diameter_mm") not in (None, "") else ""))

    changed = [f"{r['riser']} {size(before.get(r['riser']))} -> {size(r)}" for r in rows if r["riser"] in changes]
    kept = [r["riser"] for r in rows if r["riser"] not in changes]
    return ("changed " + "; ".join(changed) if changed else "nothing changed") + (
        "; carried over " + ", ".join(kept) if kept else "")


@retrying
def save_next_revision(store: Store, pattern: str, revision: str, effective_from, changes: Mapping[str, Mapping],
                       *, base: str | None = None, by: str | None = None, today: dt.date | None = None,
                       origin: str = "form") -> dict:
    """Store revision ``revision`` of ``pattern`` from ``effective_from``: the newest
    revision with ``changes`` (riser -> the fields that change, metric) applied
    and every other riser carried over (:func:`carry_over`).

    ``base``: the revision the changes were made on (refused unless it is
    still the newest). Refused (BadInput, NotFound, BadFile naming the riser
    and field) without a revision, with a code the pattern has, a date not
    after the newest revision's, a change that breaks a rule of the risers
    import, or no change at all; nothing is then written. The write is
    audited ("revision_saved"). Returns {pattern, revision, effective_from,
    base, changed, carried_over, risers}.
    """
    author = auth.author(store, "design", by)
    with store.write():
        newest, day = check_next_revision(store, pattern, base, revision, effective_from)
        current = stored_risers(store, pattern, newest["revision"])
        before = {r["riser"]: r for r in current}
        changes = {k: v for k, v in changes.items()
                   if k not in before or carry_over([before[k]], {k: v}) != [before[k]]}
        rows = carry_over(current, changes)
        if not changes:
            raise BadInput("revision", revision, f"it would repeat revision {newest['revision']} of {pattern} "
                                                 "riser for riser; change a riser first")
        write_form_rows(store, [("risers", [{"pattern": pattern, "revision": str(revision).strip(),
                                            "effective_from": day, **r} for r in rows])],
                        by=author, today=today, source=origin)
        detail = f"from revision {newest['revision']} ({origin}), in effect from {day}: " + _changes_text(
            current, rows, changes)
        auth.record(store, "revision_saved", user=auth.acting_name(store, author),
                    subject=f"{pattern} revision {str(revision).strip()}", detail=detail,
                    via="dashboard" if store.actor is not None else "cli")
    changed = [r["riser"] for r in rows if r["riser"] in changes]
    return {"pattern": pattern, "revision": str(revision).strip(), "effective_from": day,
            "base": newest["revision"], "changed": changed,
            "carried_over": [r["riser"] for r in rows if r["riser"] not in changes], "risers": rows}


def next_code(code: str) -> str:
    """A proposal for the code after ``code``: "3" after "2", "C" after "B",
    "R-08" after "R-07"; blank where the code ends in neither a digit nor a letter
    (or in "Z" / "z")."""
    code = str(code or "")
    head, digits = code.rstrip("0123456789"), code[len(code.rstrip("0123456789")):]
    if digits:
        return head + str(int(digits) + 1).zfill(len(digits))
    if code and code[-1].isascii() and code[-1].isalpha() and code[-1] not in "zZ":
        return code[:-1] + chr(ord(code[-1]) + 1)
    return ""
