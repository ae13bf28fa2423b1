"""Session fixtures for the real-browser tests: one JupyterLab server, one Chromium, one page."""

import os

import pytest

from tests.browser import harness


def pytest_collection_modifyitems(config, items):
    for item in items:
        if "tests/browser" in str(item.fspath):
            item.add_marker(pytest.mark.browser)


@pytest.fixture(scope="session")
def lab_and_page():
    """(base URL, token, demo notebook name, page) with nothing opened yet."""
    if not harness.chromium_available():
        message = "Debian's Chromium is missing at /usr/bin/chromium: apt-get install chromium"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(message)
        pytest.skip(message)
    with (
        harness.jupyter_lab() as (base, token, name),
        harness.chromium(height=1400) as page,
    ):  # tall enough for a whole board in the screenshots
        yield base, token, name, page


@pytest.fixture
def browser_page(lab_and_page):
    """The page with the loop-design board of notebooks/loop_board_demo.ipynb running."""
    base, token, name, page = lab_and_page
    harness.shutdown_kernels(base, token)
    harness.open_board(page, base, token, name)
    return page


@pytest.fixture
def explore_page(lab_and_page):
    """The page with the model-exploration board running."""
    base, token, _name, page = lab_and_page
    harness.shutdown_kernels(base, token)
    harness.open_board(page, base, token, harness.EXPLORE_NAME)
    return page
