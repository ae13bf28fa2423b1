"""Fixtures of the record tests."""

from __future__ import annotations

import pytest
from record_designs import ALL_DESIGNS

from drivekit.design import Design


@pytest.fixture(params=sorted(ALL_DESIGNS))
def any_design(request: pytest.FixtureRequest) -> Design:
    """One of the invented designs covering every component type."""
    return ALL_DESIGNS[request.param]()
