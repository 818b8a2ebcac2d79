"""The bookkeeping of imported files and of the keys their rows were stored under."""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable

from tracker.log.meta import MetaRows
from tracker.log.schema import TABLE_COLUMNS


class ImportBookkeeping(MetaRows):
    """Which files were imported, and which of a file's keys and codes the log holds already."""

    def imports_up_to(self, size: int) -> list[tuple[str, int, int, str]]:
        """(digest, bytes, last_row, segments) of the imported files of at most
        ``size`` bytes, shortest first: the files a new file may extend."""
        return self.conn.execute("SELECT digest, bytes, last_row, segments FROM imports WHERE bytes <= ? "
                                 "ORDER BY bytes, digest", (int(size),)).fetchall()

    def record_import(self, digest: str, file: str, size: int, last_row: int, segments: str,
                      by: str | None) -> None:
        """Remember an imported file (the first import of a content only)."""
        self.conn.execute("INSERT INTO imports (digest, file, bytes, last_row, segments, "
                          "imported_at, imported_by) VALUES (?, ?, ?, ?, ?, ?, ?) "
                          "ON CONFLICT (digest) DO NOTHING",
                          (digest, file, int(size), int(last_row), segments,
                           dt.datetime.now(dt.UTC).isoformat(timespec="seconds"), by))

    def imports_by_digest(self, digests: Iterable[str]) -> dict[str, tuple[str, str]]:
        """(file name, imported_at) of the imported files with the given digests."""
        out: dict[str, tuple[str, str]] = {}
        for where, params in self.dialect.in_list("digest", list(dict.fromkeys(digests))):
            q = f"SELECT digest, file, imported_at FROM imports WHERE {where}"
            out.update((r[0], (r[1], r[2])) for r in self.conn.execute(q, params).fetchall())
        return out

    def has_legacy_keys(self) -> bool:
        """Whether the log holds records imported before files were keyed by digest."""
        return self.get_meta("legacy_keys") == "1"

    def legacy_keys_present(self, keys: Iterable[str], file: str) -> set:
        """Which of ``keys`` (old content-and-occurrence keys) a record imported
        from a file named ``file`` holds."""
        found: set[str] = set()
        for where, params in self.dialect.in_list("record_key", list(dict.fromkeys(keys))):
            q = f"SELECT record_key FROM inspections WHERE {where} AND source = ?"
            found.update(r[0] for r in self.conn.execute(q, [*params, file]).fetchall())
        return found

    def records_by_key(self, keys: Iterable[str]) -> dict[str, tuple]:
        """The stored content (lot .. notes, as TABLE_COLUMNS orders them) of the
        records with the given keys."""
        cols = TABLE_COLUMNS["inspections"][1:13]
        out: dict[str, tuple] = {}
        for where, params in self.dialect.in_list("record_key", list(dict.fromkeys(keys))):
            q = f"SELECT record_key, {', '.join(cols)} FROM inspections WHERE {where}"
            out.update((r[0], tuple(r[1:])) for r in self.conn.execute(q, params).fetchall())
        return out

    def codes_alike(self, name: str, codes: Iterable[str]) -> dict[str, list[str]]:
        """Stored codes of ``name`` (patterns, sleeves, lots) equal to one of
        ``codes`` when ASCII case is ignored, by lower-cased code."""
        column = {"patterns": "pattern", "sleeves": "sleeve", "lots": "lot"}[name]
        low = list(dict.fromkeys(c.lower() for c in codes))
        out: dict[str, list[str]] = {}
        for where, params in self.dialect.in_list(f'lower("{column}")', low):
            q = f'SELECT "{column}" FROM "{name}" WHERE {where}'
            for (code,) in self.conn.execute(q, params).fetchall():
                out.setdefault(code.lower(), []).append(code)
        return out
