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
