"""Shared fixtures. Logs come on both backends through one parametrised fixture,
``backend``: "sqlite" (a file under tmp_path) and "postgresql" (a fresh schema on
the server in $POURBACK_TEST_PG). Without that variable the PostgreSQL cases are
skipped, unless POURBACK_REQUIRE_PG=1 (CI sets it): then they fail."""

import os
import pathlib
import urllib.parse
import uuid

import pytest
from click.testing import CliRunner

REPO = pathlib.Path(__file__).resolve().parent.parent
GOOD = REPO / "tests" / "data" / "good"
SAMPLE = REPO / "sample_data"
BACKENDS = ["sqlite", "postgresql"]


@pytest.fixture
def runner():
    return CliRunner()


# --- backends -----------------------------------------------------------------------------

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


@pytest.fixture(params=BACKENDS)
def backend(request):
    """The backend under test: each test that uses a log runs on both."""
    return request.param


@pytest.fixture
def logs(backend, tmp_path):
    """Fresh, empty logs on the backend under test: ``logs.new()`` gives a target."""
    factory = LogFactory(backend, tmp_path)
    yield factory
    factory.close()


@pytest.fixture(scope="session", params=BACKENDS)
def session_logs(request, tmp_path_factory):
    """Like ``logs``, but kept for the whole session (built once per backend)."""
    factory = LogFactory(request.param, tmp_path_factory.mktemp(f"logs-{request.param}"))
    yield factory
    factory.close()


@pytest.fixture
def mem_store(logs):
    """An empty log on the backend under test, closed after the test."""
    from tracker.log.store import Store

    s = Store(logs.new())
    yield s
    s.close()


@pytest.fixture
def file_store(logs):
    """An empty log (a file, or a schema on the server) on the backend under test."""
    from tracker.log.store import Store

    s = Store(logs.new())
    yield s
    s.close()


@pytest.fixture
def good_store(mem_store):
    from tracker.log.ingest import import_dir

    import_dir(mem_store, GOOD)
    return mem_store


@pytest.fixture(scope="session")
def demo_db(session_logs):
    """The demo log built once per session and backend (copy it before writing:
    ``session_logs.copy(demo_db)``)."""
    from tracker.log.ingest import import_dir
    from tracker.log.store import Store

    path = session_logs.new("demo")
    with Store(path) as s:
        import_dir(s, SAMPLE)
    return path


@pytest.fixture
def demo_store(demo_db):
    """The demo log opened read-mostly (tests must not write to it)."""
    from tracker.log.store import Store

    s = Store(demo_db)
    yield s
    s.close()


# --- dashboard fixtures ---------------------------------------------------------------

@pytest.fixture(scope="session")
def app_demo_db(session_logs):
    """The demo log as `pourback demo` builds it (model fitted, marked as a demo), once
    per session and backend. Read only: copy it with ``app_db`` before a test writes."""
    from tracker.cli.cmd_app import build_demo

    target = session_logs.new("app_demo")
    build_demo(target if session_logs.backend == "postgresql" else pathlib.Path(target))
    return target


@pytest.fixture(scope="session")
def app_demo_file(tmp_path_factory):
    """The demo log of `pourback demo` in an SQLite file (for the real-browser test)."""
    from tracker.cli.cmd_app import build_demo

    path = tmp_path_factory.mktemp("app-demo") / "pourback-demo.db"
    build_demo(path)
    return path


@pytest.fixture
def app_db(app_demo_db, session_logs):
    """A private copy of the demo log for a test that writes."""
    return session_logs.copy(app_demo_db, "demo_copy")


@pytest.fixture
def empty_db(logs):
    """A fresh, empty log."""
    from tracker.log.store import Store

    path = logs.new("empty")
    Store(path).close()
    return path
