"""Helpers the tests share: paths, the log factory, and small builders.

Fixtures live in conftest.py files; this package holds the plain names and
classes they (and the tests) use, so that no test imports another test file.
"""

import os
import pathlib
import urllib.parse
import uuid

import pytest

REPO = pathlib.Path(__file__).resolve().parents[2]
GOOD = REPO / "tests" / "data" / "good"
SAMPLE = REPO / "sample_data"
APP = REPO / "dashboard" / "app.py"
BACKENDS = ["sqlite", "postgresql"]


def pg_server() -> str:
    """The test server's URL ($POURBACK_TEST_PG); skips (or, under
    POURBACK_REQUIRE_PG=1, fails) the test when there is none."""
    url = os.environ.get("POURBACK_TEST_PG", "").strip()
    if not url:
        if os.environ.get("POURBACK_REQUIRE_PG") == "1":
            pytest.fail("POURBACK_TEST_PG is not set and POURBACK_REQUIRE_PG=1: the PostgreSQL tests "
                        "need a server (.ci/pg-server start DIR PORT prints its URL)")
        pytest.skip("set POURBACK_TEST_PG to a postgresql:// URL to run the PostgreSQL tests")
    return url


def _with_schema(url: str, schema: str) -> str:
    parts = urllib.parse.urlsplit(url)
    query = urllib.parse.parse_qsl(parts.query)
    query.append(("options", f"-csearch_path={schema}"))
    return urllib.parse.urlunsplit(parts._replace(query=urllib.parse.urlencode(query)))


class LogFactory:
    """Fresh, empty log targets on one backend; PostgreSQL schemas are dropped at the end."""

    def __init__(self, backend: str, folder: pathlib.Path):
        self.backend = backend
        self.folder = folder
        self.schemas: list[str] = []
        self.server = pg_server() if backend == "postgresql" else None

    def new(self, name: str = "log") -> str:
        if self.backend == "sqlite":
            return str(self.folder / f"{name}-{uuid.uuid4().hex[:6]}.db")
        import psycopg

        schema = f"t_{name.replace('-', '_')}_{uuid.uuid4().hex[:10]}"
        with psycopg.connect(self.server, autocommit=True) as conn:
            conn.execute(f'CREATE SCHEMA "{schema}"')
        self.schemas.append(schema)
        return _with_schema(self.server, schema)

    def copy(self, source: str, name: str = "copy") -> str:
        """A private copy of the log at ``source`` (for a test that writes)."""
        from tracker.review.copycheck import copy_log

        dest = self.new(name)
        copy_log(source, dest)
        return dest

    def close(self) -> None:
        if not self.schemas:
            return
        import psycopg

        with psycopg.connect(self.server, autocommit=True) as conn:
            for schema in self.schemas:
                conn.execute(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE')


def built_demo_file(tmp_path_factory) -> pathlib.Path:
    """The demo log of `pourback demo` in an SQLite file, built once for the whole run:
    under pytest-xdist the first worker builds it in the run's shared temporary folder
    (a lock keeps the others waiting), alone it is built in this session's own one.
    Never open it: copy it (the fixtures ``app_demo_file`` and ``app_demo_db`` do)."""
    import fcntl

    from tracker.cli.cmd_app import build_demo

    base = tmp_path_factory.getbasetemp()
    if os.environ.get("PYTEST_XDIST_WORKER"):
        base = base.parent  # the run's folder, shared by its workers (and only by them)
    path = base / "built-demo" / "pourback-demo.db"
    path.parent.mkdir(exist_ok=True)
    with open(path.parent / "lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        if not path.exists():
            build_demo(path)
    return path
