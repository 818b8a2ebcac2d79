"""Which file a row came from: a file's digest, and the imported file it extends."""

from __future__ import annotations

import hashlib
import json
import pathlib
import uuid
from dataclasses import dataclass

import numpy as np

from tracker.log.ingest.reading.encoding import BLOCK_BYTES
from tracker.log.store import Store

DIGEST_CHARS = 32  # of the SHA-256 hex digest: 128 bits


@dataclass
class FileIdentity:
    """A file's content digest and the segments its rows are keyed by.

    ``segments`` is a list of ``[digest, last_row]``: row r takes the digest of
    the first segment whose last_row is at least r (None: no end). A file that
    extends an imported one (the same bytes, then more rows) keeps that file's
    segments for those rows, so re-importing a file that grew adds only the rows
    after them; any other file is a segment of its own.
    """

    digest: str
    size: int
    segments: list

    def as_new(self) -> FileIdentity:
        """The same file keyed as one segment of its own, under a digest no import
        holds (``--new-records``): its rows are new records even where the log holds
        rows of the same bytes. A later import of this file matches it (the import
        is recorded with these segments unless its bytes were imported before)."""
        nonce = hashlib.sha256(f"{self.digest}:{uuid.uuid4().hex}".encode()).hexdigest()[:DIGEST_CHARS]
        return FileIdentity(self.digest, self.size, [[nonce, None]])

    def keys(self, rows: np.ndarray) -> list[str]:
        out = np.empty(len(rows), dtype=object)
        todo = np.ones(len(rows), dtype=bool)
        for digest, last in self.segments:
            here = todo if last is None else todo & (rows <= last)
            out[here] = [f"f{digest}:{int(r)}" for r in rows[here]]
            todo &= ~here
        return out.tolist()


def file_identity(store: Store, path: pathlib.Path) -> FileIdentity:
    """Read ``path`` once: its digest, and the imported file it extends if any."""
    size = path.stat().st_size
    known = store.imports_up_to(size)
    by_size: dict[int, dict] = {}
    for digest, nbytes, last_row, segments in known:
        by_size.setdefault(nbytes, {})[digest] = (last_row, segments)
    bounds = sorted(b for b in by_size if b > 0)
    h = hashlib.sha256()
    best = None  # (bytes, last_row, segments) of the longest imported file this one starts with
    done = 0
    last_byte = b""
    with path.open("rb") as fh:
        for bound in bounds + [None]:
            while bound is None or done < bound:
                want = BLOCK_BYTES if bound is None else min(BLOCK_BYTES, bound - done)
                block = fh.read(want)
                if not block:
                    break
                h.update(block)
                done += len(block)
                last_byte = block[-1:]
            if bound is None or done < bound:
                break
            hit = by_size[bound].get(h.hexdigest()[:DIGEST_CHARS])
            if hit is not None and bound < size and last_byte not in (b"\n", b"\r"):
                # A prefix counts only where a row ends: else its last row went on.
                following = fh.read(1)
                fh.seek(done)
                if following not in (b"\n", b"\r"):
                    hit = None
            if hit is not None:
                best = (bound, *hit)
    digest = h.hexdigest()[:DIGEST_CHARS]
    if best is None:
        return FileIdentity(digest, size, [[digest, None]])
    nbytes, last_row, segments = best
    segments = json.loads(segments)
    if nbytes == size:
        return FileIdentity(digest, size, segments)
    segments[-1][1] = last_row
    return FileIdentity(digest, size, segments + [[digest, None]])
