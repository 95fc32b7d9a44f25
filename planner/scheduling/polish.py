"""The night planner's last pass: the plan's places given out again, as an assignment.

The dispatch (:mod:`planner.scheduling.dispatch`) works forward: at each free
moment it starts the visit that should not wait, so a target still rising is
often taken early, at a poor airmass, while the hours where it would be best
go to others that could have gone elsewhere.  Once the plan stands, its visits'
places in the night are known; which request takes which place is then a linear
assignment problem (:func:`scipy.optimize.linear_sum_assignment`): places ×
requests, each request as often as it is wanted.  The score of request r in
place i is

    value(r at i) − AIRMASS_WEIGHT × shutter hours of r × airmass of r at i,

``value`` being the plan's objective (:mod:`planner.scheduling.night`), whose
efficiency already falls with airmass; the second term, small, prefers among
nearly equal assignments the one with the lower airmass (the night's
shutter-weighted mean airmass is what an observer reads first).

The plan is then rebuilt in time order: each place's request starts when the
visit before it ends (places that were back to back, or nearly, stay so) or,
after an idle gap, when the place started, with the real slew from the visit before; the
visit after a run keeps its science start and slews from the new one.  A place
whose request no longer fits (the slews took its time) is left empty.  The new
plan is kept only if every constraint holds over every rebuilt visit (and over
the next visit's new slew), no visit runs into the next fixed one or past the
night, and the plan's value does not fall; otherwise nothing changes.  So the pass never makes a plan worse or
invalid, and it may bring in a request the plan left out, when that is worth
more in some place.

Visits whose value depends on the others' times (phase coverage, a minimum
spacing between repeats), fixed visits and anything before ``t_min`` stay
where they are.
"""

from __future__ import annotations

import numpy as np

from planner.scheduling.dispatch import DispatchState, _reslew, _take_out
from planner.scheduling.visits import setup_s
from planner.sky.visibility import angular_separation_deg

#: Weight of airmass against value, in value per shutter-hour per unit of airmass.  Value is
#: priority × shutter hours × efficiency (≤ 1), so 0.3 trades 0.03 of a priority-1
#: shutter-hour for 0.1 in airmass: a tie-breaker, not a rival objective (our choice).
AIRMASS_WEIGHT = 0.3
#: A request may take a place when its visit there is at most this much longer than the
#: place's own (s): the rebuilt plan then keeps its shape (a minute: about one slew).
LONGER_S = 60.0
_DAY_S = 86400.0


def reassign(state: DispatchState, t_min: float) -> bool:
    """Give the movable visits' places out again (see the module docstring); True if kept."""
    from planner.scheduling.assignment import linear_sum_assignment

    key_index = {q.key: k for k, q in enumerate(state.requests)}
    visits = sorted(state.visits, key=lambda v: v.start_jd)
    places = [(n, v, key_index[v.request_key]) for n, v in enumerate(visits) if _movable(state, key_index, v, t_min)]
    if len(places) < 2:
        return False
    free_r = [r for r in range(len(state.requests)) if not state.has_phase[r] and state.spacing_d[r] <= 0]
    cols = [r for r in free_r for _ in range(int(state.remaining[r]) + sum(1 for _, _, k in places if k == r))]
    cols = np.array(cols, dtype=int)
    # Every place × every column at once (places down, columns across); -inf: the request
    # does not fit the place.
    sci0 = np.array([v.science_start_jd for _, v, _ in places])[:, None]
    start0 = np.array([v.start_jd for _, v, _ in places])[:, None]
    own = np.array([v.end_jd - v.science_start_jd for _, v, _ in places])[:, None]
    r_own = np.array([r for _, _, r in places])[:, None]
    c2 = np.broadcast_to(cols[None, :], (len(places), len(cols)))
    sci = np.broadcast_to(sci0, c2.shape)
    body, _ = state.body_at(c2, sci)
    end = sci + body / _DAY_S
    mid = 0.5 * (sci + end)
    ok = state.holds(c2, np.broadcast_to(start0, c2.shape), end) & (body <= own * _DAY_S + LONGER_S)
    ok |= c2 == r_own  # its own request always fits its place
    x = state.tab.airmass[c2, np.clip(state.slot(mid), 0, state.tab.airmass.shape[1] - 1)]
    s = state.value(c2, mid) - AIRMASS_WEIGHT * state.shutter_h[c2] * np.where(np.isfinite(x), x, 40.0)
    score = np.where(ok, s, -np.inf)
    rows, picked = linear_sum_assignment(-score)
    new_r = {places[i][0]: int(cols[j]) for i, j in zip(rows, picked)}
    if all(new_r[n] == r for n, _, r in places):
        return False
    return _rebuild(state, visits, places, new_r, t_min)


def _movable(state: DispatchState, key_index, v, t_min) -> bool:
    r = key_index.get(v.request_key)
    return (r is not None and id(v) not in state.fixed_ids and v.start_jd >= t_min - 1e-9
            and not state.has_phase[r] and state.spacing_d[r] <= 0)


def _rebuild(state: DispatchState, visits, places, new_r, t_min: float) -> bool:
    """Place the requests in their new places in time order; keep the result only if it is
    valid and worth at least as much as before (else restore the plan as it was)."""
    saved = (list(state.visits), dict(state.value_of), state.remaining.copy(), [list(t) for t in state.times])
    before = float(sum(state.value_of.get(id(v), 0.0) for v in state.visits if id(v) not in state.fixed_ids))
    for n, v, r in places:  # take the movable visits out
        _take_out(state.visits, v)
        state.value_of.pop(id(v), None)
        state.remaining[r] += 1
        mid = 0.5 * (v.science_start_jd + v.end_jd)
        state.times[r] = [x for x in state.times[r] if x != mid]
    movable = {n for n, _, _ in places}
    prev, prev_new, ok = None, False, True
    for n, v in enumerate(visits):
        if n not in movable:
            if prev_new:  # a rebuilt visit before it: it must still fit after it
                v = _after(state, v, prev)
                if v is None:
                    ok = False
                    break
            prev, prev_new = v, False
            continue
        r = new_r[n]
        start = v.start_jd
        if prev is not None and prev.end_jd >= v.start_jd - LONGER_S / _DAY_S:
            start = max(prev.end_jd, t_min)  # back to back (or nearly): still so, never before t_min
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
        su, _ = state.setup(np.array([r]), ra, dec, filt)
        sci = start + su[0] / _DAY_S
        body, _ = state.body_at(np.array([r]), np.array([sci]))
        end = sci + body[0] / _DAY_S
        if not bool(state.holds(np.array([r]), np.array([start]), np.array([end]))[0]) or end > state.tab.jd[-1]:
            continue  # the place is lost (slews took its time): left empty, the value decides
        prev, prev_new = state.place(r, start, ra, dec, filt), True
    after = float(sum(state.value_of.get(id(v), 0.0) for v in state.visits if id(v) not in state.fixed_ids))
    if ok and after >= before:
        return True
    state.visits[:], state.value_of, state.remaining[:], state.times[:] = saved
    return False


def _after(state: DispatchState, v, prev):
    """Visit ``v`` stays; the rebuilt visit ``prev`` before it must end in time for it — for a
    fixed visit by its start, otherwise by its science start less its slew from ``prev``
    (which must hold too; :func:`_reslew` then moves its start).  The visit as it now
    stands, or None when it does not fit."""
    if id(v) in state.fixed_ids:
        return v if prev.end_jd <= v.start_jd + 1e-9 else None
    slew = float(angular_separation_deg(prev.ra_deg, prev.dec_deg, v.ra_deg, v.dec_deg))
    su = float(setup_s(state.site, slew, prev.exposures[-1].filter != v.exposures[0].filter)) / _DAY_S
    start = v.science_start_jd - su
    r = next((k for k, q in enumerate(state.requests) if q.key == v.request_key), None)
    if prev.end_jd > start + 1e-9 or (r is not None and not bool(
            state.holds(np.array([r]), np.array([start]), np.array([v.end_jd]))[0])):
        return None
    k = next(j for j, w in enumerate(state.visits) if w is v)
    _reslew(state, v, prev)
    return state.visits[k]
