import pytest
from click.testing import CliRunner


@pytest.fixture
def runner():
    return CliRunner()


import pathlib

REPO = pathlib.Path(__file__).resolve().parent.parent
GOOD = REPO / "tests" / "data" / "good"
SAMPLE = REPO / "sample_data"


@pytest.fixture
def mem_store():
    """An empty in-memory log, closed after the test."""
    from tracker.store import Store

    s = Store(":memory:")
    yield s
    s.close()


@pytest.fixture
def file_store(tmp_path):
    """An empty log in a file under tmp_path, closed after the test."""
    from tracker.store import Store

    s = Store(tmp_path / "log.db")
    yield s
    s.close()


@pytest.fixture
def good_store(mem_store):
    from tracker.ingest import import_dir

    import_dir(mem_store, GOOD)
    return mem_store


@pytest.fixture(scope="session")
def demo_db(tmp_path_factory):
    """The demo log built once per session (a file; copy it before writing)."""
    from tracker.ingest import import_dir
    from tracker.store import Store

    path = tmp_path_factory.mktemp("demo") / "demo.db"
    with Store(path) as s:
        import_dir(s, SAMPLE)
    return path


@pytest.fixture
def demo_store(demo_db):
    """The demo log opened read-mostly (tests must not write to it)."""
    from tracker.store import Store

    s = Store(demo_db)
    yield s
    s.close()


# --- dashboard fixtures ---------------------------------------------------------------

@pytest.fixture(scope="session")
def app_demo_db(tmp_path_factory):
    """The demo log as `pourback demo` builds it (model fitted, marked as a demo), once
    per session. Read only: copy it with ``app_db`` before a test writes."""
    from tracker.cli.cmd_app import build_demo

    path = tmp_path_factory.mktemp("app-demo") / "pourback-demo.db"
    build_demo(path)
    return path


@pytest.fixture
def app_db(app_demo_db, tmp_path):
    """A private copy of the demo log for a test that writes."""
    import shutil

    dest = tmp_path / "demo-copy.db"
    shutil.copyfile(app_demo_db, dest)
    return dest


@pytest.fixture
def empty_db(tmp_path):
    """A fresh, empty log file."""
    from tracker.store import Store

    path = tmp_path / "empty.db"
    Store(path).close()
    return path
