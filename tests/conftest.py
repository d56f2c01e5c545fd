"""Shared test set-up: hypothesis profiles, strict decimal contexts, small frame builders."""

from __future__ import annotations

import decimal
import os
from collections.abc import Iterator

import pytest
from hypothesis import HealthCheck, settings

settings.register_profile(
    "default", max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.register_profile(
    "ci", max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "default"))


@pytest.fixture(autouse=True)
def _no_float_decimal_mixing() -> Iterator[None]:
    """Any float mixed into Decimal arithmetic in a test fails it (FloatOperation trapped)."""
    with decimal.localcontext() as context:
        context.traps[decimal.FloatOperation] = True
        yield
