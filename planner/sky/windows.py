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
    TimeTrack,
    constraint_margin_deg,
    horizon_altitude_deg,
    sky_at,
    time_track,
)

#: Fine-grid step where the Moon or a horizon mask must be sampled, minutes.
GRID_STEP_MIN = 5.0
#: Samples of the coarse (about hourly) Moon check per night.
_COARSE_SAMPLES = 25
#: Elements (float64) of one working array: targets are taken in blocks, and the
#: fine grid in blocks of rows, of about this size (8 MB; a handful of such arrays
#: are alive at once), so memory does not grow with targets × nights.
CHUNK_ELEMENTS = 1 << 20


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
    """Observable hours and windows for every target on every night of the almanac.

    Targets are taken in blocks and the fine grid night by night in blocks of
    rows, each sized to :data:`CHUNK_ELEMENTS`, so the working memory stays the
    same whatever the number of targets × nights; only the results grow with it.
    """
    dark_start, dark_end = almanac.dark_window_jd(constraints.twilight)
    has_dark = np.isfinite(dark_start) & np.isfinite(dark_end)
    s = np.where(has_dark, dark_start, almanac.middle_jd)
    e = np.where(has_dark, dark_end, almanac.middle_jd)
    mid = 0.5 * (s + e)  # a target's apparent place is taken as fixed for the night, at its middle
    n_targets, n_nights = places.ra_deg.shape[0], len(s)
    out = {name: np.empty((n_targets, n_nights)) for name in _FIELDS}
    need = np.zeros((n_targets, n_nights), dtype=bool)
    lst_s = local_sidereal_deg(eph, s, geo.longitude_deg)
    span_deg = (SIDEREAL_DEG_PER_DAY * (e - s))[None, :]
    coarse = _coarse_sky(eph, geo, s, e)
    for rows in _blocks(n_targets, n_nights * _COARSE_SAMPLES):
        ra, dec = _places_of(places, rows).at(mid)
        _closed_forms(eph, geo, ra, dec, s, e, lst_s, span_deg, has_dark, constraints, coarse,
                      {name: a[rows] for name, a in out.items()}, need[rows])
    # The grid finds the window as if there were no upper limit; its gap is cut out below.
    below_zenith = replace(constraints, max_altitude_deg=None)
    _refine_on_grid(eph, geo, places, mid, s, e, below_zenith, step_min, need,
                    out["hours"], out["w_start"], out["w_end"])
    del need
    for rows in _blocks(n_targets, n_nights * 4):
        dec = None if constraints.max_altitude_deg is None else _places_of(places, rows).at(mid)[1]
        _finish(geo.latitude_deg, dec, has_dark, constraints.max_altitude_deg,
                {name: a[rows] for name, a in out.items()})
    return NightVisibility(
        observable_hours=out["hours"],
        window_start_jd=out["w_start"],
        window_end_jd=out["w_end"],
        transit_jd=out["transit"],
        max_altitude_deg=out["max_alt"],
        min_airmass=out["min_airmass"],
        moon_separation_deg=out["moon_mid"],
        min_moon_separation_deg=out["moon_min"],
        dark_start_jd=np.where(has_dark, dark_start, np.nan),
        dark_end_jd=np.where(has_dark, dark_end, np.nan),
        zenith_gap_start_jd=out["gap_start"],
        zenith_gap_end_jd=out["gap_end"],
    )


def _places_of(places: ApparentPlaces, rows) -> ApparentPlaces:
    """Some targets' apparent places (interpolated to a time, the same values as all of them)."""
    return ApparentPlaces(places.epochs_jd, places.ra_deg[rows], places.dec_deg[rows])


_FIELDS = ("hours", "w_start", "w_end", "transit", "max_alt", "min_airmass", "moon_mid", "moon_min",
           "gap_start", "gap_end")


def _blocks(n: int, elements_per_item: int):
    """Slices of ``range(n)`` holding about :data:`CHUNK_ELEMENTS` elements each."""
    size = max(1, CHUNK_ELEMENTS // max(int(elements_per_item), 1))
    for i in range(0, n, size):
        yield slice(i, min(i + size, n))


def _closed_forms(eph, geo, ra, dec, s, e, lst_s, span_deg, has_dark, constraints, coarse, out, need):
    """Everything but the fine grid for a block of targets, written into ``out`` and ``need``."""
    upper, lower = culmination_altitudes_deg(geo.latitude_deg, dec)
    ha_start = wrap_180(lst_s[None, :] - ra)
    hours, w_start, w_end = _altitude_windows(geo.latitude_deg, dec, (upper, lower),
                                              constraints.altitude_limit_deg, s, ha_start, span_deg)
    out["hours"][:], out["w_start"][:], out["w_end"][:] = hours, w_start, w_end
    need[:] = _where_sampling_is_needed(ra, dec, constraints, coarse, out["moon_mid"], out["moon_min"])
    need &= (hours > 0.0) & has_dark[None, :]
    out["transit"][:], out["max_alt"][:] = _transit_and_peak(eph, geo, ra, dec, s, e, ha_start, span_deg, upper)


def _finish(latitude_deg, dec, has_dark, max_altitude_deg, out):
    """After the fine grid: no darkness, no hours; the zenith gap cut out; peak airmass."""
    dark = has_dark[None, :]
    hours = np.where(dark, out["hours"], 0.0)
    w_start = np.where(dark, out["w_start"], np.nan)
    w_end = np.where(dark, out["w_end"], np.nan)
    if max_altitude_deg is None:
        out["hours"][:] = hours
        out["gap_start"][:] = out["gap_end"][:] = np.nan
    else:
        upper, lower = culmination_altitudes_deg(latitude_deg, dec)
        gap_start, gap_end = _zenith_gap(latitude_deg, dec, (upper, lower), max_altitude_deg, out["transit"],
                                         w_start, w_end)
        out["hours"][:] = hours - np.nan_to_num(gap_end - gap_start) * 24.0
        out["gap_start"][:], out["gap_end"][:] = gap_start, gap_end
    out["w_start"][:], out["w_end"][:] = w_start, w_end
    max_alt = np.where(dark, out["max_alt"], np.nan)
    out["max_alt"][:] = max_alt
    out["min_airmass"][:] = airmass_kasten_young(max_alt)
    for name in ("moon_mid", "moon_min"):
        out[name][:] = np.where(dark, out[name], np.nan)


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


@dataclass(frozen=True)
class _CoarseSky:
    """The Moon and the Sun at the hourly samples of each night, as unit vectors (M, C, 3)."""

    moon_xyz: np.ndarray  # topocentric, true equator and equinox of date
    moon_altitude_deg: np.ndarray  # (M, C)
    sun_xyz: np.ndarray


def _coarse_sky(eph, geo, s, e) -> _CoarseSky:
    frac_c = np.linspace(0.0, 1.0, _COARSE_SAMPLES)
    coarse_jd = s[:, None] + (e - s)[:, None] * frac_c[None, :]  # (M, C)
    lst_c = local_sidereal_deg(eph, coarse_jd, geo.longitude_deg)
    m_ra, m_dec, _ = moon_radec_deg(eph, geo, coarse_jd, lst_c)
    s_ra, s_dec = sun_radec_deg(eph, coarse_jd)
    return _CoarseSky(unit_vectors(m_ra, m_dec), altitude_deg(geo.latitude_deg, m_dec, lst_c - m_ra),
                      unit_vectors(s_ra, s_dec))


def unit_vectors(ra_deg, dec_deg) -> np.ndarray:
    """Unit vectors (…, 3) towards RA/Dec: a separation is then the arc cosine of a dot
    product, and the sines and cosines are taken once per direction, not per pair."""
    ra, dec = np.radians(ra_deg), np.radians(dec_deg)
    cos_dec = np.cos(dec)
    return np.stack([cos_dec * np.cos(ra), cos_dec * np.sin(ra), np.sin(dec)], axis=-1)


def _cos_deg(angle_deg: float) -> float:
    """cos of an angle limit; a limit past 180° is met by every separation."""
    return float(np.cos(np.radians(angle_deg))) if angle_deg <= 180.0 else -np.inf


def _where_sampling_is_needed(ra, dec, constraints, coarse, moon_mid, moon_min):
    """Coarse (about hourly) check for a block of targets (B, M): the target-nights where
    the Moon, sun avoidance or the horizon mask could bite.  Writes the Moon's separation
    at the middle sample and its smallest hourly value into ``moon_mid`` and ``moon_min``.

    Separations are compared as cosines (dot products of unit vectors); arc cosines
    are taken only for the two reported values.
    """
    limit = constraints.altitude_limit_deg
    # (M, C, B): the reductions over the hourly samples run along whole rows of targets.
    targets = np.ascontiguousarray(unit_vectors(ra, dec).transpose(1, 2, 0))  # (M, 3, B)
    cos_moon = np.matmul(coarse.moon_xyz, targets)
    moon_min[:] = np.degrees(np.arccos(np.clip(cos_moon.max(axis=1), -1.0, 1.0))).T
    moon_mid[:] = np.degrees(np.arccos(np.clip(cos_moon[:, _COARSE_SAMPLES // 2], -1.0, 1.0))).T
    need = np.zeros(ra.shape, dtype=bool)
    # A target above the altitude limit is at least limit − (Sun's altitude)
    # from the Sun, and in the dark window the Sun is below the twilight's
    # level: only a larger avoidance angle can ever bind.
    sun_floor = limit - TWILIGHT_ALTITUDE_DEG[constraints.twilight]
    if constraints.sun_avoidance_deg > sun_floor:
        # The Sun moves about 1° a day against the stars: hourly samples need little slack.
        cos_sun = np.matmul(coarse.sun_xyz, targets)
        need |= (cos_sun.max(axis=1) > _cos_deg(constraints.sun_avoidance_deg + 1.0)).T
    if constraints.min_moon_separation_deg > 0:
        # Between hourly samples the Moon's altitude changes by up to ~15°,
        # its separation from a target by < 1°: 16° of slack is generous.
        # (The margin max(separation − limit, moonset altitude − Moon's altitude)
        # below 16° somewhere: the Moon within limit + 16° while above −16.8°.)
        moon_up = -(coarse.moon_altitude_deg - MOONRISE_ALTITUDE_DEG) < 16.0  # (M, C)
        threshold = _cos_deg(constraints.min_moon_separation_deg + 16.0)
        if np.isfinite(threshold):
            # Samples with the Moon down pushed below any cosine, in place (cos_moon is done with).
            cos_moon += np.where(moon_up, 0.0, -4.0)[:, :, None]
            need |= (cos_moon.max(axis=1) > threshold).T
        else:  # a limit past 180°: any sample with the Moon up
            need |= moon_up.any(axis=1)[None, :]
    if constraints.horizon_az_deg:
        need |= max(constraints.horizon_alt_deg) > limit
    return need


def _refine_on_grid(eph, geo, places, mid, s, e, constraints, step_min, need, hours, w_start, w_end):
    """Sample the target-nights in ``need`` on the fine grid and overwrite their hours and
    window (in place) with what every constraint allows.

    Night by night, in blocks of rows: the Sun, the Moon and sidereal time once per
    night (as unit vectors), then for each sample only dot products and
    comparisons; the margin in degrees is computed where a sample's verdict
    differs from a neighbour's — the only samples the edges are placed from.
    """
    nights = np.flatnonzero(need.any(axis=0))
    if not nights.size:
        return
    length_d = float(np.max(e[nights] - s[nights]))
    k = max(int(np.ceil(length_d * 1440.0 / step_min)) + 1, 2)
    frac = np.linspace(0.0, 1.0, k)
    night_jd = s[nights, None] + (e - s)[nights, None] * frac[None, :]  # (U, K)
    grid = _FineGrid(time_track(eph, geo, night_jd), geo.latitude_deg, constraints)
    for u, m in enumerate(nights):
        targets = np.flatnonzero(need[:, m])
        for block in _blocks(targets.size, k * 4):
            rows = targets[block]
            ra, dec = _places_of(places, rows).at(mid[m: m + 1])
            g_hours, g_start, g_end = grid.night(u, ra[:, 0], dec[:, 0])
            hours[rows, m] = g_hours
            w_start[rows, m] = g_start
            w_end[rows, m] = g_end


class _FineGrid:
    """One fine grid per night (U, K) and what every target's verdict needs of it."""

    def __init__(self, track: TimeTrack, latitude_deg: float, constraints: Constraints):
        self.track, self.latitude_deg, self.c = track, latitude_deg, constraints
        phi = np.radians(latitude_deg)
        lst = np.radians(track.lst_deg)
        # sin(altitude) = zenith · target, the zenith at (RA = LST, Dec = φ).
        self.zenith = np.stack([np.cos(phi) * np.cos(lst), np.cos(phi) * np.sin(lst),
                                np.full_like(lst, np.sin(phi))], axis=-2)  # (U, 3, K)
        across = lambda v: np.ascontiguousarray(np.swapaxes(v, -1, -2))  # noqa: E731  (U, 3, K)
        self.moon = across(unit_vectors(track.moon_ra_deg, track.moon_dec_deg))
        self.sun = across(unit_vectors(track.sun_ra_deg, track.sun_dec_deg))
        self.moon_down = -(track.moon_altitude_deg - MOONRISE_ALTITUDE_DEG) >= 0.0

    def night(self, u: int, ra, dec):
        """Hours and the longest window for targets at (ra, dec) on night ``u``."""
        c = self.c
        target = unit_vectors(ra, dec)  # (B, 3)
        sin_alt = target @ self.zenith[u]  # (B, K)
        ok = sin_alt >= np.sin(np.radians(c.altitude_limit_deg))
        if c.max_altitude_deg is not None:
            ok &= sin_alt <= np.sin(np.radians(c.max_altitude_deg))
        if c.min_moon_separation_deg > 0:
            ok &= (target @ self.moon[u] <= _cos_deg(c.min_moon_separation_deg)) | self.moon_down[u]
        if c.sun_avoidance_deg > 0:
            ok &= target @ self.sun[u] <= _cos_deg(c.sun_avoidance_deg)
        if c.horizon_az_deg:  # the mask can bite only below its highest point
            r, k = np.nonzero(ok & (sin_alt < np.sin(np.radians(max(c.horizon_alt_deg)))))
            sky = sky_at(self._samples(u, k), self.latitude_deg, ra[r], dec[r])
            ok[r, k] = sky.altitude_deg - horizon_altitude_deg(c, sky.azimuth_deg) >= 0.0
        # Edges are placed from the margins (degrees) on either side of a change.
        change = ok[:, 1:] != ok[:, :-1]
        edge = np.zeros_like(ok)
        edge[:, 1:] |= change
        edge[:, :-1] |= change
        r, k = np.nonzero(edge)
        exact = constraint_margin_deg(sky_at(self._samples(u, k), self.latitude_deg, ra[r], dec[r]), c)
        margin = np.where(ok, 1.0, -1.0)  # away from edges only the sign is read
        # Keep each sample's verdict (they differ only within rounding of zero).
        margin[r, k] = np.where(ok[r, k], np.maximum(exact, 0.0), np.minimum(exact, -_TINY))
        return integrate_margin(margin, np.broadcast_to(self.track.jd_utc[u], ok.shape))

    def _samples(self, u: int, k) -> TimeTrack:
        return TimeTrack(*(getattr(self.track, f)[u, k] for f in TimeTrack.__dataclass_fields__))


#: The smallest positive float: a failing sample whose margin rounds to zero gets −_TINY
#: and stays failing.
_TINY = float(np.nextafter(0.0, 1.0))


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
