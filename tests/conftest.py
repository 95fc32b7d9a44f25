"""Shared test set-up: gcplan's runtime policy (no IERS downloads, quiet astropy
repeats) for every test, since pytest resets warning filters per test."""

import pytest


@pytest.fixture(autouse=True)
def _gcplan_runtime():
    from planner.config import configure_runtime

    configure_runtime()
    yield
