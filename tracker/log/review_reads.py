"""What the weekly review reads: pours and rejects per day, notes, the pour span
and the floor the scale benchmark holds the review against."""

from __future__ import annotations

from collections.abc import Iterable
from typing import cast

import pandas as pd

from tracker.log.core import StoreCore
from tracker.log.schema import CURRENT


class ReviewReads(StoreCore):
    """Aggregates of lots and current records over a window of pour dates."""

    def rejects_by_day(self, start: str | None = None, end: str | None = None,
                       pattern=None, *, columns: bool = False) -> pd.DataFrame | dict[str, tuple]:
        """Current reject and rework quantities per pattern, pour date, result,
        defect and zone (aggregated in SQL). ``columns``: a dict of column
        tuples instead of a DataFrame."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT l.pattern, l.poured_on, i.result, i.defect, i.zone, SUM(i.quantity) AS quantity "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             f"WHERE i.result != 'accept' AND {CURRENT}"
             + "".join(" AND " + w for w in where)
             + " GROUP BY l.pattern, l.poured_on, i.result, i.defect, i.zone")
        return self._columns(q, params) if columns else self._frame(q, params)

    def rejects_by_lot(self, start: str | None = None, end: str | None = None,
                       pattern=None) -> pd.DataFrame:
        """Current reject and rework quantities per lot, result, defect and zone."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT i.lot, i.result, i.defect, i.zone, SUM(i.quantity) AS quantity "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             f"WHERE i.result != 'accept' AND {CURRENT}"
             + "".join(" AND " + w for w in where)
             + " GROUP BY i.lot, i.result, i.defect, i.zone")
        return self._frame(q, params)

    def pours_by_day(self, start: str | None = None, end: str | None = None,
                     pattern=None, *, columns: bool = False) -> pd.DataFrame | dict[str, tuple]:
        """Lots and castings poured per pattern and pour date, and how many of
        them have been inspected (aggregated in SQL).

        A lot counts as inspected when it holds at least one current (not
        superseded, not void) inspection record; ``inspected_castings`` is the
        castings poured in such lots, the denominator of the review's reject
        rates. ``start``/``end`` bound the pour date (ISO strings, inclusive);
        ``pattern`` is one code or a list of codes. ``columns``: a dict of
        column tuples instead of a DataFrame.
        """
        where, params = self._lot_filter(start, end, pattern)
        cond = " AND ".join(where) or "1 = 1"
        # All lots per pattern and day, less the few with no current record yet (a NOT
        # EXISTS that stops at a lot's first record): half the work of joining every
        # record to its lot. Castings per mold are applied per group, not per lot.
        q = ("SELECT a.pattern, a.poured_on, a.lots, a.molds * p.castings_per_mold AS castings, "
             "a.lots - COALESCE(u.lots, 0) AS inspected_lots, "
             "(a.molds - COALESCE(u.molds, 0)) * p.castings_per_mold AS inspected_castings FROM ("
             f"SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds FROM lots l WHERE {cond} "
             "GROUP BY l.pattern, l.poured_on) a LEFT JOIN ("
             f"SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds FROM lots l WHERE {cond} "
             f"AND NOT EXISTS (SELECT 1 FROM inspections i WHERE i.lot = l.lot AND {CURRENT}) "
             "GROUP BY l.pattern, l.poured_on) u ON u.pattern = a.pattern AND u.poured_on = a.poured_on "
             "JOIN patterns p ON p.pattern = a.pattern")
        return self._columns(q, [*params, *params]) if columns else self._frame(q, [*params, *params])

    def review_days(self, start: str, end: str) -> tuple[dict[str, tuple], dict[str, tuple], dict[str, tuple]]:
        """What the weekly review reads of lots poured from ``start`` to ``end``
        (ISO strings, inclusive), each a dict of column tuples: :meth:`pours_by_day`,
        :meth:`rejects_by_day` and the :meth:`pattern_costs` of the patterns poured.
        The reject rows come in the order of their group (pattern, poured_on,
        result, defect, zone; None first), so sums over them add up in the same
        order on either backend.

        Where the dialect asks for it (``review_in_one_pass``: PostgreSQL, where
        each statement costs planning and a round trip) all three come from one
        statement that reads the window's current records once; else from the
        two aggregates and the patterns."""
        if not self.dialect.review_in_one_pass:
            pours = cast(dict[str, tuple], self.pours_by_day(start, end, columns=True))
            rejects = cast(dict[str, tuple], self.rejects_by_day(start, end, columns=True))
            return pours, rejects, self.pattern_costs(pours["pattern"])
        where, params = self._lot_filter(start, end, None)
        cond = " AND ".join(where) or "1 = 1"
        # A lot counts as inspected when it holds a current record: the lots of the
        # window joined to the distinct lots of its current records (r, read once).
        # Three parts, told apart by the first column, padded with NULL: the pours
        # (a), the rejects and the patterns poured (description and alloy in text columns).
        q = ("WITH r AS (SELECT l.pattern, l.poured_on, i.lot, i.result, i.defect, i.zone, i.quantity "
             f"FROM lots l JOIN inspections i ON i.lot = l.lot WHERE {cond} AND {CURRENT}), "
             "a AS (SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds, "
             "COUNT(s.lot) AS inspected_lots, SUM(CASE WHEN s.lot IS NULL THEN 0 ELSE l.molds END) AS inspected_molds "
             f"FROM lots l LEFT JOIN (SELECT DISTINCT lot FROM r) s ON s.lot = l.lot WHERE {cond} "
             "GROUP BY l.pattern, l.poured_on) "
             "SELECT 0 AS part, a.pattern, a.poured_on, a.lots, a.molds * p.castings_per_mold AS castings, "
             "a.inspected_lots, a.inspected_molds * p.castings_per_mold AS inspected_castings, "
             "NULL AS result, NULL AS defect, NULL AS zone, NULL AS quantity, "
             "CAST(NULL AS DOUBLE PRECISION) AS casting_weight_kg, "
             "CAST(NULL AS DOUBLE PRECISION) AS metal_cost_per_kg, "
             "CAST(NULL AS DOUBLE PRECISION) AS processing_cost_per_casting "
             "FROM a JOIN patterns p ON p.pattern = a.pattern "
             "UNION ALL SELECT 1, pattern, poured_on, NULL, NULL, NULL, NULL, result, defect, zone, SUM(quantity), "
             "NULL, NULL, NULL FROM r WHERE result != 'accept' GROUP BY pattern, poured_on, result, defect, zone "
             "UNION ALL SELECT 2, pattern, description, NULL, NULL, NULL, NULL, alloy, NULL, NULL, NULL, "
             "casting_weight_kg, metal_cost_per_kg, processing_cost_per_casting FROM patterns "
             "WHERE pattern IN (SELECT pattern FROM a) "
             "ORDER BY 1, 2, 3, 8 NULLS FIRST, 9 NULLS FIRST, 10 NULLS FIRST")
        rows = self.conn.execute(q, [*params, *params]).fetchall()
        ends = [next((k for k, r in enumerate(rows) if r[0] >= part), len(rows)) for part in (1, 2)]
        p, r, c = (list(zip(*chunk, strict=False)) or [()] * 14
                   for chunk in (rows[:ends[0]], rows[ends[0]:ends[1]], rows[ends[1]:]))
        pours = dict(zip(("pattern", "poured_on", "lots", "castings", "inspected_lots", "inspected_castings"),
                         p[1:7], strict=False))
        rejects = dict(zip(("pattern", "poured_on", "result", "defect", "zone", "quantity"), [r[1], r[2], *r[7:11]],
                           strict=False))
        costs = dict(zip(("pattern", "description", "alloy", "casting_weight_kg", "metal_cost_per_kg",
                          "processing_cost_per_casting"), [c[1], c[2], c[7], *c[11:]], strict=False))
        return pours, rejects, costs

    def pattern_costs(self, codes: Iterable[str]) -> dict[str, tuple]:
        """Description, alloy, casting weight and costs of the patterns ``codes``,
        column by column ({name: tuple}), in code order."""
        codes = sorted(set(codes))
        cols = ("pattern", "description", "alloy", "casting_weight_kg", "metal_cost_per_kg",
                "processing_cost_per_casting")
        rows = []
        for chunk in (codes[i:i + 900] for i in range(0, len(codes), 900)):
            rows += self.conn.execute(f"SELECT {', '.join(cols)} FROM patterns WHERE pattern IN "
                                      f"({', '.join('?' * len(chunk))})", chunk).fetchall()
        rows.sort()
        return dict(zip(cols, zip(*rows, strict=False), strict=False)) if rows else {c: () for c in cols}

    def reject_notes(self, start: str | None = None, end: str | None = None, pattern=None,
                     per_pattern: int = 5, *, rows: bool = False) -> pd.DataFrame | list[dict]:
        """The newest non-empty notes of current reject and rework records, at
        most ``per_pattern`` per pattern, for lots poured from ``start`` to
        ``end`` (ISO strings, inclusive). ``rows``: a list of dicts (one per
        note, plain Python values) instead of a DataFrame."""
        where, params = self._lot_filter(start, end, pattern)
        q = ("SELECT pattern, lot, poured_on, result, defect, zone, quantity, notes FROM ("
             "SELECT l.pattern, l.lot, l.poured_on, i.result, i.defect, i.zone, i.quantity, "
             "i.notes, ROW_NUMBER() OVER (PARTITION BY l.pattern "
             "ORDER BY l.poured_on DESC, i.id DESC) AS k "
             "FROM lots l JOIN inspections i ON i.lot = l.lot "
             f"WHERE i.result != 'accept' AND TRIM(COALESCE(i.notes, '')) != '' AND {CURRENT}"
             + "".join(" AND " + w for w in where)
             + ") ranked WHERE k <= ? ORDER BY pattern, k")
        if rows:
            cur = self.conn.execute(q, (*params, int(per_pattern)))
            names = [d[0] for d in cur.description]
            return [dict(zip(names, r, strict=False)) for r in cur.fetchall()]
        return self._frame(q, [*params, int(per_pattern)])

    def pour_span(self) -> tuple[str | None, str | None]:
        # Two subqueries: SQLite answers a lone MIN() or MAX() from the index,
        # but scans every lot for both in one SELECT.
        where, params = self._plant_filter("pattern")
        cond = " WHERE " + where[0] if where else ""
        r = self.conn.execute(f"SELECT (SELECT MIN(poured_on) FROM lots{cond}), "
                              f"(SELECT MAX(poured_on) FROM lots{cond})", [*params, *params]).fetchone()
        return r[0], r[1]

    def last_pour_before(self, day: str) -> str | None:
        """The newest pour date before ``day`` (ISO string), or None (from the pour-date index)."""
        where, params = self._plant_filter("pattern")
        return self.conn.execute("SELECT MAX(poured_on) FROM lots WHERE poured_on < ?"
                                 + "".join(" AND " + w for w in where), (str(day), *params)).fetchone()[0]

    def rejects_by_pattern(self, start: str, end: str) -> pd.DataFrame:
        """Castings rejected (current records) per pattern in lots poured from
        ``start`` to ``end`` (ISO strings, inclusive): one plain aggregate, the
        floor the scale benchmark holds the weekly review against."""
        # The lots of the week (by the pour-date index) drive: left to itself, SQLite
        # without statistics scans every record (taking result = 'reject' as selective)
        # or every lot (in pattern order, to save the GROUP BY sort).
        q = ("SELECT l.pattern, SUM(i.quantity) AS rejected "
             f"FROM lots l {self.dialect.lots_by_date_hint} {self.dialect.forced_join} inspections i ON i.lot = l.lot "
             f"WHERE l.poured_on >= ? AND l.poured_on <= ? AND i.result = 'reject' AND {CURRENT} "
             "GROUP BY l.pattern")
        return self._frame(q, (str(start), str(end)))

    def review_floor(self, start: str, end: str) -> dict[str, list[tuple]]:
        """The rows a review of lots poured from ``start`` to ``end`` (ISO strings,
        inclusive) reads, fetched as plain tuples with no computation: the floor
        the scale benchmark holds the review against.

        ``lots``: (lot, pattern, poured_on, castings); ``records``: the current
        (not superseded, not void) inspection records of those lots (lot, result,
        defect, zone, quantity); ``risers``: the riser revisions in force in the
        span for the patterns poured in it, one row per riser (pattern, revision,
        effective_from, riser, zone, placement, top, diameter_mm, height_mm,
        sleeve, neck_diameter_mm). Besides these the review reads, to judge the
        riser revisions still under judgement, the running totals at the edges of
        their spans (:meth:`totals_before`, :meth:`zone_shrinkage_before`): not in
        the floor, which is the issue's definition; the benchmark times them beside it.
        """
        span = (str(start), str(end))
        hint, join = self.dialect.lots_by_date_hint, self.dialect.forced_join
        lots = self.conn.execute(
            "SELECT l.lot, l.pattern, l.poured_on, l.molds * p.castings_per_mold "
            f"FROM lots l {hint} {join} patterns p ON p.pattern = l.pattern "
            "WHERE l.poured_on >= ? AND l.poured_on <= ?", span).fetchall()
        records = self.conn.execute(
            "SELECT i.lot, i.result, i.defect, i.zone, i.quantity "
            f"FROM lots l {hint} {join} inspections i ON i.lot = l.lot "
            f"WHERE l.poured_on >= ? AND l.poured_on <= ? AND {CURRENT}", span).fetchall()
        risers = self.conn.execute(
            "SELECT r.pattern, r.revision, r.effective_from, x.riser, x.zone, x.placement, x.top, "
            "x.diameter_mm, x.height_mm, x.sleeve, x.neck_diameter_mm "
            "FROM revisions r JOIN risers x ON x.pattern = r.pattern AND x.revision = r.revision "
            "WHERE r.effective_from <= ? "
            "AND r.pattern IN (SELECT pattern FROM lots WHERE poured_on >= ? AND poured_on <= ?) "
            "AND NOT EXISTS (SELECT 1 FROM revisions s WHERE s.pattern = r.pattern "
            "AND s.effective_from > r.effective_from AND s.effective_from <= ?)",
            (span[1], span[0], span[1], span[0])).fetchall()
        return {"lots": lots, "records": records, "risers": risers}
