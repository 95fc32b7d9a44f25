"""Shared test set-up: gcplan's runtime policy (no IERS downloads, quiet astropy
repeats) for every test, since pytest resets warning filters per test; and the
hypothesis profiles.

Hypothesis profiles
-------------------
* ``ci`` — loaded whenever the environment variable ``CI`` is set (CI runs with
  ``CI=true``).  ``derandomize=True`` draws every example from a seed fixed by the
  test itself, so a run in CI is the same run on any machine and a failure there is
  a failure on every later run until it is fixed; ``database=None`` so that nothing
  saved by an earlier run (or another worktree) changes which examples run; no
  deadline (CI machines are slow and uneven, and timing is not what these tests
  check); ``print_blob=True`` so a failure prints the line that reproduces it.
  ``max_examples`` here is only the default: tests that set their own number (the
  slow geometric ones ask for a handful, and skip shrinking, which at seconds per
  example could run for minutes) keep it.
* ``dev`` — the default locally: random examples (more cases over many runs), the
  local example database on, so a failure found once is replayed first next time.

Choose one by hand with ``pytest --hypothesis-profile=dev`` (or ``ci``).
"""

import os

import pytest
from hypothesis import HealthCheck, settings

settings.register_profile(
    "ci",
    derandomize=True,
    database=None,
    deadline=None,
    print_blob=True,
    max_examples=100,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.register_profile("dev", deadline=None, max_examples=100, print_blob=True)
settings.load_profile("ci" if os.environ.get("CI") else "dev")


@pytest.fixture(autouse=True, scope="session")
def _gcplan_cache_dir(tmp_path_factory):
    """gcplan's caches in a folder of the test session, never the user's."""
    os.environ["GCPLAN_CACHE_DIR"] = str(tmp_path_factory.mktemp("gcplan-cache"))
    yield


@pytest.fixture(autouse=True)
def _gcplan_runtime():
    from planner.config import configure_runtime

    configure_runtime()
    yield
