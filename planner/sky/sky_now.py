"""The sky at one moment: where every target stands, how long it stays, why it is out.

Pure computation on a run of nights' ephemeris and apparent places (the app's
"what is up now" and its Moon line).  Every target at once: the constraint
margin of :func:`planner.sky.visibility.constraint_margin_deg` now and on a
grid to the end of the night, so the time left inside the limits and the
reason a target is out are the same rules the night planner uses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.sky.almanac import TWILIGHT_ALTITUDE_DEG
from planner.sky.ephemeris import moon_phase, site_geometry
from planner.sky.visibility import (
    apparent_places,
    constraint_margin_deg,
    horizon_altitude_deg,
    sky_grid,
)

#: Step of the look-ahead for the time left inside the limits, days (2 minutes:
#: the app's marks move by the minute).
STEP_D = 2.0 / 1440.0


@dataclass(frozen=True)
class SkyNow:
    """The site's sky at ``jd``: the Sun, the Moon, local sidereal time, and per target
    altitude, azimuth, airmass, Moon distance, minutes left inside the limits, and why
    it is out (``""`` when observable)."""

    jd: float
    lst_deg: float
    sun_altitude_deg: float
    moon_altitude_deg: float
    moon_illumination: float
    altitude_deg: np.ndarray
    azimuth_deg: np.ndarray
    airmass: np.ndarray
    moon_separation_deg: np.ndarray
    minutes_left: np.ndarray  # inside every limit from now (0 when out now)
    reasons: tuple[str, ...]


def why_out(constraints, alt: float, az: float, moon_sep: float, moon_alt: float, sun_sep: float,
            sun_alt: float) -> str:
    """The first limit a target breaks, in words (``""`` when it holds them all)."""
    dark = TWILIGHT_ALTITUDE_DEG.get(constraints.twilight, -18.0)
    if sun_alt > dark:
        return "daylight" if sun_alt > -0.833 else f"{constraints.twilight} twilight"
    if alt < 0:
        return "below the horizon"
    limit = constraints.altitude_limit_deg
    if alt < limit:
        return f"low: {alt:.0f}° < {limit:.0f}°"
    if constraints.horizon_az_deg and alt < float(horizon_altitude_deg(constraints, az)):
        return "behind the horizon mask"
    if constraints.max_altitude_deg is not None and alt > constraints.max_altitude_deg:
        return f"too high: {alt:.0f}° > {constraints.max_altitude_deg:.0f}°"
    if constraints.min_moon_separation_deg > 0 and moon_alt > -0.833 and moon_sep < constraints.min_moon_separation_deg:
        return f"Moon {moon_sep:.0f}° away < {constraints.min_moon_separation_deg:.0f}°"
    if constraints.sun_avoidance_deg > 0 and sun_sep < constraints.sun_avoidance_deg:
        return "too near the Sun"
    return ""


def night_places(run, start_jd: float, end_jd: float):
    """The targets' apparent places over a night (made once; :func:`sky_now` reads them at any moment)."""
    return apparent_places([t.ra_deg for t in run.targets], [t.dec_deg for t in run.targets], start_jd, end_jd)


def sky_now(run, places, jd: float, end_jd: float) -> SkyNow:
    """Every target of ``run`` (a :class:`~planner.sky.night_summary.RunOfNights`) at ``jd``,
    with the time each stays inside the limits up to ``end_jd`` (the night's usable end);
    ``places`` from :func:`night_places`."""
    loc = run.site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    c = run.constraints
    end_jd = max(float(end_jd), jd) if np.isfinite(end_jd) else jd
    times = np.append(np.arange(jd, end_jd, STEP_D), end_jd)
    grid = sky_grid(run.ephemeris, geo, places, times)
    margin = constraint_margin_deg(grid, c)
    dark = TWILIGHT_ALTITUDE_DEG.get(c.twilight, -18.0)
    ok = (margin >= 0) & (grid.sun_altitude_deg <= dark)[None, :]
    # Minutes until the first step outside the limits (the whole look-ahead if none).
    first_out = np.where(ok.all(axis=1), len(times) - 1, np.argmin(ok, axis=1))
    minutes = np.where(ok[:, 0], (times[first_out] - jd) * 1440.0, 0.0)
    sun_alt, moon_alt = float(grid.sun_altitude_deg[0]), float(grid.moon_altitude_deg[0])
    alt, az = grid.altitude_deg[:, 0], grid.azimuth_deg[:, 0]
    reasons = tuple("" if ok[k, 0] else (why_out(c, float(alt[k]), float(az[k]), float(grid.moon_separation_deg[k, 0]),
                                                moon_alt, float(grid.sun_separation_deg[k, 0]), sun_alt)
                                         or "outside the limits")
                    for k in range(len(run.targets)))
    from planner.sky.ephemeris import local_sidereal_deg

    lst = float(local_sidereal_deg(run.ephemeris, np.array([jd]), loc.longitude_deg)[0]) % 360.0
    illum = float(np.asarray(moon_phase(run.ephemeris, np.array([jd]))[0])[0])
    return SkyNow(jd, lst, sun_alt, moon_alt, illum, alt, az, grid.airmass[:, 0],
                  grid.moon_separation_deg[:, 0], minutes, reasons)
