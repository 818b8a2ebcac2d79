"""PostgreSQL connections for the log: psycopg loaded on demand, connections
kept idle for a moment after a log is closed, and the schemas a log may live
in (the tests and the scale benchmark make and drop their own).

A leaf of :mod:`tracker.log.dialect`, which alone opens connections through it.
"""

from __future__ import annotations

import os
import re
import threading
import time
import urllib.parse

from tracker.errors import PourbackError


class _Values(list):
    """A list sent to PostgreSQL as one array parameter in binary form (psycopg writes
    a text array value by value in Python, and the server parses it: slower)."""


def _psycopg():
    try:
        import psycopg
    except ImportError:  # pragma: no cover - psycopg is a dependency
        raise PourbackError("a postgresql:// log needs the psycopg package: "
                            "pip install 'psycopg[binary]'") from None
    return psycopg


# Idle connections kept for a moment after a log is closed, newest last: (url, when, conn).
# Opening one costs a new server process and its sign-in (some 10 ms), paid by every
# dashboard load (its cache key, data_version, and a Store on a miss) without them.
IDLE_KEEP = 4
IDLE_KEEP_S = 30.0
_idle: list = []
_idle_lock = threading.Lock()


def _forget_idle_in_child() -> None:
    # A forked child shares its parent's sockets: using (or closing, which signs the
    # server session off) a connection kept idle by the parent would break the
    # parent's. The child forgets them unclosed and starts with a fresh lock.
    global _idle_lock
    _idle.clear()
    _idle_lock = threading.Lock()


os.register_at_fork(after_in_child=_forget_idle_in_child)


def _connect(url: str, fresh: bool = False):
    """An autocommit connection to ``url``: one left idle in the last
    ``IDLE_KEEP_S`` seconds by :func:`_release` (unless ``fresh``), else a new one."""
    if fresh:
        return _psycopg().connect(url, autocommit=True, application_name="pourback")
    now = time.monotonic()
    stale, found = [], None
    with _idle_lock:
        for k in range(len(_idle) - 1, -1, -1):
            u, at, conn = _idle[k]
            if now - at > IDLE_KEEP_S or conn.closed or conn.broken:
                stale.append(_idle.pop(k)[2])
            elif found is None and u == url:
                found = _idle.pop(k)[2]
    for conn in stale:
        conn.close()
    return found or _psycopg().connect(url, autocommit=True, application_name="pourback")


def _release(url: str, conn) -> None:
    """Keep ``conn`` idle for :func:`_connect` when it is sound and outside a
    transaction (the oldest beyond ``IDLE_KEEP`` is closed); else close it."""
    pq = _psycopg().pq
    if conn.closed or conn.broken or conn.info.transaction_status != pq.TransactionStatus.IDLE:
        conn.close()
        return
    with _idle_lock:
        _idle.append((url, time.monotonic(), conn))
        extra = [_idle.pop(0)[2] for _ in range(len(_idle) - IDLE_KEEP)]
    for c in extra:
        c.close()



def with_schema(url: str, schema: str) -> str:
    """``url`` with its search_path set to ``schema`` (libpq's ``options`` parameter)."""
    parts = urllib.parse.urlsplit(url)
    query = [(k, v) for k, v in urllib.parse.parse_qsl(parts.query) if k != "options"]
    query.append(("options", f"-csearch_path={schema}"))
    return urllib.parse.urlunsplit(parts._replace(query=urllib.parse.urlencode(query)))


def new_schema(url: str, schema: str) -> str:
    """Create ``schema`` afresh (dropping one of that name) on the server at ``url``;
    the URL of a log in it."""
    if not re.fullmatch(r"[a-z_][a-z0-9_]{0,62}", schema):
        raise PourbackError(f"schema: got {schema!r}; use lower-case letters, digits and '_'")
    with _psycopg().connect(url, autocommit=True) as conn:
        conn.execute(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE')
        conn.execute(f'CREATE SCHEMA "{schema}"')
    return with_schema(url, schema)


def drop_schema(url: str, schema: str) -> None:
    """Drop ``schema`` and everything in it, if it exists."""
    if not re.fullmatch(r"[a-z_][a-z0-9_]{0,62}", schema):
        raise PourbackError(f"schema: got {schema!r}; use lower-case letters, digits and '_'")
    with _psycopg().connect(url, autocommit=True) as conn:
        conn.execute(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE')
