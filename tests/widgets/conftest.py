"""Fixtures for the headless widget tests: the invented Marrow Creek design, no kernel."""

import pytest

from drivekit import demo
from drivekit.design import Design


@pytest.fixture
def pump_design():
    """The invented Marrow Creek P-201 flow loop at its design flow (no controller)."""
    return Design(train=demo.raw_water_pump(), operating=("flow", demo.RAW_WATER_FLOW_TARGET))
