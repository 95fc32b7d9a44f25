"""The night planner's last pass (planner.scheduling.polish): the plan's places given out
again never make a plan worse under its objective nor invalid (astropy's full AltAz,
tests/helpers/validate.py), never touch fixed visits, and bring visits nearer their best
airmass."""

from __future__ import annotations

import datetime as dt
from unittest import mock

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.inputs.targets import resolve_targets
from planner.model.constraints import constraints_for_site
from planner.model.target import Target
from planner.scheduling import night as night_module
from planner.scheduling.night import plan_night
from planner.scheduling.night_sky import night_sky, requests_for_targets
from planner.scheduling.visits import Exposure

from helpers.validate import validate_plan

SITE = resolve_site("demo")


def _plans(targets, exposures, night, **kw):
    """The plan with the pass and without it (the same everything else)."""
    c = constraints_for_site(SITE, max_airmass=2.0)
    frame = night_sky(SITE, [night], c)
    requests = requests_for_targets(targets, exposures)
    args = (SITE, c, requests, night, float(frame.window_start_jd[0]), float(frame.window_end_jd[0]),
            frame.ephemeris)
    with_pass = plan_night(*args, **kw)
    with mock.patch.object(night_module, "reassign", lambda state, start: False):
        without = plan_night(*args, **kw)
    return with_pass, without, requests


def _mean_airmass(plan):
    return plan.mean_airmass


@pytest.mark.slow
# Seconds an example: a few cases, derandomised in CI (tests/conftest.py), no shrinking.
@settings(max_examples=5, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          phases=[Phase.explicit, Phase.reuse, Phase.generate])
@given(seed=st.integers(0, 10_000), n=st.integers(4, 40), frames=st.integers(1, 3),
       exposure=st.sampled_from([60.0, 300.0, 600.0]), day=st.integers(0, 364))
def test_the_pass_never_makes_a_plan_worse_or_invalid(seed, n, frames, exposure, day):
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, np.sin(np.radians(30)), n)))
    targets = [Target(f"T{i}", float(a), float(d), priority=float(rng.integers(1, 4)))
               for i, (a, d) in enumerate(zip(ra, dec))]
    night = dt.date(2027, 1, 1) + dt.timedelta(days=day)
    plan, before, requests = _plans(targets, (Exposure("V", frames, exposure),), night)
    assert validate_plan(SITE, plan, requests) == []
    assert plan.value >= before.value * (1 - 1e-12)
    assert plan.value <= plan.bound_value * (1 + 1e-9) + 1e-12
    v = sorted(plan.visits, key=lambda v: v.start_jd)
    assert all(a.end_jd <= b.start_jd + 1e-9 for a, b in zip(v, v[1:]))


@pytest.fixture(scope="module")
def busy_night():
    """The benchmark's night: the 60 catalog clusters with the most hours, priorities 1–3."""
    from planner.sky.night_summary import run_of_nights

    night = dt.date(2027, 5, 12)
    everything = resolve_targets("all", [], load_catalog())
    run = run_of_nights(SITE, everything, [night], constraints_for_site(SITE, max_airmass=2.0))
    order = np.argsort(-run.visibility.observable_hours[:, 0], kind="stable")[:60]
    targets = [everything[i] for i in sorted(order)]
    targets = [Target(t.name, t.ra_deg, t.dec_deg, priority=float(1 + k % 3)) for k, t in enumerate(targets)]
    return _plans(targets, (Exposure("V", 2, 300.0),), night)


def test_a_full_night_gains_value_and_airmass(busy_night):
    plan, before, requests = busy_night
    assert validate_plan(SITE, plan, requests) == []
    assert plan.value > before.value  # rising targets no longer taken at dusk's airmass
    assert _mean_airmass(plan) < _mean_airmass(before) - 0.01
    assert plan.shutter_s >= before.shutter_s - 1e-6  # no time on sky lost for it
    assert plan.gap_fraction <= 0.05


def test_fixed_visits_and_the_past_stay(busy_night):
    plan, _, requests = busy_night
    fixed = tuple(plan.visits[:5])
    c = constraints_for_site(SITE, max_airmass=2.0)
    frame = night_sky(SITE, [plan.night], c)
    for late_s in (0.0, 30.0):  # "now" at the last fixed visit's end, and half a minute after it
        now = fixed[-1].end_jd + late_s / 86400.0
        again = plan_night(SITE, c, requests, plan.night, plan.window_start_jd, plan.window_end_jd,
                           frame.ephemeris, fixed=fixed, not_before_jd=now)
        assert again.visits[:5] == fixed
        assert all(v.start_jd >= now - 1e-9 for v in again.visits[5:])
        assert validate_plan(SITE, again, requests) == []
