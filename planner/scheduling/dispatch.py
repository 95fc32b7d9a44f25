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
        self.patient = np.array([q.patient for q in requests])
        self.remaining = np.array([q.count for q in requests], dtype=int)
        self.count = self.remaining.copy()  # visits wanted at the start
        self.spacing_d = np.array([q.min_spacing_min for q in requests]) / 1440.0
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
        rows = np.arange(len(r))
        c = self.cum_occ[r]
        got = c[rows, np.broadcast_to(hi, r.shape)] - c[rows, np.broadcast_to(lo, r.shape)]
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
        x = np.interp([sci, end, mid], self.tab.jd, np.where(np.isfinite(self.tab.airmass[r]),
                                                              self.tab.airmass[r], np.nan))
        moon_sep = float(np.interp(mid, self.tab.jd, self.tab.moon_sep[r]))
        snr = snr_planned(self.site, q, exposures, x[2], moon_sep, float(np.interp(mid, self.tab.jd,
                          self.tab.moon_alt)), self.moon_illum, self.seeing)
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
        best = None
        visits = sorted(state.visits, key=lambda v: v.start_jd)
        live = {}
        for g0 in [t_min] + [v.end_jd for v in visits if v.end_jd > t_min]:
            if _busy_until(state, g0) is not None:
                continue
            prev = max((v for v in visits if v.end_jd <= g0 + 1e-9), key=lambda v: v.end_jd, default=None)
            nxt = next((v for v in visits if v.start_jd >= g0 - 1e-9), None)
            g1 = nxt.start_jd if nxt is not None else state.tab.jd[-1]
            if g1 - g0 < 2 * SLOT_MIN / 1440.0:
                continue
            key = (g0, g1)
            cand = cache[key] if key in cache else _best_in_gap(state, g0, g1, prev, nxt)
            live[key] = cand
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


def _best_in_gap(state: DispatchState, g0, g1, prev, nxt):
    r = np.flatnonzero(state.remaining > 0)
    ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
    su, _ = state.setup(r, ra, dec, filt)
    step = SLOT_MIN / 1440.0
    offsets = np.arange(0.0, g1 - g0, step)  # candidate starts in the gap, slot by slot
    starts = g0 + offsets[None, :]
    sci = starts + su[:, None] / _DAY_S
    body, _ = state.body_at(r[:, None], sci)
    ends = sci + body / _DAY_S
    fits = state.holds(r[:, None], starts, ends) & (ends <= g1 + 1e-9)
    if nxt is not None:  # the next visit keeps its science start; its slew now comes from the new visit
        k = [n for n, q in enumerate(state.requests) if q.key == nxt.request_key]
        if k and id(nxt) not in state.fixed_ids:
            slew = state.slews_from(nxt.ra_deg, nxt.dec_deg)[r]
            changes = state.last_filter[r] != nxt.exposures[0].filter
            su_next = setup_s(state.site, slew, changes) / _DAY_S
            new_start = nxt.science_start_jd - su_next
            fits &= ends <= new_start[:, None] + 1e-9
            fits &= state.holds(np.full(len(r), k[0])[:, None], new_start[:, None], nxt.end_jd)
        else:
            fits &= ends <= nxt.start_jd + 1e-9
    mids = 0.5 * (sci + ends)
    for j in np.flatnonzero((state.spacing_d[r] > 0) & fits.any(axis=1)):  # repeats keep their spacing
        placed = np.array(state.times[r[j]])
        if placed.size:
            near = np.min(np.abs(mids[j][:, None] - placed[None, :]), axis=1)
            fits[j] &= near >= state.spacing_d[r[j]] - 1e-9
    if not fits.any():
        return None
    # each request at its most valuable start in the gap (the earliest of equals)
    val = np.where(fits, state.value(np.broadcast_to(r[:, None], mids.shape), mids, phase=False), -np.inf)
    first = np.argmax(val, axis=1)
    if state.patient[r].any():  # patient visits take their best airmass within the gap
        i = _clip(state.slot(mids), 0, state.tab.airmass.shape[1] - 1)
        x = np.where(fits, state.tab.airmass[r[:, None], i], np.inf)
        first = np.where(state.patient[r], np.argmin(x, axis=1), first)
    any_fit = fits.any(axis=1)
    t = g0 + offsets[first]
    mid = mids[np.arange(len(r)), first]
    val = np.where(any_fit & state.spaced(r, mid), state.value(r, mid), -np.inf)
    j = int(np.argmax(val))
    if not np.isfinite(val[j]):
        return None
    return float(val[j]), int(r[j]), float(t[j]), prev, nxt


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
    phase coverage or repeats stay (their value depends on the others' places)."""
    order = sorted((v for v in state.visits if id(v) not in state.fixed_ids and v.start_jd >= t_min - 1e-9),
                   key=lambda v: state.value_of.get(id(v), 0.0))
    key_index = {q.key: k for k, q in enumerate(state.requests)}
    for old in order:
        r = key_index.get(old.request_key)
        if r is None or state.has_phase[r] or state.requests[r].count > 1 or not any(
                v is old for v in state.visits):
            continue
        visits = sorted((v for v in state.visits if v is not old), key=lambda v: v.start_jd)
        prev = max((v for v in visits if v.end_jd <= old.start_jd + 1e-9), key=lambda v: v.end_jd, default=None)
        nxt = next((v for v in visits if v.start_jd >= old.end_jd - 1e-9), None)
        g0 = max(t_min, prev.end_jd if prev is not None else t_min)
        g1 = nxt.start_jd if nxt is not None else state.tab.jd[-1]
        before = state.value_of.get(id(old), 0.0)
        state.visits.remove(old)
        state.remaining[r] += 1
        saved = state.times[r]
        state.times[r] = []
        cand = _best_in_gap(state, g0, g1, prev, nxt)
        if cand is None or cand[0] <= before * (1.0 + 1e-6):
            state.visits.append(old)
            state.remaining[r] -= 1
            state.times[r] = saved
            continue
        state.value_of.pop(id(old), None)
        _, k, start, prev, nxt = cand
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg,
                                                                 prev.exposures[-1].filter)
        v = state.place(k, start, ra, dec, filt)
        if nxt is not None and id(nxt) not in state.fixed_ids:
            _reslew(state, nxt, v)
