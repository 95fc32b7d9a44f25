"""The night planner's search: relaxation-guided forward dispatch, gap filling, local search.

Works on a :class:`~planner.scheduling.slot_table.SlotTable` through a
:class:`DispatchState` (what is placed, where the telescope points, what is
still wanted); the method and its reasons are in :mod:`planner.scheduling.night`.
"""

from __future__ import annotations

import math

import numpy as np

from planner.scheduling.slot_table import SLOT_MIN, SlotTable, next_bad_slot
from planner.scheduling.quality import snr_planned
from planner.scheduling.visits import Exposure, Visit, setup_s, shutter_s
from planner.sky.visibility import angular_separation_deg

#: Look-ahead horizon of the urgency term, minutes.
LOOKAHEAD_MIN = 60.0
#: A patient visit (deep frames) waits while its airmass now exceeds the best still to
#: come tonight by more than this factor (our choice: 5 %, about 0.05 mag of V extinction
#: at airmass 1.2 on a good site — from memory).
PATIENCE_AIRMASS = 1.05
#: A visit waits when a later start tonight is worth more than starting now by this share
#: of its full value (our choice: small, so that with time to spare a visit sits within a
#: few minutes of its best moment; larger values would trade placement for packing).
WAIT_GAIN = 2e-4
#: The relaxed optimum (:mod:`planner.scheduling.bound`) picks the visit that starts now when it
#: gives a request at least this share of a visit's time over the visit's span, counted from
#: this many minutes before now (real plans fall behind it by their slews).
LP_SHARE_MIN = 0.2
LP_LAG_MIN = 15.0
#: A visit that adds no new phase bin keeps this share of its value (repeat
#: measurements still help a period search).
REPEAT_PHASE_VALUE = 0.3
_DAY_S = 86400.0


def _clip(x, lo, hi):
    """np.clip's values for the dispatch's small index arrays, at a fraction of its cost (the
    dispatch calls it thousands of times a night; np.clip's checks dominate at these sizes)."""
    return np.minimum(np.maximum(x, lo), hi)


class DispatchState:
    """The dispatch's working state: what is placed, where the telescope points, what is wanted."""

    def __init__(self, site, requests, tab: SlotTable, t0: float, covered, seeing=1.0, moon_illum=0.0):
        self.site, self.requests, self.tab, self.t0 = site, requests, tab, t0
        self.ra = np.array([q.ra_deg for q in requests])
        self.dec = np.array([q.dec_deg for q in requests])
        # the value's scale: the request's own frames (for a sized request, its starting guess)
        self.shutter_h = np.array([shutter_s(q.exposures) for q in requests]) / 3600.0
        self.seeing, self.moon_illum = seeing, moon_illum
        self.cum_price = np.zeros(len(tab.jd))  # time prices (bound's duals), cumulative per slot
        self.best_later = np.full((len(requests), len(tab.jd) + 1), -np.inf)
        self.cum_occ = np.zeros((len(requests), len(tab.jd)))  # the relaxed optimum's minutes, cumulative
        self.body_min = np.ones(len(requests))
        self.next_event = np.zeros((len(requests), len(tab.jd) + 1), dtype=int)
        self.next_startable = self.next_event
        self.prio = np.array([q.priority for q in requests], dtype=float)
        self.first_filter = np.array([q.exposures[0].filter for q in requests], dtype=object)
        self.last_filter = np.array([q.exposures[-1].filter for q in requests], dtype=object)
        self.has_phase = np.array([bool(q.phase_periods_d) for q in requests])
        self.any_phase = bool(self.has_phase.any())
        self.airmass_nan = np.where(np.isfinite(tab.airmass), tab.airmass, np.nan)  # for interpolation
        self.patient = np.array([q.patient for q in requests])
        self.remaining = np.array([q.count for q in requests], dtype=int)
        self.count = self.remaining.copy()  # visits wanted at the start
        self.spacing_d = np.array([q.min_spacing_min for q in requests]) / 1440.0
        self.any_spacing = bool(np.any(self.spacing_d > 0))
        self.times: list[list[float]] = [[] for _ in requests]  # science mid-times placed, per request
        self.visits: list[Visit] = []
        self.value_of: dict[int, float] = {}
        self.fixed_ids: set[int] = set()
        # Separations from each request's target to every request's, once (one array call
        # instead of one per pointing): the slews the dispatch and the local search look up.
        sep = angular_separation_deg(self.ra[:, None], self.dec[:, None], self.ra[None, :], self.dec[None, :])
        self._slews: dict[tuple[float, float], np.ndarray] = {
            (float(a), float(d)): row for a, d, row in zip(self.ra, self.dec, sep)}
        self.phase = []
        for q in requests:
            if q.phase_periods_d:
                p, e = np.array(q.phase_periods_d), np.array(q.phase_epochs_jd)
                cov = covered.get(q.key)
                cov = np.zeros((len(p), q.phase_bins), bool) if cov is None else np.array(cov, bool)
                self.phase.append((p, e, cov))
            else:
                self.phase.append(None)

    def slot(self, t):
        if isinstance(t, float):  # one moment (most calls): the same arithmetic without numpy's overhead
            return math.floor((t - self.tab.jd[0]) / (SLOT_MIN / 1440.0) + 1e-3)
        return np.floor((np.asarray(t) - self.tab.jd[0]) / (SLOT_MIN / 1440.0) + 1e-3).astype(int)

    def slot_up(self, t):
        if isinstance(t, float):
            return math.ceil((t - self.tab.jd[0]) / (SLOT_MIN / 1440.0) - 1e-3)
        return np.ceil((np.asarray(t) - self.tab.jd[0]) / (SLOT_MIN / 1440.0) - 1e-3).astype(int)

    def holds(self, r, a, b):
        """Request(s) r satisfy every constraint over [a, b] (arrays broadcast)."""
        i0, i1 = self.slot(a), self.slot_up(b)
        n = len(self.tab.jd)
        inside = (i0 >= 0) & (i1 < n)
        return inside & (self.tab.next_bad[r, _clip(i0, 0, n)] > _clip(i1, 0, n))

    def setup(self, r, ra, dec, filt):
        slew = np.zeros(np.shape(r)) if ra is None else self.slews_from(ra, dec)[r]
        changes = self.first_filter[r] != filt
        return setup_s(self.site, slew, changes), slew

    def slews_from(self, ra, dec) -> np.ndarray:
        """Separations (degrees) from a pointing to every request's target, computed once per pointing."""
        row = self._slews.get((ra, dec))
        if row is None:
            row = self._slews[(ra, dec)] = angular_separation_deg(ra, dec, self.ra, self.dec)
        return row

    def spaced(self, r, mid):
        ok = np.ones(np.shape(r), bool)
        if not self.any_spacing:
            return ok
        check = (self.spacing_d[r] > 0) & (self.remaining[r] < self.count[r])
        for n in np.flatnonzero(np.ravel(check)):
            k = np.ravel(r)[n]
            if self.times[k]:
                ok.flat[n] = np.min(np.abs(np.array(self.times[k]) - mid.flat[n])) >= self.spacing_d[k] - 1e-9
        return ok

    def body_at(self, r, sci):
        """Body time (s) of request(s) r with science from ``sci``, sized at its middle, and that slot."""
        n = len(self.tab.jd) - 1
        b0 = self.tab.body_s[r, _clip(self.slot(sci), 0, n)]
        i = _clip(self.slot(sci + 0.5 * np.where(np.isfinite(b0), b0, 0.0) / _DAY_S), 0, n)
        b = np.where(np.isfinite(b0), self.tab.body_s[r, i], np.inf)
        return np.where(np.isfinite(b), b, 1e7), i  # out of reach: far past the night, never fits

    def value(self, r, mid, phase=True):
        i = _clip(self.slot(mid), 0, len(self.tab.jd) - 1)
        out = self.prio[r] * self.shutter_h[r] * self.tab.eff[r, i]
        if not (phase and self.any_phase):
            return out
        gain = np.ones(np.shape(r))
        for n in np.flatnonzero(np.ravel(self.has_phase[r])):
            k = np.ravel(r)[n]
            ph = self.phase[k]
            if ph is not None:
                p, e, cov = ph
                b = np.floor(np.mod((mid.flat[n] - e) / p, 1.0) * cov.shape[1]).astype(int) % cov.shape[1]
                new = ~cov[np.arange(len(p)), b]
                gain.flat[n] = REPEAT_PHASE_VALUE + (1 - REPEAT_PHASE_VALUE) * float(np.mean(new))
        return out * gain

    def value_one(self, r: int, mid: float) -> float:
        """:meth:`value` of one request at one moment (the same arithmetic, without arrays)."""
        return float(self.value(np.array([r]), np.array([mid]))[0]) if self.has_phase[r] else float(
            self.prio[r] * self.shutter_h[r] * self.tab.eff[r, min(max(self.slot(mid), 0), len(self.tab.jd) - 1)])

    def setup_one(self, r: int, ra, dec, filt) -> tuple[float, float]:
        """:meth:`setup` of one request (set-up seconds, slew degrees), without arrays."""
        slew = 0.0 if ra is None else float(self.slews_from(ra, dec)[r])
        tel = self.site.telescope
        return ((slew / tel.slew_rate_deg_s + tel.settle_s if slew > 1e-3 else 0.0)
                + (tel.filter_change_s if self.first_filter[r] != filt else 0.0)), slew

    def body_one(self, r: int, sci: float) -> tuple[float, int]:
        """:meth:`body_at` of one request at one moment, without arrays."""
        n = len(self.tab.jd) - 1
        b0 = float(self.tab.body_s[r, min(max(self.slot(sci), 0), n)])
        i = min(max(self.slot(sci + 0.5 * (b0 if math.isfinite(b0) else 0.0) / _DAY_S), 0), n)
        b = float(self.tab.body_s[r, i]) if math.isfinite(b0) else math.inf
        return (b if math.isfinite(b) else 1e7), i

    def price(self, a, b):
        """The bound's price of the time [a, b] (value per minute of each slot, summed)."""
        x = (np.asarray(a) - self.tab.jd[0]) / (SLOT_MIN / 1440.0)
        y = (np.asarray(b) - self.tab.jd[0]) / (SLOT_MIN / 1440.0)
        grid = np.arange(len(self.tab.jd))
        return np.interp(y, grid, self.cum_price) - np.interp(x, grid, self.cum_price)

    def occupancy(self, r, a, b):
        """Minutes of [a, b] the relaxed optimum gives request(s) r (1-D), as a share of its visit."""
        n = len(self.tab.jd) - 1
        to_slot = SLOT_MIN / 1440.0
        lo = _clip(np.floor((np.asarray(a) - self.tab.jd[0]) / to_slot), 0, n).astype(int)
        hi = _clip(np.ceil((np.asarray(b) - self.tab.jd[0]) / to_slot), 0, n).astype(int)
        got = self.cum_occ[r, hi] - self.cum_occ[r, lo]
        return got / np.maximum(self.body_min[r], 1e-9)

    def set_prices(self, price_per_min, occupancy=None, body_min_min=None):
        """Time prices from the bound, and each request's best net value from every slot on."""
        self.cum_price = np.concatenate([[0.0], np.cumsum(price_per_min * SLOT_MIN)])
        if occupancy is not None:
            self.cum_occ = np.concatenate([np.zeros((len(self.requests), 1)), np.cumsum(occupancy, axis=1)], axis=1)
            self.body_min = np.asarray(body_min_min, dtype=float)
        jd = self.tab.jd
        r = np.arange(len(self.requests))[:, None]
        sci = np.broadcast_to(jd[None, :], (len(self.requests), len(jd)))
        b, _ = self.body_at(r, sci)
        end = sci + b / _DAY_S
        net = self.value(r, sci + 0.5 * b / _DAY_S, phase=False) - self.price(sci, end)
        startable = self.holds(r, sci, end)
        net = np.where(startable, net, -np.inf)
        self.best_later[:, :-1] = np.maximum.accumulate(net[:, ::-1], axis=1)[:, ::-1]
        # Slots where a request might stop waiting (its best remaining start, the relaxed
        # optimum's time for it, or its patience running out): the dispatch, idle, jumps
        # from one such slot to the next instead of stepping minute by minute.
        scale = (self.prio * self.shutter_h)[:, None]
        event = net + WAIT_GAIN * scale >= self.best_later[:, 1:]
        # the relaxed optimum's pick looks a visit's length ahead (and a slot either side)
        ahead = int(np.ceil(np.max(np.where(startable, b, 0.0)) / 60.0 / SLOT_MIN)) + 2
        idx = np.arange(len(jd))
        occ_ahead = self.cum_occ[:, np.minimum(idx + ahead, len(jd) - 1)] - self.cum_occ[:, np.maximum(idx - 1, 0)]
        event |= occ_ahead > 0
        patient_ok = self.tab.airmass <= PATIENCE_AIRMASS * self.tab.best_after[:, :-1]
        event |= self.patient[:, None] & patient_ok
        priced = np.append(price_per_min > 0, False)[None, :]  # the regret rule may start something
        self.next_event = next_bad_slot(~(event & startable | priced & startable))  # first at or after i
        self.next_startable = next_bad_slot(~startable)

    def place(self, r, start, ra, dec, filt) -> Visit:
        r = int(r)
        su, slew = self.setup_one(r, ra, dec, filt)
        sci = start + su / _DAY_S
        body, i = self.body_one(r, sci)
        end = sci + body / _DAY_S
        mid = 0.5 * (sci + end)
        q = self.requests[r]
        exposures = q.exposures
        if q.sized:  # the frames that meet the goal at the visit's middle
            e = q.exposures[0]
            exposures = (Exposure(e.filter, int(self.tab.frames[r, i]), float(self.tab.frame_s[r, i])),)
        x = np.interp([sci, end, mid], self.tab.jd, self.airmass_nan[r])
        moon_sep = float(np.interp(mid, self.tab.jd, self.tab.moon_sep[r]))
        snr = None if q.magnitude is None else snr_planned(
            self.site, q, exposures, x[2], moon_sep, float(np.interp(mid, self.tab.jd, self.tab.moon_alt)),
            self.moon_illum, self.seeing)
        v = Visit("", q.key, q.target, q.ra_deg, q.dec_deg, q.purpose, exposures, float(start), float(sci),
                  float(end), q.priority, float(slew), float(x[0]), float(x[1]), float(x[2]),
                  moon_sep, q.notes, best_airmass=float(self.tab.best_airmass[r]), snr_planned=snr)
        self.value_of[id(v)] = self.value_one(r, mid)
        self.occupy(v, r)
        return v

    def occupy(self, v: Visit, r: int | None = None):
        if r is None:
            keys = [k for k, q in enumerate(self.requests) if q.key == v.request_key]
            r = keys[0] if keys else None
        self.visits.append(v)
        if r is not None:
            self.remaining[r] = max(self.remaining[r] - 1, 0)
            self.times[r].append(0.5 * (v.science_start_jd + v.end_jd))
            ph = self.phase[r]
            if ph is not None:
                p, e, cov = ph
                mid = 0.5 * (v.science_start_jd + v.end_jd)
                b = np.floor(np.mod((mid - e) / p, 1.0) * cov.shape[1]).astype(int) % cov.shape[1]
                cov[np.arange(len(p)), b] = True


def _pointing(state: DispatchState, before_jd: float):
    """Where the telescope points, and which filter is in, at ``before_jd``: the last
    visit ending by then, else parked at the zenith with no filter known."""
    prior = [v for v in state.visits if v.end_jd <= before_jd + 1e-9]
    if prior:
        v = max(prior, key=lambda v: v.end_jd)
        return v.ra_deg, v.dec_deg, v.exposures[-1].filter
    return None, None, None


def _busy_until(state: DispatchState, t: float) -> float | None:
    """End of a placed visit covering t, if any."""
    for v in state.visits:
        if v.start_jd - 1e-9 <= t < v.end_jd:
            return v.end_jd
    return None


def _next_start(state: DispatchState, t: float) -> float:
    later = [v.start_jd for v in state.visits if v.start_jd > t + 1e-9]
    return min(later) if later else np.inf


def dispatch(state: DispatchState, t: float, fixed) -> None:
    """Forward dispatch: at each free moment start the best visit that should not wait.

    A request waits while a start later tonight would be worth clearly more (its
    value net of the time's price, :meth:`DispatchState.set_prices`) than starting
    now.  When everything feasible would wait, the telescope idles a slot if that
    time is free (price 0: the relaxation does not need it) and otherwise starts
    the best of them, since priced time left idle is lost.
    """
    step = SLOT_MIN / 1440.0
    end = state.tab.jd[-1]
    lookahead = LOOKAHEAD_MIN / SLOT_MIN
    while t < end and state.remaining.any():
        busy = _busy_until(state, t)
        if busy is not None:
            t = busy
            continue
        ra, dec, filt = _pointing(state, t)
        r = np.flatnonzero(state.remaining > 0)
        su, _ = state.setup(r, ra, dec, filt)
        body, _ = state.body_at(r, t + su / _DAY_S)
        d = (su + body) / _DAY_S
        limit = _next_start(state, t)  # a fixed visit later on bounds this one
        feas = state.holds(r, t, t + d) & (t + d <= min(limit, end) + 1e-9)
        mid = t + su / _DAY_S + 0.5 * body / _DAY_S
        spaced = state.spaced(r, mid)
        held = feas.copy()
        if not (feas & spaced).any():
            t = _look_again(state, t, r, held, spaced, mid, None)
            continue
        feas &= spaced
        i = min(max(int(state.slot(t)), 0), state.tab.left.shape[1] - 1)
        # The relaxed optimum's choice: the request it gives most of this time (a little late is fine).
        share = np.where(feas, state.occupancy(r, t - LP_LAG_MIN / 1440.0, t + d), 0.0)
        if share.max() >= LP_SHARE_MIN:
            best = share >= share.max() - 1e-9
            k = int(r[int(np.argmax(np.where(best, state.value(r, mid), -np.inf)))])
            t = state.place(k, t, ra, dec, filt).end_jd
            continue
        now = state.value(r, mid, phase=False) - state.price(t, t + d)
        later = state.best_later[r, min(i + 1, state.best_later.shape[1] - 1)]
        scale = state.prio[r] * state.shutter_h[r]
        waits = (later > now + WAIT_GAIN * scale) & (state.tab.left[r, i] > 0)
        # Patience: a deep frame waits while a clearly better airmass is still to come tonight
        # and its window is not closing.
        x_now = state.tab.airmass[r, min(i, state.tab.airmass.shape[1] - 1)]
        waits |= state.patient[r] & (x_now > PATIENCE_AIRMASS * state.tab.best_after[r, i]) & (
            state.tab.left[r, i] > lookahead)
        go = feas & ~waits
        if not go.any():
            free_now = state.price(t, t + step) <= 1e-12
            if free_now or (state.patient[r] & feas).all():
                t = _look_again(state, t, r, held, spaced, mid, feas)
                continue
            # priced time: the visit that loses least against its own best later start goes
            k = int(r[int(np.argmax(np.where(feas, now - later, -np.inf)))])
            t = state.place(k, t, ra, dec, filt).end_jd
            continue
        urgency = 1.0 + lookahead / np.maximum(state.tab.left[r, i], 1.0)
        score = np.where(go, state.value(r, mid) * urgency / (d * 1440.0), -np.inf)
        k = int(r[int(np.argmax(score))])
        v = state.place(k, t, ra, dec, filt)
        t = v.end_jd


def _skip(state: DispatchState, t: float, r, events) -> float:
    """The next moment worth a look while nothing starts: a slot on, or one slot before the
    next of ``events`` (first slot at or after i where a request of r becomes startable, or
    might stop waiting: :meth:`DispatchState.set_prices`), whichever is later; never past a
    placed visit's start, where the telescope's position changes."""
    step = SLOT_MIN / 1440.0
    i = int(state.slot(t))
    one = max(state.tab.jd[0] + (i + 1) * step, t + 1e-3 * step)
    n = state.next_event.shape[1] - 1
    nxt = int(np.min(events[r, min(max(i + 1, 0), n)])) - 1
    jump = state.tab.jd[0] + nxt * step if nxt > i + 1 else one
    return float(min(max(one, jump), _next_start(state, t)))


def _look_again(state: DispatchState, t: float, r, held, spaced, mid, waiting) -> float:
    """When nothing starts at t: the next moment something might — a request not holding
    now becomes startable, one held but too close to its own visits is spaced again, or one
    ``waiting`` reaches an event (:meth:`DispatchState.set_prices`); at least a slot on."""
    end = state.tab.jd[-1]
    out = _skip(state, t, r[~held], state.next_startable) if (~held).any() else end
    if (held & ~spaced).any():
        out = min(out, _spaced_again(state, t, r[held & ~spaced], mid[held & ~spaced]))
    if waiting is not None and waiting.any():
        out = min(out, _skip(state, t, r[waiting], state.next_event))
    return max(out, min(t + 1e-3 * SLOT_MIN / 1440.0, end))


def _spaced_again(state: DispatchState, t: float, r, mid) -> float:
    """Earliest start at which one of requests r (feasible now, too close to a visit of its
    own) could be spaced from its visits before: at least a slot on."""
    step = SLOT_MIN / 1440.0
    one = max(state.tab.jd[0] + (int(state.slot(t)) + 1) * step, t + 1e-3 * step)
    best = np.inf
    for k, m in zip(r, mid):
        before = [x for x in state.times[k] if x <= m + state.spacing_d[k]]
        if before:
            # a hundredth of a second past the spacing, so that rounding never leaves it short
            best = min(best, t + max(before) + state.spacing_d[k] - m + 1e-7)
    return float(min(max(one, best), _next_start(state, t))) if np.isfinite(best) else one


def fill_gaps(state: DispatchState, t_min: float) -> None:
    """Local search: insert what still wants time into the idle gaps, best value first.

    Each gap's best candidate is kept between insertions: placing request r only
    lowers r's own worth elsewhere (fewer wanted, phases covered, spacing), so only
    the gaps whose best was r, and the two pieces of the gap it went into, are
    searched again."""
    cache: dict[tuple[float, float], tuple | None] = {}
    while state.remaining.any():
        best, live, gaps = None, {}, _idle_gaps(state, t_min)
        new = [gap for gap in gaps if (gap[0], gap[1]) not in cache]  # the gaps searched (again), at once
        cache.update(zip([(gap[0], gap[1]) for gap in new], _best_in_gaps(state, new) if new else []))
        for g0, g1, _, _, _ in gaps:
            cand = live[(g0, g1)] = cache[(g0, g1)]
            if cand is not None and (best is None or cand[0] > best[0]):
                best = cand
        if best is None:
            return
        _, r, start, prev, nxt = best
        cache = {k: c for k, c in live.items() if c is None or c[1] != r}
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
        v = state.place(r, start, ra, dec, filt)
        if nxt is not None and id(nxt) not in state.fixed_ids:
            _reslew(state, nxt, v)


def _idle_gaps(state: DispatchState, t_min: float) -> list:
    """The plan's idle gaps of two slots or more after ``t_min``, as (g0, g1, prev, nxt, None)."""
    visits = sorted(state.visits, key=lambda v: v.start_jd)
    gaps = []
    for g0 in [t_min] + [v.end_jd for v in visits if v.end_jd > t_min]:
        if _busy_until(state, g0) is not None:
            continue
        prev = max((v for v in visits if v.end_jd <= g0 + 1e-9), key=lambda v: v.end_jd, default=None)
        nxt = next((v for v in visits if v.start_jd >= g0 - 1e-9), None)
        g1 = nxt.start_jd if nxt is not None else state.tab.jd[-1]
        if g1 - g0 >= 2 * SLOT_MIN / 1440.0:
            gaps.append((g0, g1, prev, nxt, None))
    return gaps


def relocate_patient(state: DispatchState, t_min: float) -> None:
    """Local search for patient visits (deep frames): one placed clearly above the least
    airmass its target reaches tonight (:data:`PATIENCE_AIRMASS`) is taken out and put in
    the idle gap where it is worth most, when that is worth more than where it was.

    The dispatch follows the relaxed optimum, which may give a short deep frame a poor
    airmass because the minutes at its best are priced by longer visits; on the night as
    planned there is often room near its best all the same.  The take-one-out search
    (:func:`improve`) looks only at a visit's own place; this looks at every gap."""
    key_index = {q.key: k for k, q in enumerate(state.requests)}
    for old in sorted(state.visits, key=lambda v: v.start_jd):
        r = key_index.get(old.request_key)
        if (r is None or not state.patient[r] or state.has_phase[r] or state.requests[r].count > 1
                or id(old) in state.fixed_ids or old.start_jd < t_min - 1e-9
                or not old.airmass_mid > PATIENCE_AIRMASS * state.tab.best_airmass[r]):
            continue
        before = state.value_of.get(id(old), 0.0)
        saved = (list(state.visits), state.times[r])
        _take_out(state.visits, old)
        state.remaining[r] += 1
        state.times[r] = []
        gaps = _idle_gaps(state, t_min)
        found = [c for c in (_best_in_gaps(state, gaps, only=r) if gaps else []) if c is not None]
        best = max(found, key=lambda c: c[0], default=None)
        if best is None or best[0] <= before * (1.0 + 1e-6):
            state.visits[:], state.times[r] = saved
            state.remaining[r] -= 1
            continue
        state.value_of.pop(id(old), None)
        _, k, start, prev, nxt = best
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
        v = state.place(k, start, ra, dec, filt)
        if nxt is not None and id(nxt) not in state.fixed_ids:
            _reslew(state, nxt, v)


def _best_in_gap(state: DispatchState, g0, g1, prev, nxt):
    """The most valuable visit that fits the gap [g0, g1] between ``prev`` and ``nxt``:
    (value, request, start, prev, nxt), or None."""
    return _best_in_gaps(state, [(g0, g1, prev, nxt, None)])[0]


def _best_in_gaps(state: DispatchState, gaps, only: int | None = None) -> list:
    """:func:`_best_in_gap` of several gaps at once, ``gaps`` being (g0, g1, prev, nxt, out)
    with ``out`` a request whose one visit is taken out for the search (the local search
    asks this of every visit in turn; None: the plan as it is).  The requests still wanting
    time are searched, with ``out`` among them, over every start slot of each gap: gaps ×
    requests × starts in one set of array operations, each gap's own rows and starts
    masked (the same arithmetic, element by element, as one gap at a time).  ``only``: search
    that one request alone."""
    step = SLOT_MIN / 1440.0
    base = np.flatnonzero(state.remaining > 0) if only is None else np.array([only])
    rows = [base if out is None else np.union1d(base, [out]) for _, _, _, _, out in gaps]
    n_g, n_r = len(gaps), max(len(x) for x in rows)
    if n_r == 0:
        return [None] * n_g
    r = np.zeros((n_g, n_r), dtype=int)
    real = np.zeros((n_g, n_r), dtype=bool)
    out_col = np.zeros((n_g, n_r), dtype=bool)  # the request taken out: its visit is not there
    for g, (x, gap) in enumerate(zip(rows, gaps)):
        r[g, :len(x)], real[g, :len(x)] = x, True
        if gap[4] is not None:
            out_col[g, :len(x)] = x == gap[4]
    g0 = np.array([gap[0] for gap in gaps])
    g1 = np.array([gap[1] for gap in gaps])
    n_off = [len(np.arange(0.0, b - a, step)) for a, b in zip(g0, g1)]
    offsets = np.arange(max(n_off)) * step  # candidate starts in the gap, slot by slot
    in_gap = np.arange(len(offsets))[None, :] < np.array(n_off)[:, None]
    su = np.empty((n_g, n_r))
    for g, (_, _, prev, _, _) in enumerate(gaps):
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
        su[g] = state.setup(r[g], ra, dec, filt)[0]
    r3 = r[:, :, None]
    starts = g0[:, None, None] + offsets[None, None, :]
    sci = starts + su[:, :, None] / _DAY_S
    body, _ = state.body_at(r3, sci)
    ends = sci + body / _DAY_S
    fits = state.holds(r3, starts, ends) & (ends <= g1[:, None, None] + 1e-9)
    fits &= in_gap[:, None, :] & real[:, :, None]
    # the next visit keeps its science start; its slew now comes from the new visit
    key_index = {}
    for k, q in enumerate(state.requests):
        key_index.setdefault(q.key, k)
    for g, (_, _, _, nxt, _) in enumerate(gaps):
        if nxt is None:
            continue
        k = key_index.get(nxt.request_key)
        if k is not None and id(nxt) not in state.fixed_ids:
            slew = state.slews_from(nxt.ra_deg, nxt.dec_deg)[r[g]]
            changes = state.last_filter[r[g]] != nxt.exposures[0].filter
            new_start = nxt.science_start_jd - setup_s(state.site, slew, changes) / _DAY_S
            fits[g] &= ends[g] <= new_start[:, None] + 1e-9
            fits[g] &= state.holds(np.full(n_r, k)[:, None], new_start[:, None], nxt.end_jd)
        else:
            fits[g] &= ends[g] <= nxt.start_jd + 1e-9
    mids = 0.5 * (sci + ends)
    for g, j in zip(*np.nonzero((state.spacing_d[r] > 0) & real & ~out_col & fits.any(axis=2))):
        placed = np.array(state.times[r[g, j]])  # repeats keep their spacing
        if placed.size:
            near = np.min(np.abs(mids[g, j][:, None] - placed[None, :]), axis=1)
            fits[g, j] &= near >= state.spacing_d[r[g, j]] - 1e-9
    # each request at its most valuable start in the gap (the earliest of equals)
    val = np.where(fits, state.value(np.broadcast_to(r3, mids.shape), mids, phase=False), -np.inf)
    first = np.argmax(val, axis=2)
    if state.patient[r].any():  # patient visits take their best airmass within the gap
        i = _clip(state.slot(mids), 0, state.tab.airmass.shape[1] - 1)
        x = np.where(fits, state.tab.airmass[r3, i], np.inf)
        first = np.where(state.patient[r], np.argmin(x, axis=2), first)
    any_fit = fits.any(axis=2)
    t = g0[:, None] + offsets[first]
    mid = np.take_along_axis(mids, first[:, :, None], axis=2)[:, :, 0]
    spaced = state.spaced(r, mid) | out_col  # the request taken out has no visit to keep apart from
    val = np.where(any_fit & spaced, state.value(r, mid), -np.inf)
    j = np.argmax(val, axis=1)
    found = []
    for g, gap in enumerate(gaps):
        v = val[g, j[g]]
        found.append((float(v), int(r[g, j[g]]), float(t[g, j[g]]), gap[2], gap[3])
                     if any_fit[g].any() and np.isfinite(v) else None)
    return found


def _reslew(state: DispatchState, nxt: Visit, new: Visit) -> None:
    """The visit after an inserted one slews from the new position; its science start stays."""
    from dataclasses import replace

    slew = float(angular_separation_deg(new.ra_deg, new.dec_deg, nxt.ra_deg, nxt.dec_deg))
    su = float(setup_s(state.site, slew, new.exposures[-1].filter != nxt.exposures[0].filter)) / _DAY_S
    moved = replace(nxt, start_jd=nxt.science_start_jd - su, slew_deg=slew)
    i = next(n for n, v in enumerate(state.visits) if v is nxt)
    state.visits[i] = moved
    state.value_of[id(moved)] = state.value_of.pop(id(nxt), 0.0)


def improve(state: DispatchState, t_min: float) -> None:
    """Local search: take each new visit out, least valuable first, and put back the most
    valuable visit that fits its place (itself elsewhere in the span, or a request still
    waiting); keep the change only when the plan's value rises.  Visits of requests with
    phase coverage or repeats stay (their value depends on the others' places).

    Until a change is kept, every visit's search sees the same plan (less that visit), so
    those searches are made at once (:func:`_best_in_gaps`); after one, each is made in turn."""
    order = sorted((v for v in state.visits if id(v) not in state.fixed_ids and v.start_jd >= t_min - 1e-9),
                   key=lambda v: state.value_of.get(id(v), 0.0))
    key_index = {q.key: k for k, q in enumerate(state.requests)}
    items = [(old, key_index.get(old.request_key)) for old in order]
    items = [(old, r) for old, r in items
             if r is not None and not state.has_phase[r] and state.requests[r].count <= 1]
    in_order = sorted(state.visits, key=lambda v: v.start_jd)
    gaps = [_gap_without(state, old, t_min, in_order) for old, _ in items]
    ahead = _best_in_gaps(state, [gap + (r,) for gap, (_, r) in zip(gaps, items)]) if items else []
    changed = False
    for (old, r), gap, cand in zip(items, gaps, ahead):
        if not any(v is old for v in state.visits):
            continue
        g0, g1, prev, nxt = _gap_without(state, old, t_min) if changed else gap
        before = state.value_of.get(id(old), 0.0)
        _take_out(state.visits, old)
        state.remaining[r] += 1
        saved = state.times[r]
        state.times[r] = []
        if changed:
            cand = _best_in_gap(state, g0, g1, prev, nxt)
        if cand is None or cand[0] <= before * (1.0 + 1e-6):
            state.visits.append(old)
            state.remaining[r] -= 1
            state.times[r] = saved
            continue
        changed = True
        state.value_of.pop(id(old), None)
        _, k, start, prev, nxt = cand
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg,
                                                                 prev.exposures[-1].filter)
        v = state.place(k, start, ra, dec, filt)
        if nxt is not None and id(nxt) not in state.fixed_ids:
            _reslew(state, nxt, v)


def _take_out(visits: list, v) -> None:
    """Remove visit ``v`` itself from the list (``list.remove`` compares every field of every
    visit before it)."""
    del visits[next(n for n, w in enumerate(visits) if w is v)]


def _gap_without(state: DispatchState, old, t_min: float, in_order=None):
    """The gap (g0, g1, prev, nxt) that taking visit ``old`` out of the plan leaves
    (``in_order``: the plan's visits already sorted by start)."""
    if in_order is None:
        in_order = sorted(state.visits, key=lambda v: v.start_jd)
    visits = [v for v in in_order if v is not old]
    prev = max((v for v in visits if v.end_jd <= old.start_jd + 1e-9), key=lambda v: v.end_jd, default=None)
    nxt = next((v for v in visits if v.start_jd >= old.end_jd - 1e-9), None)
    g0 = max(t_min, prev.end_jd if prev is not None else t_min)
    g1 = nxt.start_jd if nxt is not None else state.tab.jd[-1]
    return g0, g1, prev, nxt
