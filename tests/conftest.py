"""Shared fixtures: the invented demo scenarios."""

import pytest

from drivekit import demo


@pytest.fixture
def pump_train():
    """The invented Marrow Creek P-201 raw-water flow loop plant."""
    return demo.raw_water_pump()


@pytest.fixture
def conveyor_train():
    """The invented Tallow Hill CV-3 conveyor with a compliant gearbox."""
    return demo.quarry_conveyor()
