"""Observable hours and windows of every target on every night.

Closed forms first: with a cluster's apparent place fixed for the night, its
hour angle grows linearly with time, and it is above an altitude limit while
|H| ≤ H₀, cos H₀ = (sin h − sin φ sin δ)/(cos φ cos δ).  Intersecting those
hour-angle intervals with the night's dark window gives exact altitude
windows for all targets × nights in a few array operations.

Three constraints have no closed form here: the Moon (it moves, and rises and
sets), a horizon mask (an azimuth-dependent limit) and sun avoidance (which
binds only in twilight).  A cheap hourly check picks the target-nights where
any of them could bite; only those are sampled on a
fine grid (:data:`GRID_STEP_MIN`), with each edge placed where the straight
line between a failing and a passing sample of the constraint margin crosses
zero — within a few seconds of the exact edge for a 5-minute step.

An upper altitude limit (zenith avoidance) is closed form too: a target whose
upper culmination passes above it is out of reach while |H| ≤ H₁ around
transit.  The window then runs across that gap (``zenith_gap_*``), the hours
leave it out, and :meth:`NightVisibility.windows` gives the two parts.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from planner.model.constraints import Constraints
from planner.sky.airmass import airmass_kasten_young
from planner.sky.almanac import MOONRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG, Almanac
from planner.sky.ephemeris import (
    Ephemeris,
    SiteGeometry,
    local_sidereal_deg,
    moon_radec_deg,
    sun_radec_deg,
    transit_jd,
)
from planner.sky.sidereal import (
    SIDEREAL_DEG_PER_DAY,
    altitude_deg,
    culmination_altitudes_deg,
    hour_angle_at_altitude_deg,
    wrap_180,
)
from planner.sky.visibility import (
    ApparentPlaces,
    constraint_margin_deg,
    sky_at,
    time_track,
)

#: Fine-grid step where the Moon or a horizon mask must be sampled, minutes.
GRID_STEP_MIN = 5.0
#: Samples of the coarse (about hourly) Moon check per night.
_COARSE_SAMPLES = 25


@dataclass(frozen=True)
class NightVisibility:
    """Per target × night results, arrays of shape (targets, nights); JD UTC, NaN = none."""

    observable_hours: np.ndarray
    window_start_jd: np.ndarray  # the longest observable stretch of the night
    window_end_jd: np.ndarray
    transit_jd: np.ndarray  # upper transit nearest the middle of the dark window
    max_altitude_deg: np.ndarray  # highest altitude within the dark window
    min_airmass: np.ndarray
    moon_separation_deg: np.ndarray  # at the middle of the dark window
    min_moon_separation_deg: np.ndarray  # over the dark window (hourly samples)
    dark_start_jd: np.ndarray  # (nights,)
    dark_end_jd: np.ndarray
    # Above the upper altitude limit inside the window (NaN: no gap, or no upper limit).
    zenith_gap_start_jd: np.ndarray | None = None
    zenith_gap_end_jd: np.ndarray | None = None

    def windows(self, k: int, i: int) -> list[tuple[float, float]]:
        """Target ``k``'s observable stretches on night ``i``: the window, split around
        the zenith gap when the target passes above the upper altitude limit."""
        w0, w1 = float(self.window_start_jd[k, i]), float(self.window_end_jd[k, i])
        if not np.isfinite(w0):
            return []
        g0 = np.nan if self.zenith_gap_start_jd is None else float(self.zenith_gap_start_jd[k, i])
        if not np.isfinite(g0):
            return [(w0, w1)]
        g1 = float(self.zenith_gap_end_jd[k, i])
        return [(a, b) for a, b in ((w0, g0), (g1, w1)) if b > a]


def visibility_for_nights(
    eph: Ephemeris,
    geo: SiteGeometry,
    places: ApparentPlaces,
    almanac: Almanac,
    constraints: Constraints,
    step_min: float = GRID_STEP_MIN,
) -> NightVisibility:
    """Observable hours and windows for every target on every night of the almanac."""
    dark_start, dark_end = almanac.dark_window_jd(constraints.twilight)
    has_dark = np.isfinite(dark_start) & np.isfinite(dark_end)
    s = np.where(has_dark, dark_start, almanac.middle_jd)
    e = np.where(has_dark, dark_end, almanac.middle_jd)
    mid = 0.5 * (s + e)
    ra, dec = places.at(mid)  # (N, M): fixed for the night
    limit = constraints.altitude_limit_deg

    upper, lower = culmination_altitudes_deg(geo.latitude_deg, dec)
    ha_start = wrap_180(local_sidereal_deg(eph, s, geo.longitude_deg)[None, :] - ra)
    span_deg = (SIDEREAL_DEG_PER_DAY * (e - s))[None, :]
    hours, w_start, w_end = _altitude_windows(geo.latitude_deg, dec, (upper, lower), limit, s, ha_start,
                                              span_deg)

    need, sep_c = _where_sampling_is_needed(eph, geo, ra, dec, s, e, constraints)
    need &= (hours > 0.0) & has_dark[None, :]
    # The grid finds the window as if there were no upper limit; its gap is cut out below.
    below_zenith = replace(constraints, max_altitude_deg=None)
    _refine_on_grid(eph, geo, ra, dec, s, e, below_zenith, step_min, need, hours, w_start, w_end)

    hours = np.where(has_dark[None, :], hours, 0.0)
    w_start = np.where(has_dark[None, :], w_start, np.nan)
    w_end = np.where(has_dark[None, :], w_end, np.nan)

    t_transit, peak = _transit_and_peak(eph, geo, ra, dec, s, e, ha_start, span_deg, upper)
    gap_start, gap_end = _zenith_gap(geo.latitude_deg, dec, (upper, lower), constraints.max_altitude_deg,
                                     t_transit, w_start, w_end)
    hours = hours - np.nan_to_num(gap_end - gap_start) * 24.0
    dark_nan = lambda x: np.where(has_dark[None, :], x, np.nan)  # noqa: E731
    max_alt = dark_nan(peak)
    return NightVisibility(
        observable_hours=hours,
        window_start_jd=w_start,
        window_end_jd=w_end,
        transit_jd=t_transit,
        max_altitude_deg=max_alt,
        min_airmass=airmass_kasten_young(max_alt),
        moon_separation_deg=dark_nan(sep_c[..., _COARSE_SAMPLES // 2]),
        min_moon_separation_deg=dark_nan(sep_c.min(axis=-1)),
        dark_start_jd=np.where(has_dark, dark_start, np.nan),
        dark_end_jd=np.where(has_dark, dark_end, np.nan),
        zenith_gap_start_jd=gap_start,
        zenith_gap_end_jd=gap_end,
    )


def _zenith_gap(latitude_deg, dec, culminations, max_altitude_deg, t_transit, w_start, w_end):
    """Closed form: where the target is above ``max_altitude_deg`` (|H| ≤ H₁ around the
    transit ``t_transit``), clipped to the window; NaN where it stays below or outside."""
    none = np.full(np.shape(w_start), np.nan)
    if max_altitude_deg is None:
        return none, none
    upper, lower = culminations
    h1 = hour_angle_at_altitude_deg(latitude_deg, dec, max_altitude_deg)
    h1 = np.where(lower >= max_altitude_deg, 180.0, h1)  # above the limit all day
    half_d = h1 / SIDEREAL_DEG_PER_DAY
    a = np.maximum(t_transit - half_d, w_start)
    b = np.minimum(t_transit + half_d, w_end)
    inside = (upper > max_altitude_deg) & np.isfinite(w_start) & (b > a)
    return np.where(inside, a, np.nan), np.where(inside, b, np.nan)


def _altitude_windows(latitude_deg, dec, culminations, limit, s, ha_start, span_deg):
    """Closed form: hours above ``limit`` and the longest stretch, from hour-angle intervals.

    ``culminations`` are the (upper, lower) culmination altitudes, ``ha_start``
    each target's hour angle at the window start ``s`` and ``span_deg`` the
    window's length in degrees of rotation; arrays (N, M).
    """
    upper, lower = culminations
    h0 = hour_angle_at_altitude_deg(latitude_deg, dec, limit)
    h0 = np.where(upper < limit, -1.0, np.where(lower >= limit, 360.0, h0))  # never / always up
    lo_all, hi_all = [], []
    for n in (0, 1, 2):  # hour-angle intervals ±H₀ around successive upper transits
        a = -h0 - ha_start + 360.0 * n
        b = h0 - ha_start + 360.0 * n
        lo = np.clip(a, 0.0, span_deg)
        hi = np.clip(b, 0.0, span_deg)
        hi = np.where(h0 >= 360.0, span_deg, np.maximum(hi, lo))
        lo = np.where(h0 >= 360.0, 0.0, lo)
        if n:  # an always-up target is one interval, not three
            hi = np.where(h0 >= 360.0, lo, hi)
        lo_all.append(lo)
        hi_all.append(hi)
    lo_u, hi_u = np.stack(lo_all), np.stack(hi_all)  # (3, N, M), degrees of rotation after s
    lengths = hi_u - lo_u
    hours = lengths.sum(axis=0) / SIDEREAL_DEG_PER_DAY * 24.0
    best = np.argmax(lengths, axis=0)
    take = lambda x: np.take_along_axis(x, best[None], axis=0)[0]  # noqa: E731
    w_start = s[None, :] + take(lo_u) / SIDEREAL_DEG_PER_DAY
    w_end = s[None, :] + take(hi_u) / SIDEREAL_DEG_PER_DAY
    none = take(lengths) <= 0.0
    return hours, np.where(none, np.nan, w_start), np.where(none, np.nan, w_end)


def _where_sampling_is_needed(eph, geo, ra, dec, s, e, constraints):
    """Coarse (about hourly) check: the target-nights where the Moon, sun avoidance or
    the horizon mask could bite, and the hourly Moon separations (N, M, C)."""
    limit = constraints.altitude_limit_deg
    frac_c = np.linspace(0.0, 1.0, _COARSE_SAMPLES)
    coarse_jd = s[:, None] + (e - s)[:, None] * frac_c[None, :]  # (M, C)
    lst_c = local_sidereal_deg(eph, coarse_jd, geo.longitude_deg)
    m_ra, m_dec, _ = moon_radec_deg(eph, geo, coarse_jd, lst_c)
    m_alt = altitude_deg(geo.latitude_deg, m_dec, lst_c - m_ra)
    sep_c = coarse_separation_deg(ra[..., None], dec[..., None], m_ra[None], m_dec[None])  # (N, M, C)
    need = np.zeros(ra.shape, dtype=bool)
    # A target above the altitude limit is at least limit − (Sun's altitude)
    # from the Sun, and in the dark window the Sun is below the twilight's
    # level: only a larger avoidance angle can ever bind.
    sun_floor = limit - TWILIGHT_ALTITUDE_DEG[constraints.twilight]
    if constraints.sun_avoidance_deg > sun_floor:
        # The Sun moves about 1° a day against the stars: hourly samples need little slack.
        s_ra, s_dec = sun_radec_deg(eph, coarse_jd)
        sun_sep = coarse_separation_deg(ra[..., None], dec[..., None], s_ra[None], s_dec[None])
        need |= sun_sep.min(axis=-1) < constraints.sun_avoidance_deg + 1.0
    if constraints.min_moon_separation_deg > 0:
        moon_margin = np.maximum(sep_c - constraints.min_moon_separation_deg, -(m_alt - MOONRISE_ALTITUDE_DEG)[None])
        # Between hourly samples the Moon's altitude changes by up to ~15°,
        # its separation from a target by < 1°: 16° of slack is generous.
        need |= moon_margin.min(axis=-1) < 16.0
    if constraints.horizon_az_deg:
        need |= max(constraints.horizon_alt_deg) > limit
    return need, sep_c


def _refine_on_grid(eph, geo, ra, dec, s, e, constraints, step_min, need, hours, w_start, w_end):
    """Sample the target-nights in ``need`` on the fine grid and overwrite their hours and
    window (in place) with what every constraint allows."""
    rows_n, rows_m = np.nonzero(need)
    if not rows_n.size:
        return
    length_d = float(np.max(e[rows_m] - s[rows_m]))
    k = max(int(np.ceil(length_d * 1440.0 / step_min)) + 1, 2)
    frac = np.linspace(0.0, 1.0, k)
    nights_needed, which = np.unique(rows_m, return_inverse=True)
    night_jd = s[nights_needed, None] + (e - s)[nights_needed, None] * frac[None, :]  # (U, K)
    track = time_track(eph, geo, night_jd).rows(which)  # Sun and Moon once per night
    grid_jd = track.jd_utc  # (R, K)
    sky = sky_at(track, geo.latitude_deg, ra[rows_n, rows_m, None], dec[rows_n, rows_m, None])
    margin = constraint_margin_deg(sky, constraints)
    g_hours, g_start, g_end = integrate_margin(margin, grid_jd)
    hours[rows_n, rows_m] = g_hours
    w_start[rows_n, rows_m] = g_start
    w_end[rows_n, rows_m] = g_end


def _transit_and_peak(eph, geo, ra, dec, s, e, ha_start, span_deg, upper):
    """Closed forms: the upper transit nearest the window's middle and the highest
    altitude within the window (the culmination if a transit falls inside, else an edge)."""
    mid = 0.5 * (s + e)
    t_transit = transit_jd(eph, mid[None, :], ra, geo.longitude_deg)
    ha_end = ha_start + span_deg
    alt_edges = np.maximum(
        altitude_deg(geo.latitude_deg, dec, ha_start), altitude_deg(geo.latitude_deg, dec, ha_end)
    )
    day = 360.0 / SIDEREAL_DEG_PER_DAY
    inside = np.zeros(ra.shape, dtype=bool)
    for shift in (-day, 0.0, day):  # a polar-night window can hold a transit a day away
        t = t_transit + shift
        inside |= (t >= s[None, :]) & (t <= e[None, :])
    return t_transit, np.where(inside, upper, alt_edges)


def coarse_separation_deg(ra1, dec1, ra2, dec2):
    """Separation from the arc cosine of the dot product: a third of Vincenty's cost, and
    good to ~1e-6° except within an arcsecond of 0° or 180° — fine for hourly checks
    against limits of tens of degrees."""
    d1, d2 = np.radians(dec1), np.radians(dec2)
    c = np.sin(d1) * np.sin(d2) + np.cos(d1) * np.cos(d2) * np.cos(np.radians(ra1) - np.radians(ra2))
    return np.degrees(np.arccos(np.clip(c, -1.0, 1.0)))


def integrate_margin(margin: np.ndarray, grid_jd: np.ndarray):
    """Observable hours and the longest observable stretch per row, from margins on a grid.

    ``margin`` and ``grid_jd`` are (rows, K).  Between samples the margin is
    taken as linear, so an edge falls where the straight line between a
    negative and a non-negative sample crosses zero.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        return _integrate(margin, grid_jd)


def _integrate(margin, grid_jd):
    ok = margin >= 0.0
    m0, m1 = margin[:, :-1], margin[:, 1:]
    ok0, ok1 = ok[:, :-1], ok[:, 1:]
    zero = m0 / (m0 - m1)  # fraction of the segment at which the margin crosses 0
    dt_d = np.diff(grid_jd, axis=-1)
    frac = np.where(ok0 & ok1, 1.0, np.where(ok0 & ~ok1, zero, np.where(~ok0 & ok1, 1.0 - zero, 0.0)))
    hours = np.sum(frac * dt_d, axis=-1) * 24.0

    # Longest run of passing samples per row: label runs, measure, keep the longest.
    rows, k = ok.shape
    starts = ok & ~np.concatenate([np.zeros((rows, 1), bool), ok[:, :-1]], axis=1)
    ends = ok & ~np.concatenate([ok[:, 1:], np.zeros((rows, 1), bool)], axis=1)
    r_s, k_s = np.nonzero(starts)
    r_e, k_e = np.nonzero(ends)  # row-major order: the n-th end closes the n-th start
    w_start = np.full(rows, np.nan)
    w_end = np.full(rows, np.nan)
    if r_s.size:
        prev = np.maximum(k_s - 1, 0)
        f = margin[r_s, prev] / (margin[r_s, prev] - margin[r_s, k_s])
        t_s = np.where(k_s > 0, grid_jd[r_s, prev] + f * (grid_jd[r_s, k_s] - grid_jd[r_s, prev]), grid_jd[r_s, k_s])
        nxt = np.minimum(k_e + 1, k - 1)
        g = margin[r_e, k_e] / (margin[r_e, k_e] - margin[r_e, nxt])
        t_e = np.where(k_e < k - 1, grid_jd[r_e, k_e] + g * (grid_jd[r_e, nxt] - grid_jd[r_e, k_e]), grid_jd[r_e, k_e])
        order = np.lexsort((-(t_e - t_s), r_s))  # by row, longest first
        first = np.ones(order.size, bool)
        first[1:] = r_s[order][1:] != r_s[order][:-1]
        keep = order[first]
        w_start[r_s[keep]] = t_s[keep]
        w_end[r_s[keep]] = t_e[keep]
    return hours, w_start, w_end
