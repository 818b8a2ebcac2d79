"""The inspections file: one row per inspection result (a lot, a method, a quantity
and its verdict), checked against the lot, its pattern's zones and the lot's totals."""

from __future__ import annotations

import datetime as dt
import itertools
from dataclasses import dataclass

import numpy as np
import pandas as pd

from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import (
    DEFECTS,
    GRADED_CATEGORIES,
    METHODS,
    NEVER_ACCEPTABLE,
    RESULTS,
    XRAY_CATEGORIES,
)
from tracker.log.ingest.identity import FileIdentity
from tracker.log.ingest.kinds.base import Validator
from tracker.log.ingest.kinds.lot_totals import LotTotals
from tracker.log.ingest.kinds.record_keys import RecordKeys
from tracker.log.ingest.radiography import conflict
from tracker.log.ingest.result import ImportResult
from tracker.log.ingest.text import log_spelling, zones_text
from tracker.log.ingest.values import ints, nulls
from tracker.log.store import Store


@dataclass
class _Cells:
    """An inspections chunk's columns, each checked on its own."""

    lot: pd.Series
    on: pd.Series
    method: pd.Series
    qty: pd.Series
    result: pd.Series
    defect: pd.Series
    zone: pd.Series
    cat: pd.Series
    sev: pd.Series
    serial: pd.Series
    inspector: pd.Series
    notes: pd.Series
    rid: pd.Series

    def stored(self) -> list:
        """The columns a record stores, in the table's order (blank text and NaN as
        NULL), column by column: a Python call per cell is most of an import's time."""
        return [self.lot.tolist(), self.on.tolist(), self.method.tolist(), ints(self.qty), self.result.tolist(),
                nulls(self.defect), nulls(self.zone), nulls(self.cat), ints(self.sev), nulls(self.serial),
                nulls(self.inspector), nulls(self.notes)]

    def canon(self) -> list:
        """The same columns as checked (for the keys of logs before schema version 4)."""
        return [self.lot, self.on, self.method, self.qty, self.result, self.defect, self.zone, self.cat,
                self.sev, self.serial, self.inspector, self.notes]


class InspectionsValidator(Validator):
    """Checks the rows of an inspections file (or one record typed in: ``identity`` None)."""

    kind = "inspections"

    def __init__(self, store: Store, file: str, today: dt.date, by: str | None, result: ImportResult,
                 exclude: tuple = (), identity: FileIdentity | None = None):
        super().__init__(store, file, today, by, result)
        self.now = dt.datetime.now(dt.UTC).isoformat(timespec="seconds")
        # A log with no inspection record yet (a first bulk load) holds nothing a file's
        # rows could repeat and no earlier totals for their lots: no need to look them up.
        # (Rows written by this file's earlier chunks never collide: keys count occurrences.)
        log_was_empty = not store.has_rows("inspections")
        legacy = not log_was_empty and store.has_legacy_keys()
        self.keys = RecordKeys(store, file, identity, log_was_empty, legacy)
        self.totals = LotTotals(store, exclude=exclude, log_was_empty=log_was_empty)
        self.already_present = np.zeros(0, dtype=bool)  # rows stored before
        self._levels: dict | None = None  # the zones' required levels (read once)
        self._next_lots: tuple[set, dict] | None = None  # the next chunk's lots, looked up ahead
        # Off only for a withdrawal: a record logged before the check came in must stay withdrawable.
        self.radiographs_checked = True

    def prefetch(self, chunk: pd.DataFrame) -> None:
        """Look up the lots of the next chunk now, before this chunk's rows are
        written: on PostgreSQL their COPY then runs while the next chunk is
        checked (see Store.insert_rows) instead of holding up its lookup."""
        if "lot" in chunk.columns:
            lots = [x for x in dict.fromkeys(chunk["lot"].tolist()) if x != ""]
            self._next_lots = (set(lots), self.store.lots_info(lots))

    def validate(self, c: Checks) -> list[tuple]:
        cells = self._cells(c)
        self._check_verdicts(c, cells)
        if self.radiographs_checked:
            self._check_radiograph(c, cells)
        info, known, pattern = self._check_lots(c, cells)
        level = self._check_zones(c, cells, known, pattern)
        self._check_levels(c, cells, level)
        columns = cells.stored()
        keys, present = self.keys.keys(c, cells.rid, columns, cells.canon())
        self.totals.check(c, cells.lot, cells.method, cells.result, cells.qty, known, ~present, info)
        self.already_present = present
        fixed = (self.now, self.by, self.file, None, 0, None)
        return list(zip(*columns, keys, *(itertools.repeat(v, len(keys)) for v in fixed), strict=False))

    def skipped(self, rows: list[tuple], c: Checks) -> np.ndarray:
        return self.already_present & ~c.bad

    def finish(self) -> list:
        """No problem across the file; the rows found from an earlier file are named in a warning."""
        self.result.warnings.extend(self.keys.matched_notes())
        return []

    def write(self, good: list[tuple], following: pd.DataFrame | None) -> None:
        if following is not None:
            self.prefetch(following)
        super().write(good, following)

    def _cells(self, c: Checks) -> _Cells:
        return _Cells(
            lot=c.text("lot", max_len=64),
            on=c.date("inspected_on", not_after=self.today, today=self.today),
            method=c.code("method", METHODS),
            qty=c.number("quantity", low=0, whole=True, high=1_000_000),
            result=c.code("result", RESULTS),
            defect=c.code("defect", DEFECTS, required=False),
            zone=c.text("zone", required=False, max_len=64),
            cat=c.code("xray_category", XRAY_CATEGORIES, required=False, lower=False),
            sev=c.number("severity", required=False, low=1, low_inclusive=True, high=5, whole=True),
            serial=c.text("serial", required=False),
            inspector=c.text("inspector", required=False, max_len=100),
            notes=c.text("notes", required=False, max_len=2000, lines=True),
            rid=c.text("record_id", required=False, max_len=64),
        )

    @staticmethod
    def _check_verdicts(c: Checks, x: _Cells) -> None:
        """A reject or rework names its defect; a radiography category goes with
        xray, a severity with a graded category; cracks and hot tears are never accepted."""
        needs_defect = x.result.isin(["reject", "rework"]) & (x.defect == "")
        for res in ("reject", "rework"):
            c.fail(needs_defect & (x.result == res), "defect",
                   f"a {res} row needs the defect found; use one of {', '.join(DEFECTS)}",
                   form=f"pick one for a {res} ({', '.join(DEFECTS)})")
        cat, method, sev = x.cat, x.method, x.sev
        c.fail(c.ok("method", "xray_category") & (cat != "") & (method != "xray"), "xray_category",
               lambda i: f"got {cat.iloc[i]!r}; a radiography category goes with method xray, "
                         f"not {method.iloc[i]}")
        c.fail(sev.notna() & (cat == ""), "severity", "a severity level needs its xray_category")
        c.fail(c.ok("xray_category") & sev.notna() & (cat != "") & ~cat.isin(GRADED_CATEGORIES), "severity",
               lambda i: f"category {cat.iloc[i]} is not graded in severity levels; leave severity blank")
        c.fail(cat.isin(NEVER_ACCEPTABLE) & (x.result == "accept"), "result",
               lambda i: f"got 'accept'; category {cat.iloc[i]} (cracks, hot tears) is not acceptable at "
                         "any level")

    @staticmethod
    def _check_radiograph(c: Checks, x: _Cells) -> None:
        """A defect must be what its radiograph category shows (tracker.log.ingest.radiography)."""
        pair = x.defect.astype(object) + "|" + x.cat.astype(object)  # vectorised: no Python call per row
        why = {p: conflict(*p.split("|")) for p in pair.unique()}  # a handful of distinct pairs
        bad = pair.map({p: w is not None for p, w in why.items()}).to_numpy(dtype=bool)
        c.fail(c.ok("defect", "xray_category") & bad, "defect",
               lambda i: f"{why[pair.iloc[i]]}; change the defect or the xray_category")

    def _check_lots(self, c: Checks, x: _Cells) -> tuple[dict, np.ndarray, np.ndarray]:
        """The lot must exist, inspection on or after the pour. Returns the lots'
        information, whether each row's lot is known, and each row's pattern."""
        lot, on = x.lot, x.on
        wanted = lot[lot != ""].unique().tolist()
        ahead, info = self._next_lots or (set(), None)
        self._next_lots = None
        if info is None or not ahead.issuperset(wanted):
            info = self.store.lots_info(wanted)
        lot_l = lot.tolist()  # a plain list: iterating a Series is slow
        known = np.array([v in info for v in lot_l], dtype=bool)  # Series.isin is slow on many values
        c.fail((lot != "") & ~known, "lot", "unknown lot; import it in lots.csv first or check the code")
        poured = np.array([info[v]["poured_on"] if k else "" for v, k in zip(lot_l, known, strict=False)],
                          dtype=object)
        c.fail(c.ok("inspected_on") & known & (on != "") & (on.to_numpy() < poured), "inspected_on",
               lambda i: f"got {on.iloc[i]!r}; lot {lot.iloc[i]} was poured on {poured[i]}; "
                         "a casting is inspected after it is poured")
        pattern = np.array([info[v]["pattern"] if k else "" for v, k in zip(lot_l, known, strict=False)],
                           dtype=object)
        return info, known, pattern

    def _check_zones(self, c: Checks, x: _Cells, known: np.ndarray, pattern: np.ndarray) -> np.ndarray:
        """A zone must be one of the lot's pattern; ``x.zone`` takes the log's
        spelling. Returns each row's required level (NaN where none)."""
        if self._levels is None:  # zones are not written while an inspections file is
            self._levels = self.store.zone_levels()
        levels = self._levels
        zone = x.zone = log_spelling(x.zone, pattern.tolist(), levels)
        zone_l = zone.tolist()
        has_zone = (zone != "").to_numpy()
        zone_known = np.array([(p, z) in levels for p, z in zip(pattern, zone_l, strict=False)], dtype=bool)
        c.fail(known & has_zone & ~zone_known, "zone",
               lambda i: f"got {zone.iloc[i]!r}; pattern {pattern[i]} has no such zone; "
                         f"{zones_text(levels, str(pattern[i]))}",
               form=None)
        return np.array([levels.get((p, z)) if zk else None
                         for p, z, zk in zip(pattern, zone_l, zone_known, strict=False)], dtype=float)

    @staticmethod
    def _check_levels(c: Checks, x: _Cells, level: np.ndarray) -> None:
        """A graded severity above the zone's required level is not accepted; one within it not rejected."""
        zone, result = x.zone, x.result
        sev_a = x.sev.to_numpy(dtype=float)
        graded = x.cat.isin(GRADED_CATEGORIES).to_numpy() & ~np.isnan(sev_a) & ~np.isnan(level)
        c.fail(graded & (sev_a > np.nan_to_num(level, nan=9)) & (result == "accept").to_numpy(), "result",
               lambda i: f"got 'accept'; severity {int(sev_a[i])} is above zone {zone.iloc[i]}'s required "
                         f"level {int(level[i])}: write reject or rework")
        c.fail(graded & (sev_a <= np.nan_to_num(level, nan=9)) & (result == "reject").to_numpy(), "result",
               lambda i: f"got 'reject'; severity {int(sev_a[i])} meets zone {zone.iloc[i]}'s required "
                         f"level {int(level[i])}: the casting is acceptable on radiography")
