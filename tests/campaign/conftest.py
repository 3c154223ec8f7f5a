"""Fixtures of the campaign tests."""

from __future__ import annotations

import pytest
from campaign_helpers import several_target

from feeler.target import Target


@pytest.fixture
def several() -> Target:
    return several_target()
