"""The running totals per pattern and pour day (``day_totals``, ``zone_totals``):
brought up to date as a write commits (recomputed, or added to), and read by
the review at the edges of a span. The statements that recompute them are in
:mod:`tracker.log.totals_sql`."""

from __future__ import annotations

from collections.abc import Iterable

from tracker.log.core import StoreCore
from tracker.log.migrations import SCHEMA_VERSION  # noqa: F401 (read by the tests of the running totals)
from tracker.log.schema import CURRENT
from tracker.log.totals_sql import (  # noqa: F401 (EARLIEST_DAY: read by the tests of the running totals)
    EARLIEST_DAY,
    TOTALS_TABLES,
    _day_totals_sql,
    _totals_from,
    _zone_totals_sql,
)

TOTALS_ONE_BY_ONE = 200  # more patterns touched: all are recomputed at once
TOTALS_AT_ONCE_COST = 3  # a lot read by pour date costs about a third of one read by pattern


def _refresh_totals(execute, since: dict[str, str], tables: tuple[str, ...] = TOTALS_TABLES) -> None:
    """Recompute ``tables`` (``day_totals``, ``zone_totals``) of each pattern of ``since``
    from its day (ISO date) on. ``execute(sql, params)`` runs one statement in the
    open write transaction.

    Pattern by pattern (lots by pattern, a few lookups each), or every pattern from
    the earliest of the days at once (lots by pour date, read in order): the latter
    when more than ``TOTALS_ONE_BY_ONE`` patterns were touched or when it reads
    fewer than ``TOTALS_AT_ONCE_COST`` times the lots of the former (a large import).
    """
    if not since:
        return
    day = min(since.values())
    if len(since) > TOTALS_ONE_BY_ONE:
        _totals_from(execute, day, tables)
        return
    mine = sum(execute("SELECT COUNT(*) FROM lots WHERE pattern = ? AND poured_on >= ?", item).fetchone()[0]
               for item in since.items())
    if execute("SELECT COUNT(*) FROM lots WHERE poured_on >= ?", (day,)).fetchone()[0] < TOTALS_AT_ONCE_COST * mine:
        _totals_from(execute, day, tables)
        return
    day_sql, zone_sql = _day_totals_sql(True), _zone_totals_sql(True)
    for pattern, day in sorted(since.items()):
        for table, sql, params in (("day_totals", day_sql, (pattern, day, pattern, day, day, pattern)),
                                   ("zone_totals", zone_sql, (pattern, day, day))):
            if table in tables:
                execute(f"DELETE FROM {table} WHERE pattern = ? AND poured_on >= ?", (pattern, day))
                execute(sql, params)


class RunningTotals(StoreCore):
    """Keeps ``day_totals`` and ``zone_totals`` up to date in every write, and reads them."""

    def _forget_touched(self) -> None:
        self._touched = {}
        self._records_above = None
        self._records_plain = True

    def _bring_totals_up_to_date(self) -> None:
        """Recompute ``day_totals`` and ``zone_totals`` from the earliest pour day of
        each pattern that the lots and records written since the last time touched
        (the lots of new records and of the records they supersede); when only plain
        new records were written, add them to ``day_totals`` instead."""
        if (not self._touched and self._records_above is not None and self._records_plain
                and self._add_records_to_totals()):
            self._forget_touched()
            return
        touched = self._touched
        if self._records_above is not None:
            q = ("SELECT l.pattern, MIN(l.poured_on) FROM inspections i JOIN lots l ON l.lot = i.lot "
                 "WHERE i.id > ? GROUP BY l.pattern "
                 "UNION ALL SELECT l.pattern, MIN(l.poured_on) FROM inspections n "
                 "JOIN inspections i ON i.id = n.supersedes JOIN lots l ON l.lot = i.lot "
                 "WHERE n.id > ? GROUP BY l.pattern")
            for pattern, day in self.conn.execute(q, (self._records_above, self._records_above)):
                if day < touched.get(pattern, "9999-12-31"):
                    touched[pattern] = day
        self._forget_touched()
        for sql in self.dialect.totals_settings if touched else ():
            self.conn.execute(sql)
        _refresh_totals(self.conn.execute, touched)

    def _add_records_to_totals(self) -> bool:
        """Bring ``day_totals`` up to date after a write of new records only (no lot,
        no correction or void), on the server: each pattern's rows from the earliest
        pour day of the records' lots on grow by what the records add on and before
        their day (a lot becomes inspected with its first current record; rejects add
        their quantities), which is what recomputing them from every lot gives.
        ``zone_totals`` is recomputed from those days (it holds shrinkage rejects only,
        a far smaller read). Returns False, having changed nothing, when a record's
        pour day has no row yet (the caller then recomputes)."""
        if not self.dialect.update_from:
            return False
        above = self._records_above
        execute = self.conn.execute
        for sql in self.dialect.totals_settings:
            execute(sql)
        # An older current record of the lot: none when the log held no record before.
        older = ("" if not above else
                 "AND NOT EXISTS (SELECT 1 FROM inspections i WHERE i.lot = r.lot AND i.id <= ? "
                 f"AND {CURRENT}) ")
        execute(f"DROP TABLE IF EXISTS {self.dialect.temp_schema}.pourback_day_adds")
        execute(f"""
            CREATE TEMP TABLE pourback_day_adds AS
            SELECT l.pattern, l.poured_on,
                CAST(SUM(CASE WHEN r.lot IS NOT NULL {older}THEN l.molds ELSE 0 END) AS INTEGER)
                    AS inspected_molds,
                CAST(SUM(r.rejected) AS INTEGER) AS rejected, CAST(SUM(r.shrinkage) AS INTEGER) AS shrinkage,
                CAST(SUM(r.zoned_shrinkage) AS INTEGER) AS zoned_shrinkage
            FROM (SELECT i.lot, SUM(CASE WHEN i.result = 'reject' THEN i.quantity ELSE 0 END) AS rejected,
                      SUM(CASE WHEN i.result = 'reject' AND i.defect = 'shrinkage' THEN i.quantity ELSE 0 END)
                          AS shrinkage,
                      SUM(CASE WHEN i.result = 'reject' AND i.defect = 'shrinkage' AND i.zone IS NOT NULL
                          THEN i.quantity ELSE 0 END) AS zoned_shrinkage
                  FROM inspections i WHERE i.id > ? GROUP BY i.lot) r
            JOIN lots l ON l.lot = r.lot GROUP BY l.pattern, l.poured_on""",
                (above, above) if above else (above,))
        try:
            missing = execute("SELECT COUNT(*) FROM pourback_day_adds a WHERE NOT EXISTS (SELECT 1 FROM day_totals t "
                              "WHERE t.pattern = a.pattern AND t.poured_on = a.poured_on)").fetchone()[0]
            if missing:
                return False
            first = dict(execute("SELECT pattern, MIN(poured_on) FROM pourback_day_adds GROUP BY pattern").fetchall())
            execute("""
                UPDATE day_totals SET inspected_castings = day_totals.inspected_castings + c.inspected_castings,
                    rejected = day_totals.rejected + c.rejected, shrinkage = day_totals.shrinkage + c.shrinkage,
                    zoned_shrinkage = day_totals.zoned_shrinkage + c.zoned_shrinkage
                FROM (
                    SELECT t.pattern, t.poured_on,
                        p.castings_per_mold * SUM(COALESCE(a.inspected_molds, 0)) OVER w AS inspected_castings,
                        SUM(COALESCE(a.rejected, 0)) OVER w AS rejected,
                        SUM(COALESCE(a.shrinkage, 0)) OVER w AS shrinkage,
                        SUM(COALESCE(a.zoned_shrinkage, 0)) OVER w AS zoned_shrinkage
                    FROM (SELECT pattern, MIN(poured_on) AS poured_on FROM pourback_day_adds GROUP BY pattern) f
                    JOIN day_totals t ON t.pattern = f.pattern AND t.poured_on >= f.poured_on
                    JOIN patterns p ON p.pattern = t.pattern
                    LEFT JOIN pourback_day_adds a ON a.pattern = t.pattern AND a.poured_on = t.poured_on
                    WINDOW w AS (PARTITION BY t.pattern ORDER BY t.poured_on)
                ) c
                WHERE day_totals.pattern = c.pattern AND day_totals.poured_on = c.poured_on""")
        finally:
            execute("DROP TABLE pourback_day_adds")
        _refresh_totals(execute, first, tables=("zone_totals",))
        return True

    TOTALS = ("lots", "castings", "inspected_castings", "rejected", "shrinkage", "zoned_shrinkage")

    # What totals_before and zone_shrinkage_before read per probe: (probe columns,
    # value columns, FROM clause), {q} standing for the probes' VALUES.
    _DAY_TOTALS_AT = (
        ("pattern", "day"),
        ("t.lots", "t.castings", "t.inspected_castings", "t.rejected", "t.shrinkage", "t.zoned_shrinkage"),
        "{q} LEFT JOIN day_totals t ON t.pattern = {q}.pattern AND t.poured_on = ("
        "SELECT MAX(x.poured_on) FROM day_totals x WHERE x.pattern = {q}.pattern AND x.poured_on < {q}.day)")

    _ZONE_TOTALS_AT = (
        ("pattern", "zone", "day"), ("t.shrinkage",),
        "{q} LEFT JOIN zone_totals t ON t.pattern = {q}.pattern AND t.zone = {q}.zone "
        "AND t.poured_on = (SELECT MAX(x.poured_on) FROM zone_totals x WHERE x.pattern = {q}.pattern "
        "AND x.zone = {q}.zone AND x.poured_on < {q}.day)")

    def totals_before(self, probes: Iterable[tuple[str, str]]) -> dict[tuple[str, str], tuple[int, ...]]:
        """Per (pattern, day) of ``probes`` (day an ISO date), the totals of the
        pattern's lots poured before that day (from ``day_totals``), in ``TOTALS``
        order: lots, castings poured, castings inspected (in lots holding a current
        record), castings rejected, shrinkage rejects, shrinkage rejects naming a zone.
        The totals over pour days a..b are ``totals_before(b + 1 day) - totals_before(a)``."""
        return self._at_probes((self._DAY_TOTALS_AT, probes))[0]

    def zone_shrinkage_before(self, probes: Iterable[tuple[str, str, str]]) -> dict[tuple[str, str, str], int]:
        """Per (pattern, zone, day) of ``probes``, the shrinkage rejects naming that
        zone on current records of the pattern's lots poured before that day (from
        ``zone_totals``)."""
        return {k: v[0] for k, v in self._at_probes((self._ZONE_TOTALS_AT, probes))[0].items()}

    def totals_and_zones_before(self, probes: Iterable[tuple[str, str]],
                                zone_probes: Iterable[tuple[str, str, str]]) -> tuple[dict, dict]:
        """:meth:`totals_before` of ``probes`` and :meth:`zone_shrinkage_before` of
        ``zone_probes``, read together (one statement per hundred probes of each)."""
        totals, zones = self._at_probes((self._DAY_TOTALS_AT, probes), (self._ZONE_TOTALS_AT, zone_probes))
        return totals, {k: v[0] for k, v in zones.items()}

    def _at_probes(self, *parts: tuple[tuple, Iterable[tuple]]) -> list[dict[tuple, tuple[int, ...]]]:
        """Per part ((names, columns, source), probes): ``WITH q (names) AS (VALUES
        probes) SELECT q.names, columns FROM source``, per probe its whole numbers
        (None and a probe without a row as 0). The parts are read side by side, a
        hundred probes of each a statement (one UNION ALL, columns padded with NULL)."""
        lists = [list(dict.fromkeys(probes)) for _, probes in parts]
        keys = max(len(names) for (names, _, _), _ in parts)
        values = max(len(cols) for (_, cols, _), _ in parts)
        outs: list[dict] = [{} for _ in parts]
        step = 100  # SQLite's cost per probe grows with a longer VALUES list beyond ~150
        for i in range(0, max(map(len, lists)), step):
            ctes, selects, params = [], [], []
            for k, (((names, cols, source), _), probes) in enumerate(zip(parts, lists, strict=False)):
                chunk = probes[i:i + step]
                if not chunk:
                    continue
                q = f"q{k}"
                row = "(" + ", ".join("?" * len(names)) + ")"
                ctes.append(f"{q} ({', '.join(names)}) AS (VALUES {', '.join([row] * len(chunk))})")
                params += [v for probe in chunk for v in probe]
                picked = [f"{q}.{n}" for n in names] + ["NULL"] * (keys - len(names)) + list(cols) \
                    + ["NULL"] * (values - len(cols))
                selects.append(f"SELECT {k}, {', '.join(picked)} FROM {source.replace('{q}', q)}")
            for r in self.conn.execute(f"WITH {', '.join(ctes)} {' UNION ALL '.join(selects)}", params):
                (names, cols, _), _ = parts[r[0]]
                got = r[1 + keys:1 + keys + len(cols)]
                if got[-1] is not None:  # else no row before the day: zeros
                    outs[r[0]][r[1:1 + len(names)]] = got
        return [{probe: out.get(probe, (0,) * len(cols)) for probe in probes}
                for out, probes, ((_, cols, _), _) in zip(outs, lists, parts, strict=False)]
