"""Fixtures of the report tests: a hand-made forecast result (see report_fixture.py)."""

from __future__ import annotations

import pytest
from report_fixture import FakeForecast, make_result


@pytest.fixture
def result() -> FakeForecast:
    return make_result()
