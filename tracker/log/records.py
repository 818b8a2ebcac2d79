"""Lots and inspection records: one at a time, as history, and the current ones."""

from __future__ import annotations

from collections.abc import Iterable, Iterator

import pandas as pd

from tracker.errors import NotFound
from tracker.log.core import StoreCore, _batches
from tracker.log.schema import CURRENT


class Records(StoreCore):
    """Reads of lots and of inspection records (corrections and voids included)."""

    def lots_info(self, lots: Iterable[str]) -> dict[str, dict]:
        """pattern, poured_on and castings poured of each of ``lots`` that exists."""
        out = {}
        for where, params in self.dialect.in_list("l.lot", list(dict.fromkeys(lots))):
            q = ("SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
                 f"FROM lots l JOIN patterns p ON p.pattern = l.pattern WHERE {where}")
            for r in self.conn.execute(q, params).fetchall():
                out[r[0]] = {"pattern": r[1], "poured_on": r[2], "castings": r[3]}
        return out

    def lot_totals(self, lots: Iterable[str], exclude: tuple = ()) -> dict[str, dict]:
        """Per lot, the current records' rejected total and quantity per method.

        ``exclude``: record ids to leave out (the record a correction replaces).
        """
        ids = [int(x) for x in exclude]
        skip = f" AND i.id NOT IN ({', '.join('?' * len(ids))})" if ids else ""
        out: dict[str, dict] = {}
        for where, params in self.dialect.in_list("i.lot", list(dict.fromkeys(lots))):
            q = ("SELECT i.lot, i.method, i.result, SUM(i.quantity) FROM inspections i "
                 f"WHERE {where} AND {CURRENT}"
                 + skip + " GROUP BY i.lot, i.method, i.result")
            for lot, method, result, qty in self.conn.execute(q, params + ids).fetchall():
                d = out.setdefault(lot, {"rejected": 0, "methods": {}})
                d["methods"][method] = d["methods"].get(method, 0) + qty
                if result == "reject":
                    d["rejected"] += qty
        return out

    def inspection(self, record_id: int) -> dict:
        row = self._row("SELECT * FROM inspections WHERE id = ?", (record_id,))
        if row is None:
            raise NotFound("inspection record", record_id, "see `pourback history` for record ids")
        return row

    def superseded_by(self, record_id: int) -> int | None:
        r = self.conn.execute("SELECT id FROM inspections WHERE supersedes = ?", (record_id,)).fetchone()
        return r[0] if r else None

    def inspections_history(self, lot: str | None = None, limit: int | None = None) -> pd.DataFrame:
        """Every record, superseded ones included, with who superseded them."""
        q = ("SELECT i.*, n.id AS superseded_by, n.recorded_by AS corrected_by, "
             "n.recorded_at AS corrected_at, n.correction_reason AS correction_why "
             "FROM inspections i LEFT JOIN inspections n ON n.supersedes = i.id")
        params: list = []
        if lot is not None:
            q += " WHERE i.lot = ?"
            params.append(lot)
        q += " ORDER BY i.id DESC"
        if limit:
            q += " LIMIT ?"
            params.append(int(limit))
        return self._frame(q, params)

    def current_inspections(self, start: str | None = None, end: str | None = None,
                            pattern: str | None = None, lot: str | None = None) -> pd.DataFrame:
        """Current (not superseded, not void) records, with the lot's pattern and pour date.

        ``start``/``end`` bound the lot's pour date (ISO strings, inclusive).
        """
        where, params = self._lot_filter(start, end, pattern)
        if lot is not None:
            where.append("l.lot = ?")
            params.append(lot)
        q = ("SELECT i.id, i.lot, l.pattern, l.poured_on, i.inspected_on, i.method, i.quantity, "
             "i.result, i.defect, i.zone, i.xray_category, i.severity, i.serial, i.inspector, "
             "i.notes, i.recorded_at, i.recorded_by, i.source, i.supersedes "
             "FROM inspections i JOIN lots l ON l.lot = i.lot "
             f"WHERE {CURRENT}"
             + "".join(" AND " + w for w in where) + " ORDER BY i.id")
        return self._frame(q, params)

    def lots_frame(self, start: str | None = None, end: str | None = None,
                   pattern=None) -> pd.DataFrame:
        """Lots with their pattern's alloy, weights and costs and castings poured."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT l.lot, l.pattern, l.poured_on, l.heat, l.molds, l.pour_temp_c, "
             "l.molds * p.castings_per_mold AS castings, p.alloy, p.casting_weight_kg, "
             "p.metal_cost_per_kg, p.processing_cost_per_casting "
             "FROM lots l JOIN patterns p ON p.pattern = l.pattern"
             + (" WHERE " + " AND ".join(where) if where else "") + " ORDER BY l.poured_on, l.lot")
        return self._frame(q, params)

    def lot_batches(self, size: int = 100_000) -> Iterator[list[tuple]]:
        """(lot, pattern, poured_on, castings, pour_temp_c) of every lot, in no set
        order, ``size`` rows at a time: ten years of lots read for the model
        without holding them all as Python rows."""
        where, params = self._lot_filter(None, None, None)
        yield from _batches(self.conn.execute(
            "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold, l.pour_temp_c "
            "FROM lots l JOIN patterns p ON p.pattern = l.pattern"
            + (" WHERE " + " AND ".join(where) if where else ""), tuple(params)), size)

    def lot(self, code: str) -> dict:
        cur = self.conn.execute("SELECT l.*, l.molds * p.castings_per_mold AS castings "
                                "FROM lots l JOIN patterns p ON p.pattern = l.pattern WHERE l.lot = ?",
                                (code,))
        row = cur.fetchone()
        if row is None:
            raise NotFound("lot", code, "import or log the lot first")
        return dict(zip([d[0] for d in cur.description], row, strict=False))

    def mean_pour_temp(self, pattern: str) -> float | None:
        """Mean pour temperature of the pattern's lots that give one, °C (None if none do)."""
        r = self.conn.execute("SELECT AVG(pour_temp_c) FROM lots WHERE pattern = ? AND pour_temp_c IS NOT NULL",
                              (pattern,)).fetchone()
        return None if r is None or r[0] is None else float(r[0])

    def latest_pour_temps(self, patterns: Iterable[str]) -> dict[str, float]:
        """Pouring temperature (°C) of each pattern's most recent lot that records one."""
        out = {}
        for p in dict.fromkeys(patterns):
            row = self.conn.execute(
                "SELECT pour_temp_c FROM lots WHERE pattern = ? AND pour_temp_c IS NOT NULL "
                "ORDER BY poured_on DESC, lot DESC LIMIT 1", (p,)).fetchone()
            if row is not None:
                out[p] = float(row[0])
        return out

    def lot_codes(self, limit: int = 500) -> list[str]:
        return [r[0] for r in self.conn.execute(
            "SELECT lot FROM lots ORDER BY poured_on DESC, lot DESC LIMIT ?", (limit,))]
