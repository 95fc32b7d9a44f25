"""One night's timed plan: a relaxation-guided forward dispatch, then local search, with a bound.

The objective
-------------
A plan's value is the sum over its new visits of

    priority × shutter hours × efficiency × phase gain,

the efficiency (:mod:`planner.scheduling.quality`) being the S/N-equivalent
worth of the visit's time where it is placed — extinction 10^(−0.8 k ΔX),
seeing ∝ X^0.6 (so (X_best/X)^1.2) and the sky's brightness under the Moon
(Krisciunas & Schaefer 1991) — relative to the best the target reaches
tonight, taken at the visit's middle; the phase gain (variables) is the share
of new phase bins it covers.  Time is the constraint: a visit at a poor
airmass is worth less, and the time it takes is time another visit cannot
have.  Every plan carries an upper bound on this value over all plans of the
same requests and constraints (:mod:`planner.scheduling.bound`), and its gap
to it.

The method, and why
-------------------
The night is cut into one-minute slots.  Every constraint of every request is
evaluated on all requests × slots at once (:mod:`planner.scheduling.slot_table`:
one :func:`~planner.sky.visibility.sky_at` call, the Sun, the Moon and the
sidereal time computed once); ``next_bad[r, i]`` — the first failing slot at
or after ``i`` — makes "does visit r hold over [t, t + d]?" one array lookup.
Frames of requests with an S/N goal are sized at every slot at once.

1. **The relaxation.**  The bound's LP (requests share each 5-minute slot's
   minutes; a network simplex, about a millisecond) is solved first.  Its optimum says which
   request should use which part of the night, its duals what each minute is
   worth to the others.
2. **Dispatch.**  Time moves forward.  At each free moment the request the
   relaxed optimum gives most of the coming visit's span starts (a little late
   is fine: real visits slew).  Otherwise each feasible request compares its
   value now, net of the time's price, with the best it can still get later
   tonight (:data:`~planner.scheduling.dispatch.WAIT_GAIN`): one that is
   clearly better later waits.  If all would wait and the time is free (price
   0, nothing else needs it), the telescope waits for the next moment anything
   changes; on priced time the visit that loses least by going now goes.
   With time to spare, then, a visit sits at its best airmass; on a full night
   the relaxation trades each visit's airmass against the others' time.
3. **Local search.**  Idle gaps are offered to every request still wanting
   time, each at its most valuable start inside the gap, including the slew
   into it and the changed slew out of it; then each single visit is taken
   out in turn and the most valuable visit that fits its place put back
   (itself moved, or a request left out); a patient visit (deep frames) placed
   clearly above its best airmass is offered every idle gap; and the gaps are
   filled again.
4. **Places given out again.**  The plan's places are re-assigned among the
   requests as a linear assignment (value, with airmass as a small tie-breaker:
   :mod:`planner.scheduling.polish`), so a target taken early at a poor airmass
   gives its place to one that is better there; the result is kept only when
   every visit still holds and the plan is worth at least as much.

Why not solve the whole night as an integer programme?  Overheads depend on
the order (slews), which a time-indexed model can only carry with order
variables per pair of visits and slot: for 60 targets and 600 slots that is
far past a second of HiGHS time, and the plan must be ready again in a
fraction of a second when the weather turns.  The relaxation without slews is
a small transportation LP, it bounds every plan, and its solution is close to
a plan; the dispatch turns it into one with real slews and whole visits.  All
steps are deterministic (ties go to the first request).

The dispatch and the local search are :mod:`planner.scheduling.dispatch`, the
plan's data classes :mod:`planner.scheduling.night_plan`.

Constraints hold over each visit's whole duration, from the start of its
slew to its last readout, on the slot grid with a small safety margin
(:data:`~planner.scheduling.slot_table.MARGIN_DEG`), checked independently by the tests (astropy's
full AltAz, tests/helpers/validate.py).
"""

from __future__ import annotations

import datetime as dt

from dataclasses import replace

import numpy as np

from planner.model.constraints import Constraints
from planner.scheduling.bound import in_long_runs, night_bound
from planner.scheduling.dispatch import DispatchState, dispatch, fill_gaps, improve, relocate_patient
from planner.scheduling.night_plan import Gap, NightPlan, Unplanned
from planner.scheduling.polish import reassign
from planner.scheduling.slot_table import SLOT_MIN, build_slot_table
from planner.scheduling.visits import Visit, VisitRequest, setup_s
from planner.sky.ephemeris import Ephemeris, moon_phase
from planner.sky.visibility import angular_separation_deg

METHOD = ("forward dispatch guided by the LP relaxation's time shares and prices (waits while a later start "
          "is clearly better), then gap filling, remove-and-reinsert local search, deep frames moved nearer their best "
          "airmass, and a re-assignment of the plan's "
          "places (1-minute slots)")


def plan_night(
    site,
    constraints: Constraints,
    requests: list[VisitRequest],
    night: dt.date,
    window_start_jd: float,
    window_end_jd: float,
    eph: Ephemeris,
    *,
    closed: tuple[tuple[float, float], ...] = (),
    seeing_arcsec: float | None = None,
    fixed: tuple[Visit, ...] = (),
    not_before_jd: float | None = None,
    covered_bins: dict[str, np.ndarray] | None = None,
    id_offset: int = 0,
) -> NightPlan:
    """Plan ``requests`` in the usable window [``window_start_jd``, ``window_end_jd``].

    ``fixed`` visits (already done, or under way) stay as they are and nothing is
    planned before ``not_before_jd``; ``closed`` periods (weather) get no visit.
    ``covered_bins`` maps a request key to the phase bins already covered
    (stars × bins, from earlier nights), so the night values new phases most.
    """
    seeing = site.sky.typical_seeing_arcsec if seeing_arcsec is None else float(seeing_arcsec)
    moon_illum = float(moon_phase(eph, 0.5 * (window_start_jd + window_end_jd))[0]) if np.isfinite(
        window_start_jd) else 0.0
    closed = tuple(sorted((float(a), float(b)) for a, b in closed))
    warnings: list[str] = []
    if not (np.isfinite(window_start_jd) and window_end_jd > window_start_jd):
        unplanned = tuple(Unplanned(q.key, q.target, q.purpose, q.count, 0, f"no {constraints.twilight} darkness")
                          for q in requests)
        return NightPlan(night, constraints, np.nan, np.nan, tuple(fixed), (), unplanned, closed, seeing,
                         moon_illum, 0.0, METHOD, (f"no {constraints.twilight} darkness tonight",))
    seeing_out = [q for q in requests if q.max_seeing_arcsec is not None and seeing > q.max_seeing_arcsec]
    requests = [q for q in requests if q not in seeing_out]
    step = SLOT_MIN / 1440.0
    n_slots = int(np.floor((window_end_jd - window_start_jd) / step + 1e-9))
    jd = window_start_jd + step * np.arange(n_slots + 1)
    unplanned = [Unplanned(q.key, q.target, q.purpose, q.count, 0,
                           f"seeing {seeing:g}″ is worse than its limit {q.max_seeing_arcsec:g}″")
                 for q in seeing_out]
    if not requests:
        gaps = _gaps(window_start_jd, window_end_jd, list(fixed), closed)
        return NightPlan(night, constraints, window_start_jd, window_end_jd, tuple(fixed), gaps, tuple(unplanned),
                         closed, seeing, moon_illum, 0.0, METHOD, tuple(warnings))
    tab = build_slot_table(site, constraints, requests, eph, jd, closed, moon_illum, seeing)
    state = DispatchState(site, requests, tab, window_start_jd, covered_bins or {}, seeing, moon_illum)
    for v in fixed:
        state.occupy(v)
        state.fixed_ids.add(id(v))
    start = window_start_jd if not_before_jd is None else max(window_start_jd, not_before_jd)
    bound, body_min = _bound(site, state, fixed, start)
    state.set_prices(bound.price_per_min, bound.occupancy, body_min / 60.0)
    dispatch(state, start, fixed)
    fill_gaps(state, start)
    improve(state, start)
    relocate_patient(state, start)
    fill_gaps(state, start)
    if reassign(state, start):
        fill_gaps(state, start)
    visits = sorted(state.visits, key=lambda v: v.start_jd)
    planned_new = [v for v in visits if v not in fixed]
    visits = _number(visits, id_offset)
    for r, q in enumerate(requests):
        n = int(q.count - state.remaining[r])
        if state.remaining[r] > 0:
            never = tab.left[r, 0] == 0
            reason = ("never observable tonight within its constraints for its whole duration" if never
                      else "no time left among higher-value visits" if n == 0
                      else f"only {n} of {q.count} fit")
            unplanned.append(Unplanned(q.key, q.target, q.purpose, q.count, n, reason))
    value = float(sum(state.value_of.get(id(v), 0.0) for v in planned_new))
    gaps = _with_reasons(_gaps(window_start_jd, window_end_jd, visits, closed), tab, state.remaining > 0)
    return NightPlan(night, constraints, window_start_jd, window_end_jd, tuple(visits), gaps, tuple(unplanned),
                     closed, seeing, moon_illum, value, METHOD, tuple(warnings), bound.value, bound.method)


def _with_reasons(gaps, tab, wanted) -> tuple[Gap, ...]:
    """Each idle gap's true reason: ``goals met`` when a request's target is within its
    constraints in the gap but nothing more is wanted of any such target; otherwise
    ``nothing observable`` (no target up, or the ones still wanted do not hold for a whole
    visit there).  Closed gaps keep their reason."""
    out = []
    n = tab.ok.shape[1]
    for g in gaps:
        if g.reason != "idle":
            out.append(g)
            continue
        i0 = int(np.clip(np.floor((g.start_jd - tab.jd[0]) * 1440.0 / SLOT_MIN), 0, n))
        i1 = int(np.clip(np.ceil((g.end_jd - tab.jd[0]) * 1440.0 / SLOT_MIN), i0, n))
        up = tab.ok[:, i0:i1].any(axis=1)
        met = bool(up.any()) and not bool((up & wanted).any())
        out.append(replace(g, reason="goals met" if met else "nothing observable"))
    return tuple(out)


def _bound(site, state: DispatchState, fixed, start_jd: float):
    """The relaxation's bound (:mod:`planner.scheduling.bound`) on the new visits' value, and
    each request's shortest body (s)."""
    tab = state.tab
    step = SLOT_MIN / 1440.0
    a, b = tab.jd[:-1], tab.jd[1:]
    free = np.clip((b - np.maximum(a, start_jd)) / step, 0.0, 1.0)
    for v in fixed:  # time a fixed visit takes is not free
        free -= np.clip((np.minimum(b, v.end_jd) - np.maximum(a, v.start_jd)) / step, 0.0, 1.0)
    free = np.clip(free, 0.0, 1.0)
    body = np.where(tab.ok, tab.body_s, np.inf)
    body_min = np.min(body, axis=1)
    body_max = np.max(np.where(np.isfinite(body), body, 0.0), axis=1)
    longest_setup = float(setup_s(site, 180.0, True))
    scale = state.prio * state.shutter_h
    v_point = np.where(tab.ok, scale[:, None] * tab.eff, 0.0)
    body_min = np.where(np.isfinite(body_min), body_min, 0.0)
    # Every visit but the night's first slews from another target (or repeats its own):
    # its shortest setup joins its shortest time; the first visit's missing setup is paid
    # for by ``first`` (the value of the share of a visit that setup would be).
    # Predecessors: the other requests, the request itself when it repeats, the fixed visits.
    # A visit's grid points run unbroken from the one at or before its start to the one at or
    # after its end (DispatchState.holds): at least its shortest body's minutes + 1 of them,
    # less the holds check's 10⁻³-slot rounding at either end.  Only a request with such a run
    # (and a visit still wanted) can have a visit tonight, and so precede another.
    ok = in_long_runs(tab.ok, np.ceil(body_min / 60.0 / SLOT_MIN - 0.01).astype(int) + 1)
    can = ok.any(axis=1) & (state.remaining > 0)
    ra = np.concatenate([state.ra, [v.ra_deg for v in fixed]])
    dec = np.concatenate([state.dec, [v.dec_deg for v in fixed]])
    sep = angular_separation_deg(ra[:, None], dec[:, None], state.ra[None, :], state.dec[None, :])
    n = len(state.ra)
    sep[:n][~can] = np.inf
    sep[np.arange(n), np.arange(n)] = np.where(state.remaining > 1, 0.0, np.inf)
    cost = np.where(np.isfinite(sep), setup_s(site, np.where(np.isfinite(sep), sep, 0.0), False), np.inf)
    least_setup = np.min(cost, axis=0) if len(cost) else np.zeros(n)
    least_setup = np.where(np.isfinite(least_setup), least_setup, 0.0)  # a lone request: no predecessor
    shortest = body_min + least_setup
    # only a request that can have a visit tonight can have the night's first
    first = float(np.max(np.where(can & (shortest > 0), scale * least_setup / np.maximum(shortest, 1e-9), 0.0),
                         initial=0.0))
    b = night_bound(np.where(ok, v_point, 0.0), ok, free, state.remaining.astype(float), shortest / 60.0,
                    (0.5 * body_max + longest_setup) / 60.0, SLOT_MIN)
    return replace(b, value=b.value + first), body_min


def _number(visits: list[Visit], offset: int = 0) -> list[Visit]:
    """Number the new visits in time order, after ``offset`` (visits with an id keep it)."""
    from dataclasses import replace

    out, n = [], offset
    for v in visits:
        if v.id:
            out.append(v)
        else:
            n += 1
            out.append(replace(v, id=f"{n:02d}"))
    return out


def _gaps(w0, w1, visits, closed) -> tuple[Gap, ...]:
    """The window's time not in a visit, split into closed and idle stretches (≥ 1 minute)."""
    free, t = [], w0
    for v in sorted(visits, key=lambda v: v.start_jd):
        a = max(v.start_jd, w0)
        if a > t:
            free.append((t, min(a, w1)))
        t = max(t, min(v.end_jd, w1))
    if t < w1:
        free.append((t, w1))
    edges = [(max(a, w0), min(b, w1)) for a, b in closed if min(b, w1) > max(a, w0)]
    gaps = []
    for a, b in free:
        cuts = sorted({a, b} | {x for c in edges for x in c if a < x < b})
        for s, e in zip(cuts, cuts[1:]):
            if (e - s) * 1440.0 < 1.0:
                continue
            mid = 0.5 * (s + e)
            reason = "closed" if any(c0 <= mid <= c1 for c0, c1 in edges) else "idle"
            gaps.append(Gap(float(s), float(e), reason))
    return tuple(gaps)
