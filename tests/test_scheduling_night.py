"""The night planner: every visit checked by an independent astropy validator, no
overlaps, inside the night, overheads as the site profile gives them, gaps reported.

The reference is astropy's full ICRS → AltAz transform (tests/helpers/validate.py),
which shares no code with the planner's fast kernels.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.inputs.targets import resolve_targets
from planner.model.constraints import constraints_for_site
from planner.model.target import Target
from planner.scheduling.night import plan_night
from planner.scheduling.night_sky import night_sky, requests_for_targets
from planner.scheduling.visits import Exposure, VisitRequest, body_s, parse_visit_spec

from helpers.validate import validate_plan

SITE = resolve_site("demo")
NIGHT = dt.date(2027, 5, 12)


def _plan(targets, exposures, night=NIGHT, constraints=None, **kw):
    c = constraints or constraints_for_site(SITE)
    frame = night_sky(SITE, [night], c)
    requests = requests_for_targets(targets, exposures)
    plan = plan_night(SITE, c, requests, night, float(frame.window_start_jd[0]), float(frame.window_end_jd[0]),
                      frame.ephemeris, **kw)
    return plan, requests


@pytest.fixture(scope="module")
def catalog_plan():
    targets = resolve_targets("all", [], load_catalog())[:80]
    return _plan(targets, (Exposure("V", 2, 300.0),))


def test_catalog_night_passes_the_astropy_validator(catalog_plan):
    plan, requests = catalog_plan
    assert len(plan.visits) > 10
    assert validate_plan(SITE, plan, requests) == []


def test_no_overlaps_and_inside_the_window(catalog_plan):
    plan, _ = catalog_plan
    v = sorted(plan.visits, key=lambda v: v.start_jd)
    assert all(a.end_jd <= b.start_jd + 1e-9 for a, b in zip(v, v[1:]))
    assert v[0].start_jd >= plan.window_start_jd and v[-1].end_jd <= plan.window_end_jd


def test_visit_time_is_the_sum_of_the_site_overheads(catalog_plan):
    plan, _ = catalog_plan
    tel, cam = SITE.telescope, SITE.camera
    # Hand arithmetic from site_profiles/demo.toml: acquisition 45 s, 2 × (300 s + 45 s readout).
    assert tel.acquisition_s + 2 * (300 + cam.readout_s) == 735
    for v in plan.visits:
        assert (v.end_jd - v.science_start_jd) * 86400 == pytest.approx(735, abs=0.01)
        slew = (v.science_start_jd - v.start_jd) * 86400
        if v.slew_deg > 0.01:  # slew at 2°/s, settle 8 s, plus a filter change when the filter differs
            assert slew == pytest.approx(v.slew_deg / 2.0 + 8.0, abs=0.01) or slew == pytest.approx(
                v.slew_deg / 2.0 + 8.0 + 12.0, abs=0.01)


def test_gaps_and_visits_tile_the_window(catalog_plan):
    plan, _ = catalog_plan
    busy = sum(v.end_jd - v.start_jd for v in plan.visits) * 1440
    gaps = sum(g.minutes for g in plan.gaps)
    # gaps shorter than a minute are not listed
    assert plan.window_minutes - busy - gaps == pytest.approx(0, abs=len(plan.visits) + 1)
    assert 0 < plan.efficiency < 1
    assert plan.efficiency == pytest.approx(plan.shutter_s / (plan.window_minutes * 60))


def test_same_inputs_same_plan(catalog_plan):
    plan, _ = catalog_plan
    again, _ = _plan(resolve_targets("all", [], load_catalog())[:80], (Exposure("V", 2, 300.0),))
    assert [(v.id, v.target, v.start_jd, v.end_jd) for v in again.visits] == [
        (v.id, v.target, v.start_jd, v.end_jd) for v in plan.visits]


def test_the_validator_catches_a_visit_in_twilight_and_an_overlap(catalog_plan):
    plan, requests = catalog_plan
    first = plan.visits[0]
    early = replace(first, start_jd=first.start_jd - 0.08, science_start_jd=first.science_start_jd - 0.08,
                    end_jd=first.end_jd - 0.08)
    problems = validate_plan(SITE, replace(plan, visits=(early,) + plan.visits[1:]), requests)
    assert any("Sun" in p or "window" in p for p in problems)
    second = plan.visits[1]
    clash = replace(second, start_jd=first.start_jd + 1e-3)
    problems = validate_plan(SITE, replace(plan, visits=(first, clash) + plan.visits[2:]), requests)
    assert any("overlap" in p for p in problems)
    low = replace(first, dec_deg=first.dec_deg + 100 if first.dec_deg < -10 else first.dec_deg - 95)
    assert validate_plan(SITE, replace(plan, visits=(low,)), requests)


def test_closed_periods_and_request_limits_hold(catalog_plan):
    plan, requests = catalog_plan
    a = plan.window_start_jd + 0.05
    b = a + 0.06
    tight = [replace(q, max_airmass=1.3) for q in requests]
    c = plan.constraints
    frame = night_sky(SITE, [NIGHT], c)
    p2 = plan_night(SITE, c, tight, NIGHT, plan.window_start_jd, plan.window_end_jd, frame.ephemeris,
                    closed=((a, b),))
    assert validate_plan(SITE, p2, tight) == []
    assert all(v.end_jd <= a or v.start_jd >= b for v in p2.visits)
    assert any(g.reason == "closed" and g.minutes == pytest.approx(86.4, abs=0.1) for g in p2.gaps)
    assert all(v.airmass_start <= 1.3 + 1e-3 and v.airmass_end <= 1.3 + 1e-3 for v in p2.visits)


def test_repeats_keep_their_spacing():
    t = resolve_targets(None, ["NGC 6752"], load_catalog())[0]
    q = VisitRequest("x", t.name, t.ra_deg, t.dec_deg, "variables", (Exposure("V", 1, 60.0),), count=5,
                     min_spacing_min=40.0)
    c = constraints_for_site(SITE)
    frame = night_sky(SITE, [NIGHT], c)
    plan = plan_night(SITE, c, [q], NIGHT, float(frame.window_start_jd[0]), float(frame.window_end_jd[0]),
                      frame.ephemeris)
    mids = sorted(0.5 * (v.science_start_jd + v.end_jd) for v in plan.visits)
    assert len(mids) == 5
    assert np.min(np.diff(mids)) * 1440 >= 40 - 1e-6
    assert validate_plan(SITE, plan, [q]) == []


def test_parse_visit_spec_and_its_errors():
    from planner.scheduling.visits import VisitError

    seq = parse_visit_spec("filter=V,frames=2,exposure=300;filter=I,exposure=60", SITE)
    assert seq == (Exposure("V", 2, 300.0), Exposure("I", 1, 60.0))
    # one filter change inside the sequence (12 s) on top of acquisition and frames
    assert body_s(SITE, seq) == pytest.approx(45 + 2 * 345 + 12 + 105)
    for bad in ("filter=Z,exposure=3", "filter=V", "filter=V,exposure=abc", "colour=V,exposure=3",
                "filter=V,exposure=-1"):
        with pytest.raises(VisitError):
            parse_visit_spec(bad, SITE)


@pytest.mark.slow
# Seconds an example: a few cases, derandomised in CI (tests/conftest.py), and no
# shrinking (it could run for minutes); a failure prints its arguments and blob.
@settings(max_examples=4, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          phases=[Phase.explicit, Phase.reuse, Phase.generate])
@given(
    seed=st.integers(0, 10_000),
    n=st.integers(3, 25),
    frames=st.integers(1, 3),
    exposure=st.sampled_from([30.0, 120.0, 600.0]),
    day=st.integers(0, 364),
)
def test_random_target_sets_pass_the_validator(seed, n, frames, exposure, day):
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, np.sin(np.radians(30)), n)))
    targets = [Target(f"T{i}", float(a), float(d), priority=float(rng.integers(1, 4))) for i, (a, d) in
               enumerate(zip(ra, dec))]
    plan, requests = _plan(targets, (Exposure("V", frames, exposure),), night=dt.date(2027, 1, 1) +
                           dt.timedelta(days=day))
    assert validate_plan(SITE, plan, requests) == []
    v = sorted(plan.visits, key=lambda v: v.start_jd)
    assert all(a.end_jd <= b.start_jd + 1e-9 for a, b in zip(v, v[1:]))
    assert len(plan.visits) + sum(u.wanted - u.planned for u in plan.unplanned) == n


@pytest.mark.parametrize("spec, start", [("demo", dt.date(2027, 1, 1)), ("62.0,-7.0", dt.date(2027, 4, 20)),
                                         ("78.2,15.6", dt.date(2027, 10, 1))])
def test_usable_window_agrees_with_the_almanac(spec, start):
    """The planner's quick twilight search against the almanac's (itself held to astroplan
    in tests/test_almanac.py): same events within 5 s, same nights without darkness."""
    from planner.scheduling.night_sky import usable_windows_jd
    from planner.sky.almanac import almanac_for_nights
    from planner.sky.ephemeris import site_geometry
    from planner.sky.nights import night_spans_jd

    site = resolve_site(spec)
    nights = [start + dt.timedelta(days=i) for i in range(0, 60, 3)]
    frame = night_sky(site, nights, constraints_for_site(site))
    alm = almanac_for_nights(site, nights, frame.ephemeris)
    for tw in ("civil", "nautical", "astronomical"):
        a0, a1 = alm.dark_window_jd(tw)
        loc = site.location
        s, e = night_spans_jd(nights, loc.timezone)
        w0, w1 = usable_windows_jd(frame.ephemeris, site_geometry(loc.latitude_deg, loc.longitude_deg,
                                                                  loc.elevation_m), s, e, tw)
        assert np.array_equal(np.isnan(a0), np.isnan(w0)) and np.array_equal(np.isnan(a1), np.isnan(w1))
        ok = np.isfinite(a0)
        assert np.all(np.abs(a0[ok] - w0[ok]) * 86400 < 5) and np.all(np.abs(a1[ok] - w1[ok]) * 86400 < 5)
