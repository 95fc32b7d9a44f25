"""Placement with a cost, the bound printed with every plan, and frames sized where planned.

Independent references: astropy's full AltAz transform for the transit (the least
airmass) of a target, and tests/helpers/validate.py for every plan.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import replace

import numpy as np
import pytest

from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.inputs.targets import resolve_targets
from planner.model.constraints import constraints_for_site
from planner.scheduling import dispatch as dispatch_module
from planner.scheduling.night import plan_night
from planner.scheduling.night_sky import night_sky, requests_for_targets
from planner.scheduling.visits import Exposure, VisitRequest

from helpers.validate import validate_plan

SITE = resolve_site("demo")
NIGHT = dt.date(2027, 5, 12)


def _plan_requests(requests, night=NIGHT, constraints=None, site=SITE, **kw):
    c = constraints or constraints_for_site(site)
    frame = night_sky(site, [night], c)
    return plan_night(site, c, requests, night, float(frame.window_start_jd[0]), float(frame.window_end_jd[0]),
                      frame.ephemeris, **kw)


def _targets(names):
    return resolve_targets(None, list(names), load_catalog())


def _astropy_transit_jd(site, ra_deg, dec_deg, w0, w1):
    """Time of the highest altitude inside [w0, w1] from astropy's AltAz, on a 1-minute grid."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    loc = site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    jd = np.arange(w0, w1, 1.0 / 1440.0)
    alt = SkyCoord(ra_deg * u.deg, dec_deg * u.deg).transform_to(
        AltAz(obstime=Time(jd, format="jd"), location=where, pressure=0 * u.hPa)).alt.deg
    return float(jd[int(np.argmax(alt))])


def test_one_target_on_an_empty_night_goes_at_its_transit():
    site = resolve_site("37.0,-3.0,2000", timezone="Europe/Madrid")
    night = dt.date(2027, 5, 6)
    t = _targets(["M 10"])[0]
    requests = requests_for_targets([t], (Exposure("V", 1, 60.0),))
    plan = _plan_requests(requests, night=night, site=site)
    assert validate_plan(site, plan, requests) == []
    (v,) = plan.visits
    transit = _astropy_transit_jd(site, t.ra_deg, t.dec_deg, plan.window_start_jd, plan.window_end_jd)
    assert plan.window_start_jd + 0.05 < transit < plan.window_end_jd - 0.05  # an interior best moment
    mid = 0.5 * (v.science_start_jd + v.end_jd)
    assert abs(mid - transit) * 1440 < 5.0
    assert v.airmass_mid <= v.best_airmass * 1.005
    assert plan.gap_fraction < 0.01


def _eight():
    targets = resolve_targets("all", [], load_catalog())
    rng = np.random.default_rng(8)
    pick = sorted(rng.choice(len(targets), 8, replace=False))
    return [replace(targets[i], priority=float(1 + k % 3)) for k, i in enumerate(pick)]


def test_eight_targets_sit_near_their_best_airmass(monkeypatch):
    targets = _eight()
    requests = requests_for_targets(targets, (Exposure("V", 2, 120.0),))
    plan = _plan_requests(requests)
    assert validate_plan(SITE, plan, requests) == []
    assert len(plan.visits) == len(requests)  # the night has time to spare
    for v in plan.visits:
        assert v.airmass_mid <= 1.10 * v.best_airmass, v
    # The dispatch without its look at later opportunities (never waits, ignores the relaxation):
    monkeypatch.setattr(dispatch_module, "WAIT_GAIN", 1e9)
    monkeypatch.setattr(dispatch_module, "LP_SHARE_MIN", 1e9)
    eager = _plan_requests(requests)
    assert plan.mean_airmass < eager.mean_airmass - 0.02
    assert plan.value > eager.value


@pytest.mark.parametrize("seed", range(10))
def test_the_bound_holds_on_random_nights(seed):
    rng = np.random.default_rng(1000 + seed)
    night = dt.date(2027, 1, 1) + dt.timedelta(days=int(rng.integers(0, 365)))
    n = int(rng.integers(3, 30))
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, np.sin(np.radians(30)), n)))
    requests = []
    for i in range(n):
        exp = (Exposure("V", int(rng.integers(1, 4)), float(rng.choice([30.0, 120.0, 600.0]))),)
        if rng.random() < 0.3:
            exp += (Exposure("I", 1, 60.0),)
        count = int(rng.integers(1, 4)) if rng.random() < 0.3 else 1
        requests.append(VisitRequest(f"T{i}", f"T{i}", float(ra[i]), float(dec[i]), "visit", exp,
                                     float(rng.integers(1, 4)), count=count,
                                     min_spacing_min=30.0 if count > 1 else 0.0))
    plan = _plan_requests(requests, night=night)
    assert validate_plan(SITE, plan, requests) == []
    assert np.isfinite(plan.bound_value)
    assert plan.value <= plan.bound_value * (1 + 1e-9) + 1e-12


def _benchmark_night():
    """The benchmark's night: the 60 catalogue clusters with the most observable hours."""
    from planner.sky.night_summary import run_of_nights

    c = constraints_for_site(SITE, max_airmass=2.0)
    everything = resolve_targets("all", [], load_catalog())
    run = run_of_nights(SITE, everything, [NIGHT], c)
    order = np.argsort(-run.visibility.observable_hours[:, 0], kind="stable")[:60]
    targets = [replace(everything[i], priority=float(1 + k % 3)) for k, i in enumerate(sorted(order))]
    return c, requests_for_targets(targets, (Exposure("V", 2, 300.0),))


def test_sixty_target_night_within_five_percent_of_its_bound():
    c, requests = _benchmark_night()
    plan = _plan_requests(requests, constraints=c)
    assert validate_plan(SITE, plan, requests) == []
    assert plan.value <= plan.bound_value
    assert plan.gap_fraction <= 0.05


def _sized(name, **kw):
    t = _targets([name])[0]
    return VisitRequest("deep", t.name, t.ra_deg, t.dec_deg, "turnoff", (Exposure("V", 1, 60.0),),
                        snr_goal=50.0, magnitude=19.5, saturation_magnitude=14.0, **kw)


def test_a_visit_moved_to_a_worse_airmass_gets_longer_frames():
    free = _plan_requests([_sized("NGC 6752")])
    (best,) = free.visits
    # the same visit made to end three hours before that, the target lower in the sky
    early = best.start_jd - 3.0 / 24.0
    late = _plan_requests([_sized("NGC 6752", latest_jd=early)])
    (low,) = late.visits
    assert low.airmass_mid > best.airmass_mid + 0.1
    assert low.shutter_s > best.shutter_s
    for v in (best, low):  # sized for the goal where it is planned
        assert v.snr_planned == pytest.approx(50.0, rel=0.15) and v.snr_planned >= 50.0 * 0.99
    assert low.end_jd <= early
    assert validate_plan(SITE, late, [_sized("NGC 6752", latest_jd=early)]) == []


def test_fixed_frames_keep_their_frames_and_report_snr_only_with_a_magnitude():
    t = _targets(["NGC 6752"])[0]
    bare = VisitRequest("a", t.name, t.ra_deg, t.dec_deg, "visit", (Exposure("V", 2, 300.0),))
    known = replace(bare, key="b", magnitude=18.0)
    plan = _plan_requests([bare, known])
    by_key = {v.request_key: v for v in plan.visits}
    assert by_key["a"].exposures == bare.exposures and by_key["b"].exposures == bare.exposures
    assert by_key["a"].snr_planned is None
    assert by_key["b"].snr_planned > 0


def test_schedule_json_carries_the_new_fields():
    from planner.reports.schedule_report import night_sheet, schedule_json

    requests = requests_for_targets(_eight(), (Exposure("V", 1, 60.0),))
    plan = _plan_requests(requests)
    out = schedule_json(SITE, plan)
    w = np.array([v.shutter_s for v in plan.visits])
    x = np.array([v.airmass_mid for v in plan.visits])
    assert out["mean_airmass"] == pytest.approx(np.sum(w * x) / np.sum(w), abs=1e-3)
    assert set(out["bound"]) == {"value", "gap_fraction", "method"}
    assert out["bound"]["value"] >= out["value"]
    assert all(v["best_airmass"] <= v["airmass_start"] + 1e-3 for v in out["visits"])
    assert all("snr_planned" in v for v in out["visits"])
    assert "% of the most any plan" in night_sheet(SITE, plan)


def test_a_night_with_nothing_observable_has_a_zero_bound():
    """A request never observable tonight leaves the bound at zero and the plan empty."""
    never = VisitRequest("n", "north", 0.0, 85.0, "visit", (Exposure("V", 1, 60.0),))
    plan = _plan_requests([never])
    assert plan.visits == () and plan.bound_value == 0.0 and plan.gap_fraction == 0.0


def test_requests_that_can_have_no_visit_leave_the_bound_as_it_is():
    """A target never up tonight, and one up for less time than its visit takes, add nothing
    to the bound: neither can be observed (the first of them once made the bound count a
    parked first visit of its own, the second let the relaxation use its short window)."""
    base = _targets(["NGC 6752", "NGC 104", "NGC 362"])
    requests = requests_for_targets(base, (Exposure("V", 2, 300.0),))
    never = VisitRequest("n", "north", 0.0, 85.0, "visit", (Exposure("V", 1, 60.0),), 3.0)
    plan = _plan_requests(requests)
    c = constraints_for_site(SITE)
    frame = night_sky(SITE, [NIGHT], c)
    w0 = float(frame.window_start_jd[0])
    # the same cluster allowed only a 5-minute window, for a 12-minute visit
    short = replace(requests[0], key="short", priority=3.0, earliest_jd=w0 + 120 / 1440.0,
                    latest_jd=w0 + 125 / 1440.0)
    more = _plan_requests(requests + [never, short])
    assert more.bound_value == pytest.approx(plan.bound_value, rel=1e-12)
    assert {v.request_key for v in more.visits} == {v.request_key for v in plan.visits}


def test_the_longest_runs_are_found_row_by_row():
    from planner.scheduling.bound import in_long_runs

    rng = np.random.default_rng(4)
    ok = rng.random((6, 80)) > 0.3
    need = rng.integers(1, 8, 6)
    expect = np.zeros_like(ok)
    for r in range(6):
        i = 0
        while i < 80:
            j = i
            while j < 80 and ok[r, j]:
                j += 1
            if j - i >= need[r]:
                expect[r, i:j] = True
            i = max(j, i + 1)
    assert np.array_equal(in_long_runs(ok, need), expect)


def test_the_bound_holds_with_fixed_visits_and_a_late_start():
    """Re-planning: visits already made stay, nothing starts before "now"; the bound is on
    the new visits and still holds."""
    c, requests = _benchmark_night()
    requests = requests[:25]
    first = _plan_requests(requests, constraints=c)
    fixed = tuple(replace(v, status="done") for v in first.visits[:4])
    now = fixed[-1].end_jd + 0.02
    again = _plan_requests(requests, constraints=c, fixed=fixed, not_before_jd=now)
    assert validate_plan(SITE, again, requests) == []
    assert all(v.start_jd >= now - 1e-9 for v in again.visits if v not in fixed)
    assert again.value <= again.bound_value * (1 + 1e-9)


@pytest.mark.parametrize("seed", range(5))
def test_the_rows_running_maximum_is_each_rows_sliding_window(seed):
    """The bound's U for all requests at once (a sparse table) against the plain sliding
    window of each row (numpy's sliding_window_view; common practice, no source)."""
    from planner.scheduling.bound import window_max, window_max_rows

    rng = np.random.default_rng(seed)
    rows, points = int(rng.integers(1, 12)), int(rng.integers(1, 400))
    v = rng.random((rows, points)) * (rng.random((rows, points)) > 0.3)
    half = rng.integers(0, 150, rows)
    expect = np.array([window_max(v[r], int(half[r])) for r in range(rows)])
    assert np.array_equal(window_max_rows(v, half), expect)


@pytest.mark.parametrize("seed", range(6))
def test_the_bound_is_the_relaxations_optimum_from_milp(seed):
    """night_bound's value against the same relaxation written out here from its definition
    (planner/scheduling/bound.py's docstring), point by point with plain loops, and solved by
    scipy's milp with no integer variables (HiGHS through another entry point): equal."""
    from scipy.optimize import Bounds, LinearConstraint, milp

    from planner.scheduling.bound import BOUND_SLOT_MIN, night_bound

    rng = np.random.default_rng(500 + seed)
    n_req, n_pts = int(rng.integers(2, 8)), int(rng.integers(20, 90))
    ok = rng.random((n_req, n_pts)) > 0.25
    v = np.where(ok, rng.random((n_req, n_pts)) * rng.integers(1, 4, n_req)[:, None], 0.0)
    free = np.clip(rng.random(n_pts - 1) * 1.5, 0.0, 1.0)
    count = rng.integers(0, 3, n_req).astype(float)
    body = rng.uniform(3.0, 25.0, n_req)
    reach = rng.uniform(1.0, 20.0, n_req)
    got = night_bound(v, ok, free, count, body, reach).value

    n_int = n_pts - 1
    n_k = (n_int - 1) // BOUND_SLOT_MIN + 1
    cap = np.zeros(n_k)
    ok_min = np.zeros((n_req, n_k))
    big_u = np.zeros((n_req, n_k))
    for r in range(n_req):
        w = int(np.ceil(reach[r])) + 1
        u_pt = [max(v[r, max(0, i - w): i + w + 1]) for i in range(n_pts)]
        for i in range(n_int):
            k = i // BOUND_SLOT_MIN
            if r == 0:
                cap[k] += free[i]
            if ok[r, i] and ok[r, i + 1]:
                ok_min[r, k] += free[i]
                big_u[r, k] = max(big_u[r, k], u_pt[i], u_pt[i + 1])
    c = (big_u / body[:, None]).ravel()  # variable r * n_k + k
    a = np.zeros((n_k + n_req, n_req * n_k))
    for r in range(n_req):
        for k in range(n_k):
            a[k, r * n_k + k] = 1.0
            a[n_k + r, r * n_k + k] = 1.0
    # a request may take all of a slot where its constraints hold somewhere (bound.py's third row)
    upper = np.where((count[:, None] > 0) & (ok_min > 1e-9), np.inf, 0.0).ravel()
    res = milp(-c, constraints=LinearConstraint(a, -np.inf, np.concatenate([cap, count * body])),
               bounds=Bounds(np.zeros(c.size), upper), integrality=np.zeros(c.size))
    assert res.status == 0
    assert got == pytest.approx(-res.fun, rel=1e-7, abs=1e-9)


def _random_transport(rng):
    n_k, n_req = int(rng.integers(5, 60)), int(rng.integers(2, 25))
    allowed = rng.random((n_req, n_k)) > 0.3
    value = np.where(allowed, rng.random((n_req, n_k)), 0.0)
    demand, supply = rng.uniform(0, 15, n_req), rng.uniform(0, 5, n_k)
    demand[rng.random(n_req) < 0.15] = 0.0  # nothing more wanted of a request
    supply[rng.random(n_k) < 0.15] = 0.0  # a slot taken by a fixed visit, or before "now"
    return value, allowed, demand, supply


@pytest.mark.parametrize("seed", range(8))
def test_the_network_simplex_solves_the_transportation_lp(seed):
    """POT's network simplex (planner/scheduling/transport.py) against the same problem
    written as a plain LP for scipy's linprog (HiGHS): the same optimum; its flow feasible
    and worth that optimum; its duals feasible (p_k + λ_r ≥ value on every allowed pair,
    both ≥ 0) and their dual objective equal to the optimum (LP duality)."""
    from scipy.optimize import linprog

    from planner.scheduling.transport import max_transport

    value, allowed, demand, supply = _random_transport(np.random.default_rng(seed))
    n_r, n_k = value.shape
    got, y, lam, price = max_transport(value, allowed, demand, supply)
    a = np.zeros((n_k + n_r, n_r * n_k))
    for r in range(n_r):
        for k in range(n_k):
            a[k, r * n_k + k] = a[n_k + r, r * n_k + k] = 1.0
    res = linprog(-value.ravel(), A_ub=a, b_ub=np.concatenate([supply, demand]),
                  bounds=list(zip(np.zeros(value.size), np.where(allowed.ravel(), None, 0.0))), method="highs")
    assert res.status == 0
    assert got == pytest.approx(-res.fun, rel=1e-9, abs=1e-9)
    assert np.all(y >= -1e-12) and np.all(y[~allowed] == 0)
    assert np.all(y.sum(axis=1) <= demand + 1e-9) and np.all(y.sum(axis=0) <= supply + 1e-9)
    assert np.sum(value * y) == pytest.approx(got, rel=1e-12)
    assert np.all(lam >= 0) and np.all(price >= 0)
    assert np.all((price[None, :] + lam[:, None] - value)[allowed] >= -1e-9)
    assert price @ supply + lam @ demand == pytest.approx(got, rel=1e-9, abs=1e-9)


def test_pots_public_solver_gives_the_same_answer_when_its_compiled_call_is_refused(monkeypatch):
    """Another POT whose compiled function takes other arguments: ``ot.emd`` serves instead."""
    from planner.scheduling import transport

    value, allowed, demand, supply = _random_transport(np.random.default_rng(11))
    direct = transport.max_transport(value, allowed, demand, supply)

    class Refusing:
        @staticmethod
        def emd_c(*args):
            raise TypeError("emd_c() takes other arguments")

    monkeypatch.setattr(transport, "_load_solver", lambda: Refusing)
    public = transport.max_transport(value, allowed, demand, supply)
    assert public[0] == pytest.approx(direct[0], rel=1e-12)
    np.testing.assert_allclose(public[1].sum(axis=0), direct[1].sum(axis=0), atol=1e-9)
    assert np.all((public[3][None, :] + public[2][:, None] - value)[allowed] >= -1e-9)


def test_the_network_simplex_loads_without_pot_toolbox_and_pot_still_imports_after():
    """The solver module is loaded alone (POT's ``ot/__init__`` pulls in scipy.stats and
    more, 0.6 s); a later ``import ot`` still works and its own solver agrees."""
    import subprocess
    import sys
    import textwrap

    script = textwrap.dedent("""
        import sys
        import numpy as np
        from planner.scheduling.transport import max_transport
        v = np.array([[3.0, 1.0, 0.0], [2.0, 2.0, 1.0]]); ok = v > 0
        got = max_transport(v, ok, np.array([1.0, 2.0]), np.array([1.0, 1.0, 1.0]))[0]
        print(sorted(k for k in sys.modules if k == "ot" or k.startswith("ot.")), got)
        import ot
        a = np.array([1.0, 2.0, 3.0]); b = np.array([1.0, 1.0, 1.0, 3.0])
        m = np.zeros((3, 4)); m[:2, :3] = np.where(ok, -v, 4.0)
        print(round(-float(ot.emd2(a, b, m)), 9))
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    lines = done.stdout.split("\n")
    assert lines[0] == "['ot.lp.emd_wrap'] 6.0"  # 3 + 2 + 1: each request its best slots
    assert lines[1] == "6.0"


def test_the_linear_assignment_is_scipys():
    from scipy.optimize import linear_sum_assignment as public

    from planner.scheduling.assignment import linear_sum_assignment

    cost = np.random.default_rng(3).random((7, 9))
    got, expect = linear_sum_assignment(cost), public(cost)
    assert all(np.array_equal(a, b) for a, b in zip(got, expect))


def test_a_schedule_loads_no_scipy_optimize_and_scipy_optimize_still_imports_after():
    """The whole of scipy.optimize stays unloaded while a night is planned (its import costs
    more than the plan), and importing it afterwards reuses the modules already loaded."""
    import subprocess
    import sys
    import textwrap

    script = textwrap.dedent("""
        import sys
        import numpy as np
        from planner.scheduling.bound import night_bound
        from planner.scheduling.assignment import linear_sum_assignment
        rng = np.random.default_rng(0)
        v = rng.random((4, 60)); ok = v > 0.2
        b = night_bound(v, ok, np.ones(59), np.ones(4), np.full(4, 10.0), np.full(4, 5.0))
        linear_sum_assignment(rng.random((3, 3)))
        print("scipy.optimize" in sys.modules, b.value > 0)
        from scipy.optimize import linear_sum_assignment as lsa, linprog
        r = linprog([-1.0, -2.0], A_ub=[[1.0, 1.0]], b_ub=[1.0], bounds=[(0, 1), (0, 1)])
        print(r.status == 0 and abs(r.fun + 2.0) < 1e-9, lsa(np.eye(2))[1].tolist())
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["False", "True", "True", "[1,", "0]"]  # the least-cost pairing of eye(2)


@pytest.mark.parametrize("seed", range(4))
def test_gaps_searched_at_once_find_what_each_gap_searched_alone_finds(seed, monkeypatch):
    """The local search asks every gap at once (_best_in_gaps): gaps × requests × starts in
    one set of arrays, a visit taken out of the plan only in the arithmetic.  Each answer
    must be the one the gap gives when searched by itself, with that visit really taken out
    of the plan (as the search did one visit at a time)."""
    rng = np.random.default_rng(2000 + seed)
    night = dt.date(2027, 1, 1) + dt.timedelta(days=int(rng.integers(0, 365)))
    n = int(rng.integers(8, 30))
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, np.sin(np.radians(30)), n)))
    requests = [VisitRequest(f"T{i}", f"T{i}", float(ra[i]), float(dec[i]), "visit",
                             (Exposure("V", int(rng.integers(1, 4)), float(rng.choice([60.0, 300.0, 900.0]))),),
                             float(rng.integers(1, 4)), count=2 if i % 5 == 0 else 1,
                             min_spacing_min=45.0 if i % 5 == 0 or i % 3 == 0 else 0.0) for i in range(n)]
    batched = dispatch_module._best_in_gaps
    checked = []

    def alone(state, gap):
        g0, g1, prev, nxt, out = gap
        if out is None:
            return batched(state, [gap])[0]
        old = next(v for v in state.visits if v.request_key == state.requests[out].key
                   and v.start_jd >= g0 - 1e-9 and v.end_jd <= g1 + 1e-9)
        saved_visits, saved_times = list(state.visits), state.times[out]
        state.visits.remove(old)
        state.remaining[out] += 1
        state.times[out] = []
        try:
            return batched(state, [(g0, g1, prev, nxt, None)])[0]
        finally:
            state.visits[:], state.times[out] = saved_visits, saved_times
            state.remaining[out] -= 1

    def compare(state, gaps):
        got = batched(state, gaps)
        for gap, answer in zip(gaps, got):
            expect = alone(state, gap)
            assert (answer is None) == (expect is None)
            if answer is not None:
                assert answer[:3] == expect[:3] and answer[3] is expect[3] and answer[4] is expect[4]
        checked.append(len(gaps))
        return got

    monkeypatch.setattr(dispatch_module, "_best_in_gaps", compare)
    plan = _plan_requests(requests, night=night)
    assert validate_plan(SITE, plan, requests) == []
    assert sum(checked) > 0
