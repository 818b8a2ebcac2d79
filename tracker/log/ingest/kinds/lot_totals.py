"""The totals of each lot an inspections file adds to: rejects never above the
castings poured, and no method inspecting more castings than were poured."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker.log.ingest.checks import Checks
from tracker.log.ingest.columns import METHODS
from tracker.log.store import Store

_WIDTH = 1 + len(METHODS)  # per lot: castings rejected, then castings inspected by each method


def _running_sum(key: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Inclusive running sum of ``values`` within each ``key``, in the given order."""
    order = np.argsort(key, kind="stable")
    v = values[order]
    total = np.cumsum(v)
    k = key[order]
    start = np.r_[True, k[1:] != k[:-1]]
    before = (total - v)[start]
    out = np.empty_like(total)
    out[order] = total - before[np.cumsum(start) - 1]
    return out


class LotTotals:
    """The running totals of the lots met so far in one file (read from the log
    once per lot, then kept up to date as rows are accepted).

    ``exclude``: record ids left out of the stored totals (the record a
    correction replaces). ``log_was_empty``: no inspection is stored yet, so
    there are no stored totals to read.
    """

    def __init__(self, store: Store, exclude: tuple = (), log_was_empty: bool = False):
        self.store = store
        self.exclude = tuple(exclude)
        self.log_was_empty = log_was_empty
        self._lot_index: dict[str, int] = {}
        self._lot_tot = np.zeros((0, _WIDTH), dtype=np.int64)
        self._lot_castings = np.zeros(0, dtype=np.int64)

    def check(self, c: Checks, lot: pd.Series, method: pd.Series, result: pd.Series, qty: pd.Series,
              known: np.ndarray, new: np.ndarray, info: dict) -> None:
        """Refuse rows that would take a lot's rejects, or its castings inspected by
        one method, above the castings poured; add the other new rows to the totals.

        ``known``: rows of a lot in the log (``info``: its castings); ``new``: rows
        not stored before.
        """
        lots = lot.to_numpy()
        fresh = [x for x in dict.fromkeys(lots[known]) if x not in self._lot_index]
        if fresh:
            self._add_lots(fresh, info)
        q = qty.fillna(0).to_numpy(dtype=np.int64)
        res = result.to_numpy()
        meth = method.to_numpy()
        todo = np.flatnonzero(known & new & ~c.bad)
        if self._at_once(lots[todo], meth[todo], res[todo] == "reject", q[todo]):
            return
        self._row_by_row(c, todo, lots, meth, res, q)

    def _add_lots(self, fresh: list[str], info: dict) -> None:
        """Start the totals of lots not met before from the log's."""
        stored = {} if self.log_was_empty else self.store.lot_totals(fresh, exclude=self.exclude)
        base = len(self._lot_index)
        self._lot_index.update(zip(fresh, range(base, base + len(fresh)), strict=False))
        add = np.zeros((len(fresh), _WIDTH), dtype=np.int64)
        cast = np.fromiter((info[x]["castings"] for x in fresh), dtype=np.int64, count=len(fresh))
        for x, t in stored.items():
            j = self._lot_index[x] - base
            add[j, 0] = t["rejected"]
            for m, q in t["methods"].items():
                add[j, 1 + METHODS.index(m)] = q
        need = base + len(fresh)
        if need > len(self._lot_castings):  # grown by doubling: a copy per chunk was quadratic
            size = max(need, 2 * len(self._lot_castings), 1024)
            tot, castings = np.zeros((size, _WIDTH), dtype=np.int64), np.zeros(size, dtype=np.int64)
            tot[:base], castings[:base] = self._lot_tot[:base], self._lot_castings[:base]
            self._lot_tot, self._lot_castings = tot, castings
        self._lot_tot[base:need] = add
        self._lot_castings[base:need] = cast

    def _at_once(self, lots: np.ndarray, meth: np.ndarray, rejected: np.ndarray, q: np.ndarray) -> bool:
        """Add the rows' quantities to their lots' totals at once, if no row takes a
        total above the castings poured; else change nothing and return False.

        The row-by-row check gives the same totals whenever no row fails, and the
        first row failing here is the first it fails: so it runs only when needed.
        """
        if not len(lots):
            return True
        j = np.fromiter((self._lot_index[x] for x in lots), dtype=np.int64, count=len(lots))
        where = {m: k for k, m in enumerate(METHODS, start=1)}
        mi = np.fromiter((where[m] for m in meth), dtype=np.int64, count=len(meth))
        qr = np.where(rejected, q, 0)
        cap = self._lot_castings[j]
        rej_total = self._lot_tot[j, 0] + _running_sum(j, qr)
        method_total = self._lot_tot[j, mi] + _running_sum(j * _WIDTH + mi, q)
        if (rejected & (rej_total > cap)).any() or (method_total > cap).any():
            return False
        np.add.at(self._lot_tot[:, 0], j, qr)  # a view: adds into the rejects column
        np.add.at(self._lot_tot, (j, mi), q)
        return True

    def _row_by_row(self, c: Checks, todo: np.ndarray, lots: np.ndarray, meth: np.ndarray, res: np.ndarray,
                    q: np.ndarray) -> None:
        """Add the rows one at a time, refusing each that takes a total above the castings poured."""
        for i in todo:
            j = self._lot_index[lots[i]]
            mi = 1 + METHODS.index(meth[i])
            cap = self._lot_castings[j]
            if res[i] == "reject" and self._lot_tot[j, 0] + q[i] > cap:
                c.fail(np.arange(len(lots)) == i, "quantity",
                       f"got {q[i]}; lot {lots[i]} would have {self._lot_tot[j, 0] + q[i]} castings "
                       f"rejected but only {cap} were poured")
                continue
            if self._lot_tot[j, mi] + q[i] > cap:
                c.fail(np.arange(len(lots)) == i, "quantity",
                       f"got {q[i]}; lot {lots[i]} would have {self._lot_tot[j, mi] + q[i]} castings "
                       f"inspected by {meth[i]} but only {cap} were poured")
                continue
            self._lot_tot[j, mi] += q[i]
            if res[i] == "reject":
                self._lot_tot[j, 0] += q[i]
