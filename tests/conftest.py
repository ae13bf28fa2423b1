"""Shared fixtures: the invented demo scenarios; Hypothesis settings for CI."""

import os

import pytest
from hypothesis import settings

from drivekit import demo

# In CI the property tests draw the same examples every run (a failure there is then reproducible);
# on a developer's machine they explore new examples each run.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI") == "true":
    settings.load_profile("ci")


@pytest.fixture
def pump_train():
    """The invented Marrow Creek P-201 raw-water flow loop plant."""
    return demo.raw_water_pump()


@pytest.fixture
def conveyor_train():
    """The invented Tallow Hill CV-3 conveyor with a compliant gearbox."""
    return demo.quarry_conveyor()


def pytest_collection_modifyitems(config, items):
    """Run the browser tests last, those under tests/browser at the very end.

    Playwright's sync API keeps an event loop running in the main thread while a
    browser session is open; tests that use asyncio, and other Playwright sessions,
    must run before the shared session of tests/browser starts.
    """

    def order(item):
        browser = item.get_closest_marker("browser") is not None
        shared_session = "tests/browser/" in item.nodeid.replace("\\", "/")
        return (browser or shared_session, shared_session)

    items.sort(key=order)
