"""The night planner's search: value-rate dispatch with look-ahead, then gap filling.

Works on a :class:`~planner.scheduling.slot_table.SlotTable` through a
:class:`DispatchState` (what is placed, where the telescope points, what is
still wanted); the method and its reasons are in :mod:`planner.scheduling.night`.
"""

from __future__ import annotations

import numpy as np

from planner.scheduling.slot_table import SLOT_MIN, SlotTable
from planner.scheduling.visits import Visit, body_s, setup_s, shutter_s
from planner.sky.visibility import angular_separation_deg

#: Look-ahead horizon of the urgency term, minutes.
LOOKAHEAD_MIN = 60.0
#: A patient visit (deep frames) waits while its airmass now exceeds the best still to
#: come tonight by more than this factor (our choice: 5 %, about 0.05 mag of V extinction
#: at airmass 1.2 on a good site — from memory).
PATIENCE_AIRMASS = 1.05
#: A visit that adds no new phase bin keeps this share of its value (repeat
#: measurements still help a period search).
REPEAT_PHASE_VALUE = 0.3
_DAY_S = 86400.0


class DispatchState:
    """The dispatch's working state: what is placed, where the telescope points, what is wanted."""

    def __init__(self, site, requests, tab: SlotTable, t0: float, covered):
        self.site, self.requests, self.tab, self.t0 = site, requests, tab, t0
        self.ra = np.array([q.ra_deg for q in requests])
        self.dec = np.array([q.dec_deg for q in requests])
        self.body_s = np.array([body_s(site, q.exposures) for q in requests])
        self.shutter_h = np.array([shutter_s(q.exposures) for q in requests]) / 3600.0
        self.prio = np.array([q.priority for q in requests], dtype=float)
        self.first_filter = np.array([q.exposures[0].filter for q in requests], dtype=object)
        self.last_filter = np.array([q.exposures[-1].filter for q in requests], dtype=object)
        self.has_phase = np.array([bool(q.phase_periods_d) for q in requests])
        self.patient = np.array([q.patient for q in requests])
        self.remaining = np.array([q.count for q in requests], dtype=int)
        self.spacing_d = np.array([q.min_spacing_min for q in requests]) / 1440.0
        self.times: list[list[float]] = [[] for _ in requests]  # science mid-times placed, per request
        self.visits: list[Visit] = []
        self.value_of: dict[int, float] = {}
        self.fixed_ids: set[int] = set()
        self._slews: dict[tuple[float, float], np.ndarray] = {}
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
        return np.floor((np.asarray(t) - self.tab.jd[0]) / (SLOT_MIN / 1440.0) + 1e-3).astype(int)

    def slot_up(self, t):
        return np.ceil((np.asarray(t) - self.tab.jd[0]) / (SLOT_MIN / 1440.0) - 1e-3).astype(int)

    def holds(self, r, a, b):
        """Request(s) r satisfy every constraint over [a, b] (arrays broadcast)."""
        i0, i1 = self.slot(a), self.slot_up(b)
        n = len(self.tab.jd)
        inside = (i0 >= 0) & (i1 < n)
        return inside & (self.tab.next_bad[r, np.clip(i0, 0, n)] > np.clip(i1, 0, n))

    def setup(self, r, ra, dec, filt):
        if ra is None:
            slew = 0.0
        else:  # separations from one pointing to every request, computed once per pointing
            row = self._slews.get((ra, dec))
            if row is None:
                row = self._slews[(ra, dec)] = angular_separation_deg(ra, dec, self.ra, self.dec)
            slew = row[r]
        slew = np.broadcast_to(np.asarray(slew, dtype=float), np.shape(r))
        changes = self.first_filter[r] != filt
        return setup_s(self.site, slew, changes), slew

    def spaced(self, r, mid):
        ok = np.ones(np.shape(r), bool)
        check = (self.spacing_d[r] > 0) & (self.remaining[r] < np.array([q.count for q in self.requests])[r])
        for n in np.flatnonzero(np.ravel(check)):
            k = np.ravel(r)[n]
            if self.times[k]:
                ok.flat[n] = np.min(np.abs(np.array(self.times[k]) - mid.flat[n])) >= self.spacing_d[k] - 1e-9
        return ok

    def value(self, r, mid):
        i = np.clip(self.slot(mid), 0, len(self.tab.jd) - 1)
        x = self.tab.airmass[r, i]
        with np.errstate(invalid="ignore", divide="ignore"):
            quality = np.where(np.isfinite(x), (self.tab.best_airmass[r] / x) ** 2, 0.0)
        gain = np.ones(np.shape(r))
        for n in np.flatnonzero(np.ravel(self.has_phase[r])):
            k = np.ravel(r)[n]
            ph = self.phase[k]
            if ph is not None:
                p, e, cov = ph
                b = np.floor(np.mod((mid.flat[n] - e) / p, 1.0) * cov.shape[1]).astype(int) % cov.shape[1]
                new = ~cov[np.arange(len(p)), b]
                gain.flat[n] = REPEAT_PHASE_VALUE + (1 - REPEAT_PHASE_VALUE) * float(np.mean(new))
        return self.prio[r] * self.shutter_h[r] * quality * gain

    def place(self, r, start, ra, dec, filt) -> Visit:
        su, slew = self.setup(np.array([r]), ra, dec, filt)
        sci = start + su[0] / _DAY_S
        end = sci + self.body_s[r] / _DAY_S
        mid = 0.5 * (sci + end)
        q = self.requests[r]
        x = np.interp([sci, end, mid], self.tab.jd, np.where(np.isfinite(self.tab.airmass[r]),
                                                              self.tab.airmass[r], np.nan))
        v = Visit("", q.key, q.target, q.ra_deg, q.dec_deg, q.purpose, q.exposures, float(start), float(sci),
                  float(end), q.priority, float(slew[0]), float(x[0]), float(x[1]), float(x[2]),
                  float(np.interp(mid, self.tab.jd, self.tab.moon_sep[r])), q.notes)
        self.value_of[id(v)] = float(self.value(np.array([r]), np.array([mid]))[0])
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
        d = (su + state.body_s[r]) / _DAY_S
        limit = _next_start(state, t)  # a fixed visit later on bounds this one
        feas = state.holds(r, t, t + d) & (t + d <= min(limit, end) + 1e-9)
        mid = t + su / _DAY_S + 0.5 * state.body_s[r] / _DAY_S
        feas &= state.spaced(r, mid)
        if not feas.any():
            t = max(state.tab.jd[0] + (int(state.slot(t)) + 1) * step, t + 1e-3 * step)
            continue
        i = min(max(int(state.slot(t)), 0), state.tab.left.shape[1] - 1)
        # Patience: a deep frame waits while a clearly better airmass is still to come tonight
        # and its window is not closing.
        x_now = state.tab.airmass[r, min(i, state.tab.airmass.shape[1] - 1)]
        waits = state.patient[r] & (x_now > PATIENCE_AIRMASS * state.tab.best_after[r, i]) & (
            state.tab.left[r, i] > lookahead)
        feas &= ~waits
        if not feas.any():
            t = max(state.tab.jd[0] + (int(state.slot(t)) + 1) * step, t + 1e-3 * step)
            continue
        urgency = 1.0 + lookahead / np.maximum(state.tab.left[r, i], 1.0)
        score = np.where(feas, state.value(r, mid) * urgency / (d * 1440.0), -np.inf)
        k = int(r[int(np.argmax(score))])
        v = state.place(k, t, ra, dec, filt)
        t = v.end_jd


def fill_gaps(state: DispatchState, t_min: float) -> None:
    """Local search: insert what still wants time into the idle gaps, best value first."""
    while state.remaining.any():
        best = None
        visits = sorted(state.visits, key=lambda v: v.start_jd)
        for g0 in [t_min] + [v.end_jd for v in visits if v.end_jd > t_min]:
            if _busy_until(state, g0) is not None:
                continue
            prev = max((v for v in visits if v.end_jd <= g0 + 1e-9), key=lambda v: v.end_jd, default=None)
            nxt = next((v for v in visits if v.start_jd >= g0 - 1e-9), None)
            g1 = nxt.start_jd if nxt is not None else state.tab.jd[-1]
            if g1 - g0 < 2 * SLOT_MIN / 1440.0:
                continue
            cand = _best_in_gap(state, g0, g1, prev, nxt)
            if cand is not None and (best is None or cand[0] > best[0]):
                best = cand
        if best is None:
            return
        _, r, start, prev, nxt = best
        ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
        v = state.place(r, start, ra, dec, filt)
        if nxt is not None and id(nxt) not in state.fixed_ids:
            _reslew(state, nxt, v)


def _best_in_gap(state: DispatchState, g0, g1, prev, nxt):
    r = np.flatnonzero(state.remaining > 0)
    ra, dec, filt = (None, None, None) if prev is None else (prev.ra_deg, prev.dec_deg, prev.exposures[-1].filter)
    su, _ = state.setup(r, ra, dec, filt)
    d = (su + state.body_s[r]) / _DAY_S
    step = SLOT_MIN / 1440.0
    offsets = np.arange(0.0, g1 - g0, step)  # candidate starts in the gap, slot by slot
    starts = g0 + offsets[None, :]
    ends = starts + d[:, None]
    fits = state.holds(r[:, None], starts, ends) & (ends <= g1 + 1e-9)
    if nxt is not None:  # the next visit keeps its science start; its slew now comes from the new visit
        k = [n for n, q in enumerate(state.requests) if q.key == nxt.request_key]
        if k and id(nxt) not in state.fixed_ids:
            slew = angular_separation_deg(state.ra[r], state.dec[r], nxt.ra_deg, nxt.dec_deg)
            changes = state.last_filter[r] != nxt.exposures[0].filter
            su_next = setup_s(state.site, slew, changes) / _DAY_S
            new_start = nxt.science_start_jd - su_next
            fits &= ends <= new_start[:, None] + 1e-9
            fits &= state.holds(np.full(len(r), k[0])[:, None], new_start[:, None], nxt.end_jd)
        else:
            fits &= ends <= nxt.start_jd + 1e-9
    if not fits.any():
        return None
    first = np.argmax(fits, axis=1)
    if state.patient[r].any():  # patient visits take their best airmass within the gap
        i = np.clip(state.slot(starts + 0.5 * d[:, None]), 0, state.tab.airmass.shape[1] - 1)
        x = np.where(fits, state.tab.airmass[r[:, None], i], np.inf)
        first = np.where(state.patient[r], np.argmin(x, axis=1), first)
    any_fit = fits.any(axis=1)
    t = g0 + offsets[first]
    mid = t + (su + 0.5 * state.body_s[r]) / _DAY_S
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
