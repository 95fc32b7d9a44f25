"""Which campaign work goes on which night, what fills the spare time, and why a gap is idle.

The campaign planner (:mod:`planner.scheduling.campaign`) uses these pieces:

* :func:`targets_tonight` — every campaign target on a one-minute grid of a
  night's usable window under the campaign's constraints (one
  :func:`~planner.sky.visibility.sky_at` call), with the Moon's altitude;
* :func:`goal_runs` — for a depth goal and a target, the longest stretch of
  each night inside the goal's own limits (airmass, dark time), its best
  airmass and how much of it has the Moon up;
* :func:`assign_depth` — the depth visits still owed, spread over the nights
  left: each visit goes to the night that suits it best (lowest airmass,
  darkest sky) among those with room, the goals with fewest suitable nights
  first, the nights already given work weighing less;
* :func:`cadence_spacing` — the spacing that spreads a night's cadence visits
  over the cluster's usable hours instead of packing them at the minimum;
* :func:`reconcile` — after spare-time work is put between the goals' visits,
  each visit's slew is recomputed from the visit now before it, never from
  earlier than :func:`earliest_starts` allows;
* :func:`gaps_with_reasons` — the idle time of a night, each stretch with its
  reason: ``nothing observable`` (no campaign target within the constraints),
  ``goals met`` (targets are up, nothing more is wanted) or ``closed``.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from planner.scheduling.night_plan import Gap
from planner.scheduling.visits import body_s, setup_s
from planner.sky.almanac import MOONRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG
from planner.sky.ephemeris import site_geometry
from planner.sky.visibility import angular_separation_deg, apparent_places, constraint_margin_deg, sky_at, time_track

#: Grid step of the campaign's look at each night, minutes (the night planner's slot).
STEP_MIN = 1.0
#: Moon illumination up to which a night counts as dark while the Moon is up
#: (the campaign file's ``dark``; the night planner's ``max_moon_illumination``).
DARK_ILLUMINATION = 0.25
#: Cadence visits of a night span this share of the cluster's usable hours: the
#: rest is slack for the other visits of the night (our choice).
CADENCE_SPREAD = 0.8
#: Gap reasons (besides the night planner's ``closed``).
NOTHING_OBSERVABLE = "nothing observable"
GOALS_MET = "goals met"


@dataclass(frozen=True)
class Tonight:
    """Campaign targets × one-minute times of one night's usable window."""

    jd: np.ndarray  # (T,)
    ok: np.ndarray  # (N, T) within the campaign's constraints, the Sun below the twilight
    airmass: np.ndarray  # (N, T), inf below the horizon
    moon_down: np.ndarray  # (T,)


def observable(site, constraints, ra_deg, dec_deg, eph, jd) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``ok`` (targets × times: inside every constraint, the Sun below the twilight),
    airmass and whether the Moon is down, at the times ``jd``."""
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    places = apparent_places(list(ra_deg), list(dec_deg), float(jd[0]), float(jd[-1]))
    ra, dec = places.at([0.5 * (jd[0] + jd[-1])])  # fixed for the night, as the night planner
    grid = sky_at(time_track(eph, geo, jd), geo.latitude_deg, ra, dec)
    ok = constraint_margin_deg(grid, constraints) >= 0.0
    ok &= (grid.sun_altitude_deg <= TWILIGHT_ALTITUDE_DEG[constraints.twilight] + 1e-6)[None, :]
    return ok, np.nan_to_num(grid.airmass, nan=np.inf), grid.moon_altitude_deg < MOONRISE_ALTITUDE_DEG


def targets_tonight(site, constraints, targets, eph, w0: float, w1: float) -> Tonight | None:
    """The campaign's targets over the usable window [w0, w1] (None: no such window)."""
    if not (np.isfinite(w0) and w1 > w0):
        return None
    n = int(np.floor((w1 - w0) * 1440.0 / STEP_MIN + 1e-9))
    jd = w0 + STEP_MIN / 1440.0 * np.arange(n + 1)
    ok, airmass, moon_down = observable(site, constraints, [t.ra_deg for t in targets],
                                        [t.dec_deg for t in targets], eph, jd)
    return Tonight(jd, ok, airmass, moon_down)


def longest_run(mask: np.ndarray) -> tuple[int, int]:
    """First index and length of the longest run of True in ``mask`` ((0, 0): none)."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    edges = np.flatnonzero(np.diff(m.astype(int)))
    if edges.size == 0:
        return 0, 0
    starts, ends = edges[::2], edges[1::2]
    k = int(np.argmax(ends - starts))
    return int(starts[k]), int(ends[k] - starts[k])


def visit_minutes(site, exposures) -> float:
    """A visit's time with the longest slew, a settle and a filter change (minutes)."""
    return (body_s(site, exposures) + float(setup_s(site, 180.0, True))) / 60.0


def goal_mask(tonight: Tonight, row: int, goal, illumination: float) -> np.ndarray:
    """Where the target of ``row`` is inside the goal's own limits tonight."""
    mask = tonight.ok[row].copy()
    if goal.max_airmass is not None:
        mask &= tonight.airmass[row] <= goal.max_airmass
    if goal.dark and illumination > DARK_ILLUMINATION:
        mask &= tonight.moon_down
    return mask


@dataclass(frozen=True)
class GoalNights:
    """One depth goal × target over the campaign's nights."""

    run_min: np.ndarray  # (nights,) the longest stretch inside the goal's limits
    best_airmass: np.ndarray  # (nights,) inf: never inside them
    moon_up: np.ndarray  # (nights,) share of that stretch with the Moon up
    need_min: float  # one visit, with the longest slew


def goal_runs(tonights, illumination, row: int, goal, need_min: float) -> GoalNights:
    n = len(tonights)
    run, best, up = np.zeros(n), np.full(n, np.inf), np.zeros(n)
    for k, tn in enumerate(tonights):
        if tn is None:
            continue
        mask = goal_mask(tn, row, goal, float(illumination[k]))
        i, length = longest_run(mask)
        if length == 0:
            continue
        run[k] = length * STEP_MIN
        best[k] = float(np.min(tn.airmass[row, i:i + length]))
        up[k] = float(np.mean(~tn.moon_down[i:i + length]))
    return GoalNights(run, best, up, need_min)


def fits(g: GoalNights) -> np.ndarray:
    """Nights on which one visit of the goal fits inside its limits (two slots to spare,
    as the night planner needs)."""
    return g.run_min >= g.need_min + 2 * STEP_MIN


def night_quality(g: GoalNights, illumination) -> np.ndarray:
    """How well each night suits the goal: the best airmass reached, relative to the
    campaign's best, squared (about the loss in S/N per unit time of a sky-limited
    frame — the exposure core's scaling, our approximation), times a sky term that
    halves the value under a full Moon up all the while."""
    ok = fits(g)
    if not ok.any():
        return np.zeros_like(g.run_min)
    x_best = float(np.min(g.best_airmass[ok]))
    sky = 1.0 - 0.5 * np.asarray(illumination, float) * g.moon_up
    return np.where(ok, (x_best / np.where(ok, g.best_airmass, 1.0)) ** 2 * sky, 0.0)


def assign_depth(owed: dict, nights: dict, illumination, window_min, first: int) -> dict:
    """How many visits of each goal × target go on night ``first``.

    ``owed`` maps (goal, target) to (visits still owed, priority); ``nights`` maps it
    to its :class:`GoalNights`.  Every owed visit is given a night from ``first`` on:
    the goals with fewest suitable nights choose first (then by priority), each
    visit takes the night of highest quality × the share of the night still free ÷
    (1 + visits of the same goal already there), among nights where the goal's
    stretch still has room.  Only tonight's share is returned; the rest is decided
    again on later nights with what was really done.
    """
    n = len(window_min)
    load = np.zeros(n)  # minutes given out per night
    tonight: dict = {}
    order = sorted(owed, key=lambda key: (int(np.sum(fits(nights[key])[first:])), -owed[key][1], str(key)))
    for key in order:
        left, _ = owed[key]
        g = nights[key]
        q = night_quality(g, illumination)
        q[:first] = 0.0
        same = np.zeros(n)
        for _ in range(left):
            room = (same + 1) * g.need_min <= g.run_min
            free = np.clip(1.0 - load / np.maximum(window_min, 1.0), 0.0, 1.0)
            score = np.where(room & (q > 0), q * free / (1.0 + same), -1.0)
            j = int(np.argmax(score))
            if score[j] < 0:
                break
            same[j] += 1
            load[j] += g.need_min
        if same[first]:
            tonight[key] = int(same[first])
    return tonight


def cadence_spacing(tonight: Tonight | None, row: int, visits: int, visit_min: float, min_spacing: float) -> float:
    """Minimum spacing (minutes) that spreads ``visits`` over the cluster's longest
    usable stretch tonight, and never less than the campaign's own minimum."""
    if tonight is None or visits < 2:
        return min_spacing
    _, length = longest_run(tonight.ok[row])
    usable = length * STEP_MIN - visit_min
    return max(min_spacing, CADENCE_SPREAD * usable / (visits - 1))


#: Step of the check that a goal's target is within its limits during a longer slew, s.
SLEW_CHECK_S = 10.0


def earliest_starts(site, constraints, eph, visits, requests: dict, pad_d: float, moon_illum: float) -> dict:
    """For each visit of a known request (by id): the earliest moment its slew may start —
    from ``pad_d`` before its science start on — with its target inside the campaign's
    constraints and its request's own limits (airmass, dark time) all the way to the
    science start.  Never later than the visit's own start, which its plan checked.

    The goals' visits reserve room for the widest slew before them (spare-time work then
    ends before it); a spare-time visit that comes to precede one may need a longer slew
    than the visit's planned one, starting where, say, the Moon is still up."""
    chosen = [v for v in visits if v.request_key in requests]
    if not chosen:
        return {}
    step = SLEW_CHECK_S / 86400.0
    n = int(np.ceil(pad_d / step)) + 1
    jd = np.concatenate([v.science_start_jd - step * np.arange(n)[::-1] for v in chosen])
    coords = sorted({(v.ra_deg, v.dec_deg) for v in chosen})
    ok, airmass, moon_down = observable(site, constraints, [c[0] for c in coords], [c[1] for c in coords], eph, jd)
    out = {}
    for k, v in enumerate(chosen):
        q, row, part = requests[v.request_key], coords.index((v.ra_deg, v.dec_deg)), slice(k * n, (k + 1) * n)
        good = ok[row, part] & (airmass[row, part] <= (q.max_airmass or np.inf))
        if q.dark and moon_illum > q.max_moon_illumination:
            good &= moon_down[part]
        bad = np.flatnonzero(~good)
        first = jd[part][0] if bad.size == 0 else jd[part][min(bad[-1] + 2, n - 1)]  # a sample's margin
        out[v.id] = min(v.start_jd, float(first))
    return out


def reconcile(site, visits, is_fill, earliest: dict | None = None) -> list:
    """Visits in time order with each slew from the visit now before it.

    Spare-time work is placed between the goals' visits, which were planned with
    slews from other neighbours; the science start of each visit stays and its slew
    starts earlier or later.  Where a longer slew would overlap the visit before, or
    start before the visit's ``earliest`` moment (:func:`earliest_starts`), the
    spare-time visit of the two is dropped (the goals' visits never are)."""
    earliest = earliest or {}
    out = []
    for v in sorted(visits, key=lambda v: v.start_jd):
        while out:
            prev = out[-1]
            slew = float(angular_separation_deg(prev.ra_deg, prev.dec_deg, v.ra_deg, v.dec_deg))
            change = prev.exposures[-1].filter != v.exposures[0].filter
            start = v.science_start_jd - float(setup_s(site, slew, change)) / 86400.0
            if start >= prev.end_jd - 1e-9 and start >= earliest.get(v.id, -np.inf) - 1e-9:
                v = replace(v, start_jd=start, slew_deg=slew if slew > 1e-3 else 0.0)
                break
            if is_fill(prev):
                out.pop()
                continue
            v = None  # a spare-time visit that no longer fits
            break
        if v is not None:
            out.append(v)
    return out


def merge_spare_runs(site, visits, is_fill) -> list:
    """Spare-time depth visits of one target, filter and exposure placed back to back become
    one visit over the same time: one acquisition instead of one per frame, and the time
    that frees filled with more frames of the same kind.  The planner places such work one
    frame a visit (so it fits between cadence visits); at the telescope a run of them is one
    pointing.  The merged visit's S/N is its first part's scaled by √(frames ratio), exact
    for a stack of like frames."""
    cam, tel = site.camera, site.telescope
    out, run_end = [], -np.inf  # run_end: where the last merged piece ended as placed
    points: list = []  # the run's (time, airmass) at each piece's science start, middle and end
    for v in sorted(visits, key=lambda v: v.start_jd):
        prev = out[-1] if out else None
        if (prev is not None and is_fill(prev) and is_fill(v) and v.purpose != "variables"
                and v.request_key == prev.request_key and len(v.exposures) == len(prev.exposures) == 1
                and v.exposures[0].filter == prev.exposures[0].filter
                and v.exposures[0].exposure_s == prev.exposures[0].exposure_s
                and v.start_jd <= max(prev.end_jd, run_end) + 1e-9):
            line = prev.exposures[0]
            span_s = (v.end_jd - prev.science_start_jd) * 86400.0
            n = max(int((span_s - tel.acquisition_s + 1e-6) // (line.exposure_s + cam.readout_s)), 1)
            exposures = (replace(line, frames=n),)
            snr = None if prev.snr_planned is None else prev.snr_planned * (n / line.frames) ** 0.5
            notes = _frames_note(prev.notes, n)
            points += _airmass_points(v)
            end = prev.science_start_jd + body_s(site, exposures) / 86400.0
            # the airmass at the merged visit's own end and middle, from its pieces' (a few
            # minutes apart, where airmass is nearly straight in time)
            t, x = np.array(points).T
            out[-1] = replace(prev, exposures=exposures, end_jd=end, snr_planned=snr, notes=notes,
                              airmass_end=float(np.interp(end, t, x)),
                              airmass_mid=float(np.interp(0.5 * (prev.science_start_jd + end), t, x)))
            run_end = v.end_jd
            continue
        out.append(v)
        points = _airmass_points(v)
        run_end = v.end_jd
    return out


def stretch_spare_frames(site, constraints, eph, visits, requests: dict, w1: float, closed=()) -> list:
    """A spare-time depth visit followed by idle time takes as many more frames of its kind as
    fit before the next visit's start (or the usable window's end), while its target stays
    inside the campaign's limits and its goal's (airmass, dark time) and the dome is open.

    Spare-time work is placed around the goals' visits, which keep room for the widest slew
    before them; once the real slews are known that room is idle, minutes at a time before
    most cadence visits.  ``requests``: the spare-time requests by key."""
    cam = site.camera
    out = sorted(visits, key=lambda v: v.start_jd)
    for i, v in enumerate(out):
        q = requests.get(v.request_key)
        if q is None or v.purpose == "variables" or len(v.exposures) != 1:
            continue
        line = v.exposures[0]
        limit = out[i + 1].start_jd if i + 1 < len(out) else w1
        limit = min([limit, w1] + [a for a, b in closed if b > v.end_jd] + ([q.latest_jd] if q.latest_jd else []))
        step_d = (line.exposure_s + cam.readout_s) / 86400.0
        more = int((limit - v.end_jd) / step_d + 1e-9)
        if more < 1:
            continue
        jd = v.end_jd + step_d * np.arange(1, more + 1)
        ok, airmass, moon_down = observable(site, constraints, [v.ra_deg], [v.dec_deg], eph, jd)
        good = ok[0] & (airmass[0] <= (q.max_airmass or np.inf)) & (moon_down if q.dark else True)
        more = int(np.argmin(good)) if not good.all() else more  # frames until the first that fails
        if more < 1:
            continue
        n = line.frames + more
        end = v.end_jd + more * step_d
        out[i] = replace(v, exposures=(replace(line, frames=n),), end_jd=end,
                         airmass_end=float(airmass[0][more - 1]),
                         airmass_mid=float(np.interp(0.5 * (v.science_start_jd + end),
                                                     *np.array(_airmass_points(v) + [(end, airmass[0][more - 1])]).T)),
                         snr_planned=None if v.snr_planned is None else v.snr_planned * (n / line.frames) ** 0.5,
                         notes=_frames_note(v.notes, n))
    return out


def _frames_note(notes, n: int) -> tuple:
    import re

    return tuple(re.sub(r"^(?:one|\d+) more (.+?) frames?$", rf"{n} more \1 frames", x) if n > 1 else x
                 for x in notes)


def _airmass_points(v) -> list:
    return [(v.science_start_jd, v.airmass_start), (0.5 * (v.science_start_jd + v.end_jd), v.airmass_mid),
            (v.end_jd, v.airmass_end)]


def free_time(w0: float, w1: float, visits, closed) -> list[tuple[float, float, bool]]:
    """The usable window's time outside the visits, as (start, end, closed) pieces."""
    free, t = [], w0
    for v in sorted(visits, key=lambda v: v.start_jd):
        if v.start_jd > t:
            free.append((t, min(v.start_jd, w1)))
        t = max(t, min(v.end_jd, w1))
    if t < w1:
        free.append((t, w1))
    out = []
    for a, b in free:
        cuts = sorted({a, b} | {x for c in closed for x in c if a < x < b})
        for s, e in zip(cuts, cuts[1:]):
            mid = 0.5 * (s + e)
            out.append((s, e, any(c0 <= mid <= c1 for c0, c1 in closed)))
    return out


def gaps_with_reasons(site, constraints, targets, eph, w0, w1, visits, closed) -> tuple[Gap, ...]:
    """The night's gaps of a minute or more, each with its true reason.

    An idle stretch is ``nothing observable`` where no campaign target is inside the
    constraints at any time in it (checked at every minute and at its ends), else
    ``goals met``; weather closures are ``closed``.  A stretch is cut where this changes.
    """
    pieces = [(s, e, shut) for s, e, shut in free_time(w0, w1, visits, closed) if (e - s) * 1440.0 >= 1.0]
    grids = [np.linspace(s, e, max(int(np.ceil((e - s) * 1440.0 / STEP_MIN)), 1) + 1) for s, e, _ in pieces]
    if grids and targets:  # one sky computation for every idle minute of the night
        flat = observable(site, constraints, [t.ra_deg for t in targets], [t.dec_deg for t in targets], eph,
                          np.concatenate(grids))[0].any(axis=0)
        ups = np.split(flat, np.cumsum([len(g) for g in grids])[:-1])
    else:
        ups = [np.zeros(len(g), bool) for g in grids]
    gaps = []
    for (s, e, shut), jd, up in zip(pieces, grids, ups):
        if shut:
            gaps.append(Gap(float(s), float(e), "closed"))
            continue
        up_piece = up[:-1] | up[1:]  # a minute with a target up at either end is not "nothing observable"
        runs = []
        for k in range(len(jd) - 1):
            reason = GOALS_MET if up_piece[k] else NOTHING_OBSERVABLE
            if runs and runs[-1][2] == reason:
                runs[-1][1] = jd[k + 1]
            else:
                runs.append([jd[k], jd[k + 1], reason])
        gaps.extend(Gap(float(a), float(b), reason) for a, b, reason in runs if (b - a) * 1440.0 >= 1.0)
    return tuple(gaps)
