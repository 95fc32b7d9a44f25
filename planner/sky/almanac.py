"""The almanac of a night: sunset, sunrise, twilights, the Moon.

Conventions: sunset and sunrise when the Sun's centre is at
−0.833° geometric altitude (upper limb on the horizon with standard
refraction, the almanac convention); twilights end/begin at −6° (civil),
−12° (nautical) and −18° (astronomical); moonrise and moonset when the
topocentric Moon's upper limb touches the horizon: its centre at
−34′ − s, with s its topocentric semi-diameter (asin of the Moon's radius
over its distance: 14.7′–16.8′), the convention of the almanacs.  Events that do not happen in a night — the
midnight sun, polar night, a summer night that never gets astronomically
dark, a night without a moonrise — are NaN here and ``null`` in JSON.

:func:`almanac_for_nights` computes any number of nights: the Sun and Moon
come from one :class:`~planner.sky.ephemeris.Ephemeris`, evaluated on a
10-minute grid over each night; crossings are bracketed on the grid and
refined by regula falsi (Illinois variant) to well under a second.  ``gcplan
night`` uses it too, so that one night and a semester never disagree.
The night command's cross-check recomputes a night with astroplan's
``Observer`` (:mod:`planner.reports.cross_check`), which the tests also hold
this path to, within a minute.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping

import numpy as np

from planner.model.site import TWILIGHTS, SiteProfile
from planner.sky.ephemeris import (
    Ephemeris,
    SiteGeometry,
    build_ephemeris,
    local_sidereal_deg,
    moon_phase,
    moon_radec_deg,
    site_geometry,
    sun_radec_deg,
)
from planner.sky.nights import night_spans_jd
from planner.sky.sidereal import altitude_deg

#: Sun's centre at sunset/sunrise, degrees (upper limb + 34′ refraction).
SUNRISE_ALTITUDE_DEG = -0.833
#: Moon's topocentric centre at moonrise/moonset for a mean semi-diameter,
#: degrees: used where a fixed "Moon is up" level will do (constraints);
#: the almanac's rise and set use the actual semi-diameter.
MOONRISE_ALTITUDE_DEG = -0.833
#: Refraction at the horizon, degrees (34′, the almanac convention).
HORIZON_REFRACTION_DEG = 34.0 / 60.0
#: The Moon's mean radius, km (IAU).
MOON_RADIUS_KM = 1737.4
#: Sun's altitude at the end of evening twilight / start of morning twilight.
TWILIGHT_ALTITUDE_DEG = MappingProxyType({"civil": -6.0, "nautical": -12.0, "astronomical": -18.0})

#: Grid step for bracketing crossings, days.  Ten minutes cannot hide two
#: crossings of one level except at grazing incidence, where the event time
#: is ill-defined anyway.
_GRID_STEP_D = 10.0 / 1440.0
_REFINE_ITERATIONS = 8


@dataclass(frozen=True)
class Almanac:
    """Events of one or more nights, as arrays over the nights (JD UTC, NaN = none)."""

    nights: tuple[dt.date, ...]
    timezone: str
    span_start_jd: np.ndarray  # local noon
    span_end_jd: np.ndarray  # next local noon
    sunset_jd: np.ndarray
    sunrise_jd: np.ndarray
    evening_jd: Mapping[str, np.ndarray]  # twilight name -> end of evening twilight
    morning_jd: Mapping[str, np.ndarray]  # twilight name -> start of morning twilight
    moonrise_jd: np.ndarray
    moonset_jd: np.ndarray
    middle_jd: np.ndarray  # middle of the night (sunset..sunrise, else solar midnight)
    moon_illumination: np.ndarray  # at the middle of the night
    moon_phase_angle_deg: np.ndarray  # 0 = full, 180 = new
    sun_min_altitude_deg: np.ndarray  # lowest Sun of the night
    sun_max_altitude_deg: np.ndarray  # highest Sun within the span
    # Above (> 0) or below (< 0) its rise/set level all span long: the Moon
    # that never rises or never sets this night; 0 where it does either.
    moon_up_all_span: np.ndarray | None = None

    def __len__(self) -> int:
        return len(self.nights)

    def dark_window_jd(self, twilight: str) -> tuple[np.ndarray, np.ndarray]:
        """Start and end of the time with the Sun below the twilight's altitude.

        Polar night (the Sun below the level all span long) gives the whole
        span; a night that never gets that dark gives NaN for both.
        """
        if twilight not in TWILIGHT_ALTITUDE_DEG:
            raise ValueError(f"twilight must be one of {', '.join(TWILIGHTS)} (got {twilight!r})")
        return _dark_window(
            self.evening_jd[twilight], self.morning_jd[twilight], self.span_start_jd, self.span_end_jd,
            self.sun_min_altitude_deg, self.sun_max_altitude_deg, TWILIGHT_ALTITUDE_DEG[twilight],
        )

    def dark_hours(self, twilight: str = "astronomical") -> np.ndarray:
        start, end = self.dark_window_jd(twilight)
        return np.nan_to_num((end - start) * 24.0, nan=0.0)


def _dark_window(evening, morning, span_start, span_end, sun_min, sun_max, level):
    """The rules of a dark window from a night's events (see Almanac.dark_window_jd)."""
    start = np.array(evening, dtype=float)
    end = np.array(morning, dtype=float)
    always_dark = sun_max < level
    never_dark = sun_min >= level
    start = np.where(np.isnan(start) & ~never_dark, span_start, start)
    end = np.where(np.isnan(end) & ~never_dark, span_end, end)
    start = np.where(always_dark, span_start, start)
    end = np.where(always_dark, span_end, end)
    return np.where(never_dark, np.nan, start), np.where(never_dark, np.nan, end)


def dark_windows_for_spans(eph: Ephemeris, geo: SiteGeometry, span_start_jd, span_end_jd, twilight: str):
    """Only the dark windows of nights (JD UTC start, end), for one twilight.

    The same events and rules as :func:`almanac_for_nights` followed by
    :meth:`Almanac.dark_window_jd`, for callers (the scheduler) that need no
    Moon and no other levels and plan one night in tens of milliseconds.
    """
    s0 = np.atleast_1d(np.asarray(span_start_jd, dtype=float))
    s1 = np.atleast_1d(np.asarray(span_end_jd, dtype=float))
    grid = night_grid_jd(s0, s1, _GRID_STEP_D)
    sun_fn = lambda t: sun_altitude_deg(eph, geo, t)  # noqa: E731
    sun_alt = sun_fn(grid)
    low = np.argmin(sun_alt, axis=1)
    level = TWILIGHT_ALTITUDE_DEG[twilight]
    evening, morning = _crossings(grid, sun_alt, sun_fn, [(level, -1, None, low, True), (level, +1, low, None, False)])
    return _dark_window(evening, morning, s0, s1, sun_alt.min(axis=1), sun_alt.max(axis=1), level)


def sun_altitude_deg(eph: Ephemeris, geo: SiteGeometry, jd_utc) -> np.ndarray:
    """Geometric altitude of the Sun's centre (its 8.8″ parallax neglected)."""
    ra, dec = sun_radec_deg(eph, jd_utc)
    lst = local_sidereal_deg(eph, jd_utc, geo.longitude_deg)
    return altitude_deg(geo.latitude_deg, dec, lst - ra)


def moon_altitude_deg(eph: Ephemeris, geo: SiteGeometry, jd_utc) -> np.ndarray:
    """Geometric altitude of the topocentric Moon's centre."""
    lst = local_sidereal_deg(eph, jd_utc, geo.longitude_deg)
    ra, dec, _ = moon_radec_deg(eph, geo, jd_utc, lst)
    return altitude_deg(geo.latitude_deg, dec, lst - ra)


def moon_limb_above_rise_level_deg(eph: Ephemeris, geo: SiteGeometry, jd_utc) -> np.ndarray:
    """How far (degrees) the Moon's centre is above its rise/set level −34′ − semi-diameter."""
    lst = local_sidereal_deg(eph, jd_utc, geo.longitude_deg)
    ra, dec, dist_km = moon_radec_deg(eph, geo, jd_utc, lst)
    semi_diameter = np.degrees(np.arcsin(MOON_RADIUS_KM / dist_km))
    return altitude_deg(geo.latitude_deg, dec, lst - ra) + HORIZON_REFRACTION_DEG + semi_diameter


def night_grid_jd(start_jd: np.ndarray, end_jd: np.ndarray, step_d: float) -> np.ndarray:
    """Per-night sample times, shape (nights, K): each row from its start to its end."""
    length = np.nanmax(end_jd - start_jd) if len(start_jd) else 0.0
    k = max(int(np.ceil(length / step_d)) + 1, 2)
    frac = np.linspace(0.0, 1.0, k)
    return start_jd[:, None] + (end_jd - start_jd)[:, None] * frac[None, :]


def _refine(func, lo, hi, f_lo, f_hi):
    """Roots of func in brackets [lo, hi] (sign change), Illinois regula falsi, vectorised."""
    lo, hi, f_lo, f_hi = (np.array(a, dtype=float) for a in (lo, hi, f_lo, f_hi))
    side = np.zeros(lo.shape, dtype=int)
    for _ in range(_REFINE_ITERATIONS):
        denom = f_hi - f_lo
        mid = np.where(denom != 0, (lo * f_hi - hi * f_lo) / np.where(denom == 0, 1, denom), lo)
        f_mid = func(mid)
        same_lo = np.sign(f_mid) == np.sign(f_lo)
        # Illinois: halve the retained end's value when the same side is kept twice.
        f_hi = np.where(same_lo & (side == -1), f_hi / 2.0, f_hi)
        f_lo = np.where(~same_lo & (side == 1), f_lo / 2.0, f_lo)
        lo, f_lo = np.where(same_lo, mid, lo), np.where(same_lo, f_mid, f_lo)
        hi, f_hi = np.where(same_lo, hi, mid), np.where(same_lo, f_hi, f_mid)
        side = np.where(same_lo, -1, 1)
    denom = f_hi - f_lo
    return np.where(denom != 0, (lo * f_hi - hi * f_lo) / np.where(denom == 0, 1, denom), lo)


def _crossing(grid_jd, values, level, func, direction: int, *, after=None, before=None, last=False):
    """One crossing of ``level`` per row, refined; NaN where there is none.

    ``direction`` −1 is descending, +1 ascending.  Only grid segments starting
    at index ≥ ``after`` and ending at index ≤ ``before`` (per-row arrays) are
    considered; ``last`` picks the latest of them instead of the earliest.
    """
    return _crossings(grid_jd, values, func, [(level, direction, after, before, last)])[0]


def _crossings(grid_jd, values, func, specs) -> list[np.ndarray]:
    """:func:`_crossing` for several ``(level, direction, after, before, last)`` at once: the
    brackets of all of them refined in one pass (one evaluation of ``func`` per iteration
    instead of one per crossing — a night's almanac makes ten).  Every step is elementwise,
    so each root is the number :func:`_crossing` alone gives."""
    found, lo, hi, f_lo, f_hi, levels = [], [], [], [], [], []
    for level, direction, after, before, last in specs:
        above = values >= level
        if direction < 0:
            cross = above[:, :-1] & ~above[:, 1:]
        else:
            cross = ~above[:, :-1] & above[:, 1:]
        seg = np.arange(cross.shape[1])[None, :]
        if after is not None:
            cross &= seg >= np.asarray(after)[:, None]
        if before is not None:
            cross &= seg + 1 <= np.asarray(before)[:, None]
        has = cross.any(axis=1)
        idx = (cross.shape[1] - 1 - np.argmax(cross[:, ::-1], axis=1)) if last else np.argmax(cross, axis=1)
        rows = np.nonzero(has)[0]
        k = idx[rows]
        found.append(rows)
        lo.append(grid_jd[rows, k])
        hi.append(grid_jd[rows, k + 1])
        f_lo.append(values[rows, k] - level)
        f_hi.append(values[rows, k + 1] - level)
        levels.append(np.full(rows.size, float(level)))
    outs = [np.full(grid_jd.shape[0], np.nan) for _ in specs]
    if sum(r.size for r in found):
        level_at = np.concatenate(levels)
        roots = _refine(lambda t: func(t) - level_at, *(np.concatenate(a) for a in (lo, hi, f_lo, f_hi)))
        start = 0
        for out, rows in zip(outs, found):
            out[rows] = roots[start:start + rows.size]
            start += rows.size
    return outs


def almanac_for_nights(
    site: SiteProfile, nights: list[dt.date], eph: Ephemeris | None = None
) -> Almanac:
    """The almanac of every night in ``nights`` in one vectorised pass (the fast path)."""
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    span_start, span_end = night_spans_jd(list(nights), loc.timezone)
    if eph is None:
        eph = build_ephemeris(float(span_start.min()), float(span_end.max()))
    grid = night_grid_jd(span_start, span_end, _GRID_STEP_D)
    sun_fn = lambda t: sun_altitude_deg(eph, geo, t)  # noqa: E731
    moon_fn = lambda t: moon_limb_above_rise_level_deg(eph, geo, t)  # noqa: E731
    sun_alt = sun_fn(grid)
    moon_alt = moon_fn(grid)
    # The night is anchored on the Sun's lowest point of the span (solar
    # midnight): the evening events are the last descending crossings before
    # it, the morning events the first ascending ones after it.  Where the
    # clock is far from solar time (a UTC site in the Far East) the span can
    # open in darkness and close after the next sunset; that sunset belongs to
    # the next night.
    low = np.argmin(sun_alt, axis=1)

    # Sunset, sunrise and each twilight's evening and morning: refined together.
    levels = [SUNRISE_ALTITUDE_DEG] + [TWILIGHT_ALTITUDE_DEG[name] for name in TWILIGHTS]
    sun_events = _crossings(grid, sun_alt, sun_fn, [spec for level in levels for spec in (
        (level, -1, None, low, True), (level, +1, low, None, False))])
    sunset, sunrise = sun_events[0], sun_events[1]
    evening = {name: sun_events[2 + 2 * i] for i, name in enumerate(TWILIGHTS)}
    morning = {name: sun_events[3 + 2 * i] for i, name in enumerate(TWILIGHTS)}
    moonrise, moonset = _crossings(grid, moon_alt, moon_fn, [(0.0, +1, None, None, False), (0.0, -1, None, None, False)])

    rows = np.arange(len(grid))
    solar_midnight = grid[rows, low]
    middle = np.where(np.isfinite(sunset) & np.isfinite(sunrise), (sunset + sunrise) / 2.0, solar_midnight)
    illumination, phase_angle = moon_phase(eph, middle)
    return Almanac(
        nights=tuple(nights),
        timezone=loc.timezone,
        span_start_jd=span_start,
        span_end_jd=span_end,
        sunset_jd=sunset,
        sunrise_jd=sunrise,
        evening_jd=MappingProxyType(evening),
        morning_jd=MappingProxyType(morning),
        moonrise_jd=moonrise,
        moonset_jd=moonset,
        middle_jd=middle,
        moon_illumination=illumination,
        moon_phase_angle_deg=phase_angle,
        sun_min_altitude_deg=sun_alt.min(axis=1),
        sun_max_altitude_deg=sun_alt.max(axis=1),
        moon_up_all_span=np.where(moon_alt.min(axis=1) > 0, 1, np.where(moon_alt.max(axis=1) < 0, -1, 0)),
    )


def dark_windows_jd(
    site: SiteProfile, first_night: dt.date, n_nights: int, twilight: str = "nautical"
) -> np.ndarray:
    """Dark windows of consecutive nights, shape (n_nights, 2), JD UTC; NaN rows: no darkness."""
    nights = [first_night + dt.timedelta(days=i) for i in range(n_nights)]
    start, end = almanac_for_nights(site, nights).dark_window_jd(twilight)
    return np.column_stack([start, end])
