"""Shared fixtures. Logs come on both backends through one parametrised fixture,
``backend``: "sqlite" (a file under tmp_path) and "postgresql" (a fresh schema on
the server in $POURBACK_TEST_PG). Without that variable the PostgreSQL cases are
skipped, unless POURBACK_REQUIRE_PG=1 (CI sets it): then they fail."""

import os
import pathlib
import shutil
import subprocess

import pytest
from click.testing import CliRunner

from tests.support import BACKENDS, GOOD, SAMPLE, LogFactory, built_demo_file
from tests.support.hostile import TODAY as HOSTILE_TODAY


@pytest.fixture
def runner():
    return CliRunner()


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


@pytest.hookimpl(trylast=True)
def pytest_collection_modifyitems(items):
    """Files holding a browser or a slow test first (each file's tests in their order): under
    pytest-xdist (--dist loadfile, --no-loadscope-reorder) the long files start at once and
    the short ones fill the processes up at the end."""
    heavy = {item.path for item in items if item.get_closest_marker("browser") or item.get_closest_marker("slow")}
    items.sort(key=lambda item: item.path not in heavy)


@pytest.fixture(scope="session")
def _kept():
    """What the per-backend session fixtures built, by (what, backend), until the session
    ends. pytest tears a parametrised session fixture down whenever a test asks for its
    other backend (the tests of a file take turns), so they keep their logs here and
    build each one once."""
    kept: dict = {}
    yield kept
    for value in kept.values():
        if isinstance(value, LogFactory):
            value.close()


@pytest.fixture(scope="session", params=BACKENDS)
def session_logs(request, tmp_path_factory, _kept):
    """Like ``logs``, but kept for the whole session (built once per backend)."""
    key = ("logs", request.param)
    if key not in _kept:
        _kept[key] = LogFactory(request.param, tmp_path_factory.mktemp(f"logs-{request.param}"))
    return _kept[key]


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
def demo_db(session_logs, _kept):
    """The demo log built once per session and backend (copy it before writing:
    ``session_logs.copy(demo_db)``)."""
    from tracker.log.ingest import import_dir
    from tracker.log.store import Store

    key = ("demo", session_logs.backend)
    if key not in _kept:
        path = session_logs.new("demo")
        with Store(path) as s:
            import_dir(s, SAMPLE)
        _kept[key] = path
    return _kept[key]


@pytest.fixture
def demo_store(demo_db):
    """The demo log opened read-mostly (tests must not write to it)."""
    from tracker.log.store import Store

    s = Store(demo_db)
    yield s
    s.close()


# --- dashboard fixtures ---------------------------------------------------------------

@pytest.fixture(scope="session")
def app_demo_db(session_logs, tmp_path_factory, _kept):
    """The demo log as `pourback demo` builds it (model fitted, marked as a demo), once
    per session and backend. Read only: copy it with ``app_db`` before a test writes."""
    from tracker.cli.cmd_app import build_demo

    key = ("app_demo", session_logs.backend)
    if key not in _kept:
        target = session_logs.new("app_demo")
        if session_logs.backend == "postgresql":
            build_demo(target)
        else:  # the file `pourback demo` builds: a private copy of the one built for the run
            shutil.copyfile(built_demo_file(tmp_path_factory), target)
        _kept[key] = target
    return _kept[key]


@pytest.fixture(scope="session")
def app_demo_file(tmp_path_factory):
    """The demo log of `pourback demo` in an SQLite file (for the real-browser test),
    this worker's own copy."""
    path = tmp_path_factory.mktemp("app-demo") / "pourback-demo.db"
    shutil.copyfile(built_demo_file(tmp_path_factory), path)
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


# --- hostile-input fixtures -----------------------------------------------------------

@pytest.fixture
def db(tmp_path):
    """The good data's log in an SQLite file, imported as on 2026-06-01 (the hostile-input tests)."""
    from tracker.log.ingest import import_dir
    from tracker.log.store import Store

    path = tmp_path / "log.db"
    with Store(path) as s:
        import_dir(s, GOOD, today=HOSTILE_TODAY)
    return path


@pytest.fixture
def read_only():
    """Make a file read-only, also for root (whom file modes do not stop): the
    immutable attribute (chattr +i) where modes are not enough."""
    made = []

    def make(path):
        path = pathlib.Path(path)
        os.chmod(path, 0o444)
        made.append(path)
        if os.access(path, os.W_OK):
            if shutil.which("chattr") is None or subprocess.run(["chattr", "+i", str(path)],
                                                                 capture_output=True).returncode:
                pytest.skip("cannot make a file read-only here")
        return path

    yield make
    for p in made:
        if shutil.which("chattr"):
            subprocess.run(["chattr", "-i", str(p)], capture_output=True)
        os.chmod(p, 0o644)


# --- the review pack ---------------------------------------------------------------------

@pytest.fixture(scope="session")
def demo_pack(app_demo_file, tmp_path_factory):
    """The printable review pack of the demo log's default review, with one open and one
    closed action: {"db", "review", "pack" (tracker.views.pack.build_pack), "html", "md"}.
    Built once (it runs the suggestions, their thermal checks and draws every chart)."""
    from tracker.log.actions import add_action, close_action
    from tracker.log.store import Store
    from tracker.review.weekly import weekly_review
    from tracker.views.pack import build_pack, render_pack

    db = tmp_path_factory.mktemp("pack") / "pourback-demo.db"
    shutil.copyfile(app_demo_file, db)
    with Store(db) as s:
        add_action(s, "P-1017", "trial pour with <b>sleeve</b> on R3 | 5 molds", "J. Park", "2026-12-11", by="QA lead")
        closed = add_action(s, "P-1036", "recheck the boss zone", "M. Lopez", "2026-11-30", by="QA lead")
        close_action(s, closed["id"], "done", by="M. Lopez")
        review = weekly_review(s)
        pack = build_pack(s, review)
    return {"db": db, "review": review, "pack": pack, "html": render_pack(pack, "html"),
            "md": render_pack(pack, "md")}
