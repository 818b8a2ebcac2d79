"""The ``castings`` table: a pattern's casting model (STL) for the 3-D solve; the shrinkage
rejects per zone it shows on the model."""

from __future__ import annotations

import datetime as dt

from tracker.log import accounts as auth
from tracker.log.core import StoreCore


class CastingRows(StoreCore):
    """One STL model per pattern, kept as the file came, with its unit and SHA-256."""

    def save_casting(self, pattern: str, file: str, units: str, digest: str, volume_cm3: float,
                     stl: bytes) -> None:
        """Store (or replace) ``pattern``'s model; the pattern must be in the log."""
        auth.require(self, "design")
        with self.write():
            self.conn.execute("DELETE FROM castings WHERE pattern = ?", (pattern,))
            self.conn.execute("INSERT INTO castings (pattern, file, units, digest, volume_cm3, stored_at, stl) "
                              "VALUES (?, ?, ?, ?, ?, ?, ?)",
                              (pattern, file, units, digest, float(volume_cm3),
                               dt.datetime.now(dt.UTC).isoformat(timespec="seconds"), stl))

    def casting(self, pattern: str) -> dict | None:
        """``pattern``'s stored model (``stl`` as bytes) or None."""
        row = self._row("SELECT pattern, file, units, digest, volume_cm3, stored_at, stl FROM castings "
                        "WHERE pattern = ?", (pattern,))
        if row is not None:
            row["stl"] = bytes(row["stl"])
        return row

    def shrinkage_by_zone(self, pattern: str) -> dict[str, int]:
        """Shrinkage rejects logged against each zone of ``pattern`` (current records, every pour
        day; from the running totals)."""
        return {str(z): int(n) for z, n in self.conn.execute(
            "SELECT zone, SUM(shrinkage) FROM zone_totals WHERE pattern = ? GROUP BY zone", (pattern,))}
