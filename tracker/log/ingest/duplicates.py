"""Rows met before: stored already, repeated in the file, or a new code that looks like a known one."""

from __future__ import annotations

import numpy as np

from tracker.log.ingest.checks import Checks
from tracker.log.ingest.result import ImportResult
from tracker.log.ingest.text import fold
from tracker.log.ingest.values import same, same_value
from tracker.log.store import KEYS, TABLE_COLUMNS, Store


def compare_existing(store: Store, kind: str, rows: list[tuple], c: Checks) -> np.ndarray:
    """Mark rows already stored with the same content (skip) and refuse rows
    whose key is stored, or repeated in the file, with other content."""
    cols = TABLE_COLUMNS[kind]
    key_idx = [cols.index(k) for k in KEYS[kind]]
    keys = [tuple(r[i] for i in key_idx) for r in rows]
    stored = store.existing(kind, [k for k, b in zip(keys, c.bad, strict=False) if not b])
    skip = np.zeros(len(rows), dtype=bool)
    for i, (k, r) in enumerate(zip(keys, rows, strict=False)):
        if c.bad[i] or k not in stored:
            continue
        old = stored[k]
        if same(old, r):
            skip[i] = True
        else:
            diff = [col for col, a, b in zip(cols, old, r, strict=False) if not same_value(a, b)]
            c.fail(np.arange(len(rows)) == i, KEYS[kind][-1],
                   f"{' / '.join(map(str, k))} is stored already with other {', '.join(diff)}; a key "
                   "is imported once (change the key for a new item)")
    return skip


LOOKALIKE_CODES = {"patterns": "pattern", "sleeves": "sleeve", "lots": "lot", "zones": "zone"}


def warn_lookalikes(store: Store, kind: str, rows: list[tuple], c: Checks, skip: np.ndarray,
                    result: ImportResult, seen: dict) -> None:
    """Warn where a new code differs from a stored one (or one earlier in the
    file) only by case or Unicode compatibility form ("l26-0412" beside "L26-0412")."""
    column = LOOKALIKE_CODES[kind]
    at = TABLE_COLUMNS[kind].index(column)
    new = [(i, r) for i, r in enumerate(rows) if not c.bad[i] and not skip[i]]
    if not new:
        return
    stored: dict[tuple, list[str]] = {}
    if kind == "zones":
        # a zone code is compared within its pattern
        for p, z in store.zone_levels():
            stored.setdefault((p, fold(z)), []).append(z)
    else:
        stored = {(k,): v for k, v in store.codes_alike(kind, [r[at] for _, r in new]).items()}
    for i, r in new:
        k = (r[0], fold(r[at])) if kind == "zones" else (r[at].lower(),)
        others = [o for o in stored.get(k, []) + seen.get(k, []) if o != r[at]]
        if others:
            where = f" of pattern {r[0]}" if kind == "zones" else ""
            result.warnings.append(
                f"row {int(c.rows[i])}, column {column}: {r[at]!r} is new but differs from the {column}{where} "
                f"{others[0]!r} only by case or character form; check that it is not the same {column}")
        seen.setdefault(k, []).append(r[at])


def repeated_keys(kind: str, rows: list[tuple], c: Checks, skip: np.ndarray) -> None:
    """A key repeated within a chunk: the same content is one row (skip the
    repeat), other content is refused."""
    key_idx = [TABLE_COLUMNS[kind].index(k) for k in KEYS[kind]]
    seen: dict = {}
    for i, r in enumerate(rows):
        if c.bad[i] or skip[i]:
            continue
        k = tuple(r[j] for j in key_idx)
        if k not in seen:
            seen[k] = r
        elif same(seen[k], r):
            skip[i] = True
        else:
            c.fail(np.arange(len(rows)) == i, KEYS[kind][-1],
                   f"{' / '.join(map(str, k))} appears twice in the file with different content")
