"""The statements that recompute the running totals per pattern and pour day
(``day_totals``, ``zone_totals``) from the lots and current records: run by
every write of lots or records (:mod:`tracker.log.totals`) and by the
migration that created the tables."""

from __future__ import annotations

from tracker.log.schema import CURRENT

# What judging a riser revision reads: the lots, castings, castings inspected, rejects and
# shrinkage rejects of one pattern over a span of pour days, which for a revision still
# without a verdict runs back years. ``day_totals`` holds, per pattern and pour day, the
# totals of the pattern's lots poured up to and including that day (a span is the
# difference of two rows); ``zone_totals`` the same for shrinkage rejects per zone named
# on the record. Both are derived from lots and current inspection records only, and are
# brought up to date in the transaction of every write of lots or records (see
# ``Store.write``): the days from the earliest one a write touched are recomputed from the
# lots and records, so corrections, voids and late records count as the review counts
# them. Counting rules as in ``pours_by_day`` and ``rejects_by_day``: a lot is inspected
# when it holds a current record; rejects are current records with result "reject".
# Castings are molds x the pattern's castings per mold, which never changes once stored
# (an import refuses other content for a stored key).

EARLIEST_DAY = "0001-01-01"


def _day_totals_sql(one_pattern: bool) -> str:
    """The statement recomputing ``day_totals`` from a day on (its rows from that day
    deleted beforehand): of one pattern (parameters: pattern, day, pattern, day, day,
    pattern) or of every pattern (day, day, day).

    A day's sums are cast to INTEGER (the type of the running totals, so they fit):
    on PostgreSQL the running SUM of a BIGINT, as they would be, is computed in
    NUMERIC, several times slower than one of an INTEGER (which gives a BIGINT).
    """
    lots = "l.pattern = ? AND l.poured_on >= ?" if one_pattern else "l.poured_on >= ?"
    base = "p.pattern = ?" if one_pattern else "1 = 1"
    return f"""
        WITH d AS (
            SELECT pattern, poured_on, CAST(SUM(lots) AS INTEGER) AS lots, CAST(SUM(molds) AS INTEGER) AS molds,
                CAST(SUM(inspected_molds) AS INTEGER) AS inspected_molds,
                CAST(SUM(rejected) AS INTEGER) AS rejected, CAST(SUM(shrinkage) AS INTEGER) AS shrinkage,
                CAST(SUM(zoned_shrinkage) AS INTEGER) AS zoned_shrinkage
            FROM (
                SELECT l.pattern, l.poured_on, COUNT(*) AS lots, SUM(l.molds) AS molds,
                    SUM(CASE WHEN EXISTS (SELECT 1 FROM inspections i WHERE i.lot = l.lot AND {CURRENT})
                        THEN l.molds ELSE 0 END) AS inspected_molds,
                    0 AS rejected, 0 AS shrinkage, 0 AS zoned_shrinkage
                FROM lots l WHERE {lots} GROUP BY l.pattern, l.poured_on
                UNION ALL
                SELECT l.pattern, l.poured_on, 0, 0, 0, SUM(i.quantity),
                    SUM(CASE WHEN i.defect = 'shrinkage' THEN i.quantity ELSE 0 END),
                    SUM(CASE WHEN i.defect = 'shrinkage' AND i.zone IS NOT NULL THEN i.quantity ELSE 0 END)
                FROM lots l JOIN inspections i ON i.lot = l.lot
                WHERE {lots} AND i.result = 'reject' AND {CURRENT}
                GROUP BY l.pattern, l.poured_on
            ) u GROUP BY pattern, poured_on
        ), base_day AS MATERIALIZED (
            SELECT p.pattern, (SELECT MAX(x.poured_on) FROM day_totals x
                               WHERE x.pattern = p.pattern AND x.poured_on < ?) AS poured_on
            FROM patterns p WHERE {base}
        ), b AS (
            SELECT t.* FROM base_day JOIN day_totals t
            ON t.pattern = base_day.pattern AND t.poured_on = base_day.poured_on
        )
        INSERT INTO day_totals (pattern, poured_on, lots, castings, inspected_castings, rejected, shrinkage,
                                zoned_shrinkage)
        SELECT d.pattern, d.poured_on, COALESCE(b.lots, 0) + SUM(d.lots) OVER w,
            COALESCE(b.castings, 0) + p.castings_per_mold * SUM(d.molds) OVER w,
            COALESCE(b.inspected_castings, 0) + p.castings_per_mold * SUM(d.inspected_molds) OVER w,
            COALESCE(b.rejected, 0) + SUM(d.rejected) OVER w,
            COALESCE(b.shrinkage, 0) + SUM(d.shrinkage) OVER w,
            COALESCE(b.zoned_shrinkage, 0) + SUM(d.zoned_shrinkage) OVER w
        FROM d JOIN patterns p ON p.pattern = d.pattern LEFT JOIN b ON b.pattern = d.pattern
        WINDOW w AS (PARTITION BY d.pattern ORDER BY d.poured_on)"""


def _zone_totals_sql(one_pattern: bool) -> str:
    """As :func:`_day_totals_sql`, for ``zone_totals`` (parameters: pattern, day, day;
    or day, day). Each row's base, the zone's running total before the day, is one
    lookup by the table's key, so the plan stays linear whatever the planner's
    estimates (a join there became a nested loop over every pair after a bulk load)."""
    lots = "l.pattern = ? AND l.poured_on >= ?" if one_pattern else "l.poured_on >= ?"
    return f"""
        WITH z AS (
            SELECT l.pattern, i.zone, l.poured_on, CAST(SUM(i.quantity) AS INTEGER) AS shrinkage
            FROM lots l JOIN inspections i ON i.lot = l.lot
            WHERE {lots} AND i.result = 'reject' AND i.defect = 'shrinkage' AND i.zone IS NOT NULL
            AND {CURRENT} GROUP BY l.pattern, i.zone, l.poured_on
        )
        INSERT INTO zone_totals (pattern, zone, poured_on, shrinkage)
        SELECT z.pattern, z.zone, z.poured_on,
            COALESCE((SELECT x.shrinkage FROM zone_totals x WHERE x.pattern = z.pattern AND x.zone = z.zone
                      AND x.poured_on < ? ORDER BY x.poured_on DESC LIMIT 1), 0)
            + SUM(z.shrinkage) OVER (PARTITION BY z.pattern, z.zone ORDER BY z.poured_on)
        FROM z"""


TOTALS_TABLES = ("day_totals", "zone_totals")


def _totals_from(execute, day: str, tables: tuple[str, ...] = TOTALS_TABLES) -> None:
    """Recompute ``tables`` (``day_totals``, ``zone_totals``) of every pattern from ``day`` (ISO date) on."""
    for table, sql, params in (("day_totals", _day_totals_sql(False), (day, day, day)),
                               ("zone_totals", _zone_totals_sql(False), (day, day))):
        if table in tables:
            execute(f"DELETE FROM {table} WHERE poured_on >= ?", (day,))
            execute(sql, params)
