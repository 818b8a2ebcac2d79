"""The real-browser fixtures: the system's Chromium through playwright, and
`pourback dashboard` served on a copy of the demo log."""

import pathlib

import pytest

from tests.support.browser import CHROMIUM, CHROMIUM_ARGS, missing, served_copy


@pytest.fixture(scope="module")
def sync_playwright():
    if not pathlib.Path(CHROMIUM).exists():
        missing(f"{CHROMIUM} is missing (apt-get install chromium)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        missing("the playwright package is missing (pip install -e '.[test]')")
    return sync_playwright


@pytest.fixture(scope="module")
def browser(sync_playwright):
    """One headless Chromium for the module's tests."""
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()


@pytest.fixture(scope="module")
def server(app_demo_file, tmp_path_factory):
    """`pourback dashboard` on a copy of the demo log, on a free port; stopped at the end."""
    with served_copy(app_demo_file, tmp_path_factory.mktemp("browser")) as s:
        yield s
