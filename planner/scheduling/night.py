"""One night's timed plan: value-rate dispatch with a closing-window look-ahead, then local search.

The method, and why
-------------------
The night is cut into one-minute slots.  Every constraint of every request is
evaluated on all requests × slots at once: one :func:`~planner.visibility.sky_at`
call for the night's distinct targets, with the Sun, the Moon and the sidereal
time computed once (:func:`~planner.visibility.time_track`).  From the
resulting pass/fail table, ``next_bad[r, i]`` — the first failing slot at or
after ``i`` — makes "does visit r hold over [t, t + d]?" one array lookup.

1. **Dispatch.**  Time moves forward from the start of the usable window; at
   each decision every waiting request is scored in one vector operation:
   value (priority × shutter hours × an airmass factor × the phase coverage it
   would gain) per second of telescope time including its slew, settle and
   filter change from where the telescope is now, times a *look-ahead* urgency
   ``1 + H / (feasible start minutes it has left)`` that lifts targets whose
   window is closing (H = :data:`LOOKAHEAD_MIN`).  The best feasible request
   starts now; if none is feasible, time moves on a slot.
2. **Local search.**  The idle gaps the dispatch leaves (a target set, the
   next not yet risen) are offered to every request still wanting time; the
   most valuable one that fits — including the slew into it and the changed
   slew out of it to the next visit — is inserted, until nothing more fits.

Why not an integer programme over the slots (scipy's ``milp``)?  Overheads
depend on the order (slews), which a time-indexed model can only carry with
order variables per pair of visits and slot: for 60 targets and 500 slots
that is far past a second of HiGHS time, and the plan must be ready again in
a fraction of a second when the weather turns.  Dispatch costs
O(visits × requests) with each step a vector operation, is deterministic (ties
go to the first request), and the local search takes back most of what
greediness leaves idle.

Constraints hold over each visit's whole duration, from the start of its
slew to its last readout, on the slot grid with a small safety margin
(:data:`MARGIN_DEG`), checked independently by the tests (astropy's full AltAz,
tests/helpers/validate.py).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from planner.light.photometry import sky_brightness_mag_arcsec2
from planner.model.constraints import Constraints
from planner.scheduling.visits import Visit, VisitRequest, body_s, setup_s, shutter_s
from planner.sky.airmass import altitude_for_airmass
from planner.sky.almanac import MOONRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG
from planner.sky.ephemeris import Ephemeris, moon_phase, site_geometry
from planner.sky.visibility import (
    angular_separation_deg,
    apparent_places,
    constraint_margin_deg,
    sky_at,
    time_track,
)

#: Slot length, minutes (the planner's time resolution).
SLOT_MIN = 1.0
#: Every constraint must hold by this much on the slot grid (degrees): altitude
#: changes by at most 0.25° a minute, nearly linearly, so between samples a
#: margin of 0.02° cannot be lost except at a grazing moonrise.
MARGIN_DEG = 0.02
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


@dataclass(frozen=True)
class Gap:
    start_jd: float
    end_jd: float
    reason: str  # "idle" (nothing observable fits) or "closed"

    @property
    def minutes(self) -> float:
        return (self.end_jd - self.start_jd) * 1440.0


@dataclass(frozen=True)
class Unplanned:
    key: str
    target: str
    purpose: str
    wanted: int
    planned: int
    reason: str


@dataclass(frozen=True)
class NightPlan:
    """The plan of one night: visits in time order, the gaps between them, what did not fit."""

    night: dt.date
    constraints: Constraints
    window_start_jd: float  # the usable window (the Sun below the twilight's altitude)
    window_end_jd: float
    visits: tuple[Visit, ...]
    gaps: tuple[Gap, ...]
    unplanned: tuple[Unplanned, ...]
    closed: tuple[tuple[float, float], ...]
    seeing_arcsec: float
    moon_illumination: float
    value: float
    method: str
    warnings: tuple[str, ...] = field(default_factory=tuple)

    @property
    def window_minutes(self) -> float:
        if not np.isfinite(self.window_start_jd):
            return 0.0
        return (self.window_end_jd - self.window_start_jd) * 1440.0

    @property
    def idle_minutes(self) -> float:
        return float(sum(g.minutes for g in self.gaps if g.reason == "idle"))

    @property
    def closed_minutes(self) -> float:
        return float(sum(g.minutes for g in self.gaps if g.reason == "closed"))

    @property
    def shutter_s(self) -> float:
        return float(sum(v.shutter_s for v in self.visits))

    @property
    def efficiency(self) -> float:
        """Shutter-open time over the usable window."""
        w = self.window_minutes * 60.0
        return self.shutter_s / w if w > 0 else 0.0


METHOD = "value-rate dispatch with closing-window look-ahead, then gap-filling local search (1-minute slots)"


@dataclass
class _Table:
    """Per-request arrays over the night's slots (mutable working state of one planning run)."""

    jd: np.ndarray  # (T,) slot times
    ok: np.ndarray  # (R, T) every constraint holds at the slot
    next_bad: np.ndarray  # (R, T+1) first failing slot at or after i (T: none)
    airmass: np.ndarray  # (R, T)
    moon_sep: np.ndarray  # (R, T)
    best_airmass: np.ndarray  # (R,)
    left: np.ndarray  # (R, T+1) feasible start slots from i on
    best_after: np.ndarray  # (R, T+1) lowest airmass at a good slot from i on


def _next_bad(ok: np.ndarray) -> np.ndarray:
    r, t = ok.shape
    idx = np.where(ok, t, np.arange(t)[None, :])
    nb = np.minimum.accumulate(idx[:, ::-1], axis=1)[:, ::-1]
    return np.concatenate([nb, np.full((r, 1), t)], axis=1)


def _build_table(site, constraints, requests, eph, jd, closed, moon_illum) -> _Table:
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    coords = list(dict.fromkeys((q.ra_deg, q.dec_deg) for q in requests))
    index = {c: i for i, c in enumerate(coords)}
    rows = np.array([index[(q.ra_deg, q.dec_deg)] for q in requests], dtype=int)
    places = apparent_places([c[0] for c in coords], [c[1] for c in coords], float(jd[0]), float(jd[-1]))
    ra, dec = places.at([0.5 * (jd[0] + jd[-1])])  # (N, 1): fixed for the night
    track = time_track(eph, geo, jd)  # the Sun, the Moon and sidereal time, once for the night
    grid = sky_at(track, geo.latitude_deg, ra, dec)  # all targets × slots in one call
    margin = constraint_margin_deg(grid, constraints)[rows]
    alt, sep = grid.altitude_deg[rows], grid.moon_separation_deg[rows]
    airmass = np.nan_to_num(grid.airmass[rows], nan=np.inf)
    moon_alt = grid.moon_altitude_deg[None, :]
    ok = margin >= MARGIN_DEG
    # The Sun below the twilight's altitude (the window says so; this guards its edges).
    ok &= (grid.sun_altitude_deg <= TWILIGHT_ALTITUDE_DEG[constraints.twilight] + 1e-6)[None, :]
    for a, b in closed:
        ok &= ~((jd >= a - SLOT_MIN / 1440.0) & (jd <= b + SLOT_MIN / 1440.0))[None, :]
    # Per-request tightenings, as array operations over the requests that set them.
    max_x = np.array([q.max_airmass if q.max_airmass else np.inf for q in requests])
    if np.isfinite(max_x).any():
        lim = np.where(np.isfinite(max_x), altitude_for_airmass(np.where(np.isfinite(max_x), max_x, 2.0)), -90.0)
        ok &= alt - lim[:, None] >= MARGIN_DEG
    min_sep = np.array([q.min_moon_separation_deg or 0.0 for q in requests])
    moon_down = moon_alt < MOONRISE_ALTITUDE_DEG - MARGIN_DEG
    ok &= (sep - min_sep[:, None] >= MARGIN_DEG) | moon_down
    dark = np.array([q.dark for q in requests])
    lit_ok = np.array([moon_illum <= q.max_moon_illumination for q in requests])
    ok &= ~(dark & ~lit_ok)[:, None] | moon_down
    sky_min = np.array([q.min_sky_mag_arcsec2 or -np.inf for q in requests])
    if np.isfinite(sky_min).any() and "V" in site.filters:
        sky = sky_brightness_mag_arcsec2(site.sky.dark_mag_arcsec2["V"], site.sky.extinction_mag_per_airmass["V"],
                                         np.where(np.isfinite(airmass), np.maximum(airmass, 1.0), 40.0),
                                         moon_illum, sep, moon_alt)
        ok &= sky >= sky_min[:, None]
    t_ok = np.ones_like(ok)
    for r, q in enumerate(requests):  # time windows: a comparison per request that has one
        if q.earliest_jd is not None:
            t_ok[r] &= jd >= q.earliest_jd
        if q.latest_jd is not None:
            t_ok[r] &= jd <= q.latest_jd
    ok &= t_ok
    nb = _next_bad(ok)
    dur = np.array([body_s(site, q.exposures) for q in requests]) / 60.0 / SLOT_MIN
    need = np.ceil(dur).astype(int) + 1
    starts = nb[:, :-1] > np.arange(len(jd))[None, :] + need[:, None]
    left = np.concatenate([np.cumsum(starts[:, ::-1], axis=1)[:, ::-1], np.zeros((len(requests), 1))], axis=1)
    good_x = np.where(ok, airmass, np.inf)
    best = np.min(good_x, axis=1)
    best_after = np.concatenate([np.minimum.accumulate(good_x[:, ::-1], axis=1)[:, ::-1],
                                 np.full((len(requests), 1), np.inf)], axis=1)
    return _Table(jd, ok, nb, airmass, sep, best, left, best_after)


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
    tab = _build_table(site, constraints, requests, eph, jd, closed, moon_illum)
    state = _State(site, requests, tab, window_start_jd, covered_bins or {})
    for v in fixed:
        state.occupy(v)
        state.fixed_ids.add(id(v))
    start = window_start_jd if not_before_jd is None else max(window_start_jd, not_before_jd)
    _dispatch(state, start, fixed)
    _fill_gaps(state, start)
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
    gaps = _gaps(window_start_jd, window_end_jd, visits, closed)
    return NightPlan(night, constraints, window_start_jd, window_end_jd, tuple(visits), gaps, tuple(unplanned),
                     closed, seeing, moon_illum, value, METHOD, tuple(warnings))


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


class _State:
    """The dispatch's working state: what is placed, where the telescope points, what is wanted."""

    def __init__(self, site, requests, tab: _Table, t0: float, covered):
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


def _pointing(state: _State, before_jd: float):
    """Where the telescope points, and which filter is in, at ``before_jd``: the last
    visit ending by then, else parked at the zenith with no filter known."""
    prior = [v for v in state.visits if v.end_jd <= before_jd + 1e-9]
    if prior:
        v = max(prior, key=lambda v: v.end_jd)
        return v.ra_deg, v.dec_deg, v.exposures[-1].filter
    return None, None, None


def _busy_until(state: _State, t: float) -> float | None:
    """End of a placed visit covering t, if any."""
    for v in state.visits:
        if v.start_jd - 1e-9 <= t < v.end_jd:
            return v.end_jd
    return None


def _next_start(state: _State, t: float) -> float:
    later = [v.start_jd for v in state.visits if v.start_jd > t + 1e-9]
    return min(later) if later else np.inf


def _dispatch(state: _State, t: float, fixed) -> None:
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


def _fill_gaps(state: _State, t_min: float) -> None:
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


def _best_in_gap(state: _State, g0, g1, prev, nxt):
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


def _reslew(state: _State, nxt: Visit, new: Visit) -> None:
    """The visit after an inserted one slews from the new position; its science start stays."""
    from dataclasses import replace

    slew = float(angular_separation_deg(new.ra_deg, new.dec_deg, nxt.ra_deg, nxt.dec_deg))
    su = float(setup_s(state.site, slew, new.exposures[-1].filter != nxt.exposures[0].filter)) / _DAY_S
    moved = replace(nxt, start_jd=nxt.science_start_jd - su, slew_deg=slew)
    i = next(n for n, v in enumerate(state.visits) if v is nxt)
    state.visits[i] = moved
    state.value_of[id(moved)] = state.value_of.pop(id(nxt), 0.0)


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
