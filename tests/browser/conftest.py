"""Session fixtures for the real-browser tests: one JupyterLab server, one Chromium, one page."""

import os

import pytest

from tests.browser import harness


def pytest_collection_modifyitems(config, items):
    for item in items:
        if "tests/browser" in str(item.fspath):
            item.add_marker(pytest.mark.browser)


@pytest.fixture(scope="session")
def browser_page():
    if not harness.chromium_available():
        message = "Debian's Chromium is missing at /usr/bin/chromium: apt-get install chromium"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(message)
        pytest.skip(message)
    with harness.jupyter_lab() as (base, token, name), harness.chromium() as page:
        harness.open_board(page, base, token, name)
        yield page
