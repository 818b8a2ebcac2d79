"""Patterns, zones, sleeves, revisions and risers: the design side of the log."""

from __future__ import annotations

from collections.abc import Iterable

import pandas as pd

from tracker.errors import NotFound
from tracker.log.core import StoreCore


class Designs(StoreCore):
    """Reads of the patterns, their zones, the sleeve catalogue, the riser revisions and their risers."""

    def patterns_info(self, codes: Iterable[str] | None = None) -> dict[str, dict]:
        sql = ("SELECT p.pattern, p.alloy, p.castings_per_mold, p.casting_weight_kg "
               "FROM patterns p")
        rows = self.conn.execute(sql).fetchall() if codes is None else [
            r for r in self.conn.execute(sql) if r[0] in set(codes)]
        return {r[0]: {"alloy": r[1], "castings_per_mold": r[2], "casting_weight_kg": r[3]}
                for r in rows}

    def zone_levels(self, pattern: str | None = None) -> dict[tuple[str, str], int | None]:
        q = "SELECT pattern, zone, required_xray_level FROM zones"
        params: tuple = ()
        if pattern is not None:
            q += " WHERE pattern = ?"
            params = (pattern,)
        return {(r[0], r[1]): r[2] for r in self.conn.execute(q, params)}

    def pattern(self, code: str) -> dict:
        row = self._row("SELECT * FROM patterns WHERE pattern = ?", (code,))
        if row is None:
            raise NotFound("pattern", code, "see `pourback patterns` for the patterns in the log")
        return row

    def zone(self, pattern: str, zone: str) -> dict:
        """One zone with its pattern's alloy and mould (raises NotFound naming the zones)."""
        self.pattern(pattern)
        row = self._row("SELECT z.*, p.alloy, p.mould FROM zones z JOIN patterns p "
                        "ON p.pattern = z.pattern WHERE z.pattern = ? AND z.zone = ?", (pattern, zone))
        if row is None:
            names = [r[0] for r in self.conn.execute(
                "SELECT zone FROM zones WHERE pattern = ? ORDER BY zone", (pattern,))]
            raise NotFound("zone", zone, f"pattern {pattern} has the zones {', '.join(names) or '(none)'}")
        return row

    def zones_frame(self, pattern: str) -> pd.DataFrame:
        """The zones of one pattern, as stored, by zone code."""
        return self._frame("SELECT zone, volume_cm3, cooling_area_cm2, thickness_mm, width_mm, length_mm, "
                           "required_xray_level, joined_faces, x_mm, y_mm, z_mm FROM zones WHERE pattern = ? "
                           "ORDER BY zone", (pattern,))

    def sleeve(self, code: str) -> dict:
        """One sleeve of the catalogue (raises NotFound naming the catalogue)."""
        row = self._row("SELECT * FROM sleeves WHERE sleeve = ?", (code,))
        if row is None:
            names = [r[0] for r in self.conn.execute("SELECT sleeve FROM sleeves ORDER BY sleeve")]
            raise NotFound("sleeve", code, "the log's catalogue holds " + (", ".join(names) or "no sleeve; "
                                                                            "import sleeves.csv"))
        return row

    def risers_frame(self, pattern: str | None = None, revision: str | None = None) -> pd.DataFrame:
        """Every riser of every revision joined with its zone, sleeve, pattern and alloy."""
        where, params = [], []
        if pattern is not None:
            where.append("r.pattern = ?")
            params.append(pattern)
        if revision is not None:
            where.append("r.revision = ?")
            params.append(revision)
        q = ("SELECT r.pattern, r.revision, v.effective_from, r.riser, r.zone, r.placement, r.top, "
             "r.diameter_mm, r.height_mm, r.sleeve, r.neck_diameter_mm, r.x_mm, r.y_mm, r.z_mm, r.axis, "
             "s.kind AS sleeve_kind, s.modulus_factor AS sleeve_factor, "
             "s.feeding_efficiency AS sleeve_efficiency, s.unit_cost AS sleeve_unit_cost, "
             "z.volume_cm3, z.cooling_area_cm2, z.thickness_mm, z.length_mm, z.required_xray_level, "
             "z.width_mm, z.joined_faces, "
             "p.mould, p.alloy, p.casting_weight_kg, p.castings_per_mold, a.shrinkage, a.bare_efficiency, "
             "a.density_kg_dm3, a.caine_a, a.caine_b, a.caine_c, "
             "(SELECT COUNT(*) FROM risers r2 WHERE r2.pattern = r.pattern "
             " AND r2.revision = r.revision AND r2.zone = r.zone) AS risers_on_zone "
             "FROM risers r JOIN revisions v ON v.pattern = r.pattern AND v.revision = r.revision "
             "JOIN zones z ON z.pattern = r.pattern AND z.zone = r.zone "
             "JOIN patterns p ON p.pattern = r.pattern JOIN alloys a ON a.alloy = p.alloy "
             "LEFT JOIN sleeves s ON s.sleeve = r.sleeve"
             + (" WHERE " + " AND ".join(where) if where else "")
             + " ORDER BY r.pattern, v.effective_from, r.revision, r.riser")
        return self._frame(q, params)

    def revisions_frame(self, pattern: str | None = None) -> pd.DataFrame:
        q = "SELECT pattern, revision, effective_from FROM revisions"
        params: tuple = ()
        if pattern is not None:
            q += " WHERE pattern = ?"
            params = (pattern,)
        return self._frame(q + " ORDER BY pattern, effective_from, revision", params)

    def riser_designs(self, patterns: Iterable[str]) -> list[tuple]:
        """The stored risers (every revision) of ``patterns``, without joins, as rows
        (pattern, revision, riser, zone, placement, top, diameter_mm, height_mm, sleeve,
        neck_diameter_mm) in that order."""
        codes = list(dict.fromkeys(patterns))
        rows: list[tuple] = []
        for chunk in (codes[i:i + 900] for i in range(0, len(codes), 900)):
            rows += self.conn.execute(
                "SELECT pattern, revision, riser, zone, placement, top, diameter_mm, height_mm, sleeve, "
                f"neck_diameter_mm FROM risers WHERE pattern IN ({', '.join('?' * len(chunk))}) "
                "ORDER BY pattern, revision, riser", chunk).fetchall()
        return rows

    def revision_steps(self, start: str, end: str, *, columns: bool = False) -> pd.DataFrame | dict[str, list]:
        """Revisions taking effect from ``start`` to ``end`` (ISO strings, inclusive),
        each with the revision before it (``previous``, ``previous_from``) and the
        date the next one takes effect (``next_from``); None where there is none.
        ``columns``: a dict of column lists instead of a DataFrame."""
        # The whole table in order, neighbours by position: a pattern's revisions are
        # ordered by (effective_from, revision), sorted here as text (byte order, as
        # SQLite and the C collation compare). A few thousand short rows: a plain read costs less than a
        # search per revision (and far less than a window function).
        where, params = self._plant_filter("pattern")
        rows = [(p, r, e) for p, e, r in sorted(self.conn.execute(
            "SELECT pattern, effective_from, revision FROM revisions"
            + "".join((" AND " if i else " WHERE ") + w for i, w in enumerate(where)), params).fetchall())]
        names = ("pattern", "revision", "effective_from", "previous", "previous_from", "next_from")
        start, end = str(start), str(end)
        none = (None, None, None)
        before = [none, *rows[:-1]]
        after = [*rows[1:], none]
        steps = [(p, r, e, b[1] if b[0] == p else None, b[2] if b[0] == p else None, a[2] if a[0] == p else None)
                 for (p, r, e), b, a in zip(rows, before, after, strict=False) if start <= e <= end]
        out = ({k: list(v) for k, v in zip(names, zip(*steps, strict=False), strict=False)} if steps
               else {k: [] for k in names})
        return out if columns else pd.DataFrame(out, columns=list(names))
