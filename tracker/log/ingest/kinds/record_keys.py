"""Each inspection row's record key, and whether the log holds it already.

A row with a ``record_id`` is keyed by it; any other row by its file's digest
and its row number (:class:`~tracker.log.ingest.identity.FileIdentity`); a
record typed in gets a key of its own. Logs written before schema version 4
keyed rows by their content (:meth:`RecordKeys._legacy_keys`).
"""

from __future__ import annotations

import hashlib
import uuid

import numpy as np
import pandas as pd

from tracker.log.ingest.checks import Checks
from tracker.log.ingest.identity import FileIdentity
from tracker.log.ingest.values import same, same_value
from tracker.log.store import TABLE_COLUMNS, Store


class RecordKeys:
    """The record keys of one inspections file, chunk by chunk."""

    def __init__(self, store: Store, file: str, identity: FileIdentity | None, log_was_empty: bool,
                 legacy: bool):
        self.store = store
        self.file = file
        self.identity = identity  # the file's digest and segments (None: a record typed in)
        self.log_was_empty = log_was_empty
        self.legacy = legacy  # the log holds rows keyed as before schema version 4
        # digest of an imported file -> this file's rows found stored from it (by their key)
        self.matched: dict[str, list[int]] = {}
        self._ids_in_file: dict[str, tuple] = {}  # record_id -> (row, content) seen in this file
        # occurrence counting of identical rows across chunks (legacy keys)
        self._seen_digests = np.zeros(0, dtype=np.uint64)
        self._seen_counts = np.zeros(0, dtype=np.int64)

    def keys(self, c: Checks, rid: pd.Series, columns: list, canon: list) -> tuple[list, np.ndarray]:
        """Each row's record key and whether it is already present.

        A row with a ``record_id`` is present when stored (or earlier in the file)
        with the same content, refused when with other content. Any other row is
        keyed by its file's digest and its row number, so a second file's
        identical row is a new record.
        """
        rid_l = rid.tolist()
        has_id = np.array([r != "" for r in rid_l], dtype=bool)
        if self.identity is None:  # a record typed in: its key is given by the caller
            keys = [f"{self.file}:{uuid.uuid4().hex}" for _ in rid_l]
        else:
            keys = self.identity.keys(c.rows)
        for i in np.flatnonzero(has_id):
            keys[i] = f"id:{rid_l[i]}"
        present_keys = set() if self.log_was_empty else self.store.keys_present(
            "inspections", "record_key", sorted(keys))  # sorted: neighbouring keys share index pages
        present = np.array([k in present_keys for k in keys], dtype=bool)
        if self.identity is not None:
            for i in np.flatnonzero(present & ~has_id):
                self.matched.setdefault(keys[i][1:keys[i].index(":")], []).append(int(c.rows[i]))
        if has_id.any():
            self._check_ids(c, rid_l, keys, has_id, present, columns)
        if self.legacy and (~has_id & ~present).any():
            legacy = self._legacy_keys(canon)
            found = self.store.legacy_keys_present([legacy[i] for i in np.flatnonzero(~has_id & ~present)],
                                                   self.file)
            present |= ~has_id & np.array([k in found for k in legacy], dtype=bool)
        return keys, present

    def matched_notes(self) -> list[str]:
        """For each earlier file this file's rows were found from: which rows, the
        file's name and its import date, and how to add them as new records."""
        named = self.store.imports_by_digest(self.matched)
        notes = []
        for digest, rows in self.matched.items():
            file, at = named.get(digest, ("an earlier import", ""))
            when = f", imported {at[:16].replace('T', ' ')} UTC" if at else ""
            notes.append(f"{rows_text(rows)} already in the log from {file}{when} (the same rows of the same "
                         "bytes), not added again; if they are new inspections, import again with --new-records")
        return notes

    def _check_ids(self, c: Checks, rid_l: list, keys: list, has_id: np.ndarray, present: np.ndarray,
                   columns: list) -> None:
        """Rows with a record_id: refuse one stored, or earlier in the file, with other
        content; mark one earlier in the file as present (``present`` is updated)."""
        stored = self.store.records_by_key([keys[i] for i in np.flatnonzero(has_id & present)])
        for i in np.flatnonzero(has_id & ~c.bad):
            content = tuple(col[i] for col in columns)
            earlier = stored.get(keys[i])
            where = "stored already"
            if earlier is None and rid_l[i] in self._ids_in_file:
                row, earlier = self._ids_in_file[rid_l[i]]
                where = f"on row {row} of this file"
                present[i] = True
            elif earlier is None:
                self._ids_in_file[rid_l[i]] = (int(c.rows[i]), content)
                continue
            if not same(earlier, content):
                cols = TABLE_COLUMNS["inspections"][1:13]
                diff = [col for col, a, b in zip(cols, earlier, content, strict=False) if not same_value(a, b)]
                c.fail(np.arange(len(keys)) == i, "record_id",
                       f"record {rid_l[i]} is {where} with other {', '.join(diff)}; a record is "
                       "imported once: correct the stored one with `pourback correct`")

    def _legacy_keys(self, canon: list) -> list[str]:
        """The keys rows were given before schema version 4: SHA-1 of the row's
        content and how many identical rows came before it in the file."""
        lot, on, method, qty, result, defect, zone, cat, sev, serial, inspector, notes = canon
        canon = [lot, on, method, qty.fillna(0).astype(np.int64).astype(str), result, defect, zone, cat,
                 sev.fillna(0).astype(np.int64).astype(str).replace("0", ""), serial, inspector, notes]
        joined = ["\x1f".join(t) for t in zip(*(col.tolist() for col in canon), strict=False)]
        digests = [hashlib.sha1(s.encode("utf-8")).hexdigest() for s in joined]
        occurrence = self._occurrences(np.array([int(d[:16], 16) for d in digests], dtype=np.uint64))
        return [f"{d}:{n}" for d, n in zip(digests, occurrence, strict=False)]

    def _occurrences(self, d: np.ndarray) -> np.ndarray:
        """For each digest, how many identical rows came before it in this file."""
        if not len(d):
            return np.zeros(0, dtype=np.int64)
        order = np.argsort(d, kind="stable")
        sd = d[order]
        start = np.r_[True, sd[1:] != sd[:-1]]
        grp = np.cumsum(start) - 1
        first = np.flatnonzero(start)
        within = np.arange(len(sd)) - first[grp]
        pos = np.searchsorted(self._seen_digests, sd)
        hit = (pos < len(self._seen_digests)) & (self._seen_digests[np.minimum(pos, len(self._seen_digests) - 1)]
                                                 == sd) if len(self._seen_digests) else np.zeros(len(sd), bool)
        before = np.where(hit, self._seen_counts[np.minimum(pos, max(len(self._seen_counts) - 1, 0))], 0) \
            if len(self._seen_counts) else np.zeros(len(sd), dtype=np.int64)
        occ = np.empty(len(d), dtype=np.int64)
        occ[order] = before + within
        # merge the chunk's digests into the seen set with their new counts
        uniq, counts = sd[start], np.diff(np.r_[first, len(sd)])
        all_d = np.concatenate([self._seen_digests, uniq])
        all_c = np.concatenate([self._seen_counts, counts])
        o = np.argsort(all_d, kind="stable")
        all_d, all_c = all_d[o], all_c[o]
        s2 = np.r_[True, all_d[1:] != all_d[:-1]]
        self._seen_digests = all_d[s2]
        self._seen_counts = np.add.reduceat(all_c, np.flatnonzero(s2))
        return occ


def rows_text(rows: list[int]) -> str:
    """'row 2', 'rows 2-4', 'rows 2-4, 7 and 9 more' (runs of consecutive rows)."""
    rows = sorted(rows)
    if len(rows) == 1:
        return f"row {rows[0]}"
    runs: list[list[int]] = []
    for r in rows:
        if runs and r == runs[-1][1] + 1:
            runs[-1][1] = r
        else:
            runs.append([r, r])
    shown = [f"{a}" if a == b else f"{a}-{b}" for a, b in runs[:5]]
    more = f" and {sum(b - a + 1 for a, b in runs[5:])} more" if len(runs) > 5 else ""
    return f"{len(rows)} rows ({', '.join(shown)}{more})"
