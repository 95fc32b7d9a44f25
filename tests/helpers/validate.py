"""An independent check of a night plan with astropy's full AltAz transform.

The planner works from its own fast kernels (:mod:`planner.sky.visibility`:
sidereal time, apparent places and spherical trigonometry, the Sun and Moon
interpolated from an ephemeris cache).  This validator shares none of that
path: every visit's target, the Sun and the Moon go through astropy's
``SkyCoord.transform_to(AltAz)`` (ICRS → CIRS → topocentric, with precession,
nutation, aberration, the Earth's rotation from the bundled IERS tables; no
refraction, ``pressure=0``, as the planner's geometric altitudes) at the
start, the middle, the end and a few points between.  It then checks:

* the altitude limits (lower and, if set, upper), the airmass limit (Kasten & Young 1989 from astropy's
  altitude), a horizon mask, the Moon's distance while it is up, the Sun's
  altitude against the twilight, and the sun-avoidance angle;
* that each visit lies inside the usable window and outside closed periods;
* that no two visits overlap;
* that the airmass and Moon separation the plan reports agree with astropy.

It returns the problems as text (empty: the plan passes).  Test code only: it
lives beside the tests, outside the package.
"""

from __future__ import annotations

import numpy as np

from planner.sky.airmass import airmass_kasten_young, altitude_for_airmass
from planner.sky.almanac import MOONRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG

#: Points checked per visit: start, end, and evenly between (the middle among them).
POINTS_PER_VISIT = 7
#: Tolerances of the comparison (degrees, relative airmass, days).
ALTITUDE_TOL_DEG = 0.01
SEPARATION_TOL_DEG = 0.05
REPORTED_AIRMASS_TOL = 0.01  # relative
REPORTED_MOON_TOL_DEG = 0.5
TIME_TOL_D = 1.0 / 86400.0


def validate_plan(site, plan, requests=None) -> list[str]:
    """Problems found in ``plan`` (a :class:`~planner.scheduling.night.NightPlan`); [] if none.

    ``requests`` (the plan's :class:`~planner.scheduling.visits.VisitRequest` list)
    adds each request's own airmass and Moon limits to the check.
    """
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord, get_body
    from astropy.time import Time

    visits = [v for v in plan.visits if v.status in ("planned", "done", "under way")]
    if not visits:
        return []
    problems = _timing_problems(plan, visits)
    c = plan.constraints
    by_key = {q.key: q for q in (requests or [])}
    frac = np.linspace(0.0, 1.0, POINTS_PER_VISIT)
    jd = np.array([v.start_jd + (v.end_jd - v.start_jd) * frac for v in visits])  # (V, P)
    loc = site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    t = Time(jd.ravel(), format="jd", scale="utc")
    frame = AltAz(obstime=t, location=where, pressure=0 * u.hPa)
    ra = np.repeat([v.ra_deg for v in visits], POINTS_PER_VISIT)
    dec = np.repeat([v.dec_deg for v in visits], POINTS_PER_VISIT)
    target = SkyCoord(ra * u.deg, dec * u.deg, frame="icrs").transform_to(frame)
    moon = get_body("moon", t, where).transform_to(frame)
    sun = get_body("sun", t, where).transform_to(frame)
    shape = jd.shape
    alt = target.alt.deg.reshape(shape)
    az = target.az.deg.reshape(shape)
    moon_alt = moon.alt.deg.reshape(shape)
    moon_sep = target.separation(moon).deg.reshape(shape)
    sun_alt = sun.alt.deg.reshape(shape)
    sun_sep = target.separation(sun).deg.reshape(shape)
    airmass = airmass_kasten_young(alt)

    limit = c.altitude_limit_deg
    if c.horizon_az_deg:
        mask = np.interp(np.mod(az, 360.0), np.asarray(c.horizon_az_deg), np.asarray(c.horizon_alt_deg), period=360)
    else:
        mask = np.full(shape, -90.0)
    twilight = TWILIGHT_ALTITUDE_DEG[c.twilight]
    for i, v in enumerate(visits):
        q = by_key.get(v.request_key)
        lim_i = limit
        if q is not None and q.max_airmass:
            lim_i = max(lim_i, float(altitude_for_airmass(q.max_airmass)))
        if np.min(alt[i] - lim_i) < -ALTITUDE_TOL_DEG:
            problems.append(f"visit {v.id} ({v.target}): altitude {np.min(alt[i]):.2f}° below the limit {lim_i:.2f}°")
        if c.max_altitude_deg is not None and np.max(alt[i]) > c.max_altitude_deg + ALTITUDE_TOL_DEG:
            problems.append(f"visit {v.id} ({v.target}): altitude {np.max(alt[i]):.2f}° above the upper "
                            f"limit {c.max_altitude_deg:.2f}°")
        if np.min(alt[i] - mask[i]) < -ALTITUDE_TOL_DEG:
            problems.append(f"visit {v.id} ({v.target}): below the horizon mask")
        up = moon_alt[i] > MOONRISE_ALTITUDE_DEG + SEPARATION_TOL_DEG
        sep_lim = max(c.min_moon_separation_deg, (q.min_moon_separation_deg or 0.0) if q else 0.0)
        if sep_lim > 0 and np.any(up & (moon_sep[i] < sep_lim - SEPARATION_TOL_DEG)):
            problems.append(f"visit {v.id} ({v.target}): the Moon {np.min(moon_sep[i][up]):.1f}° away "
                            f"(limit {sep_lim:g}°)")
        if np.max(sun_alt[i]) > twilight + SEPARATION_TOL_DEG:
            problems.append(f"visit {v.id} ({v.target}): the Sun at {np.max(sun_alt[i]):.2f}°, above the "
                            f"{c.twilight} limit {twilight:g}°")
        if c.sun_avoidance_deg > 0 and np.min(sun_sep[i]) < c.sun_avoidance_deg - SEPARATION_TOL_DEG:
            problems.append(f"visit {v.id} ({v.target}): {np.min(sun_sep[i]):.1f}° from the Sun")
        if q is not None and q.dark and np.any(up) and plan.moon_illumination > q.max_moon_illumination:
            problems.append(f"visit {v.id} ({v.target}): asked for dark time, the Moon is up")
        # What the plan reports, against astropy at the science start, the end and the middle.
        x_sci = float(airmass_kasten_young(_alt_at(alt[i], jd[i], v.science_start_jd)))
        for label, got, want in (("airmass_start", v.airmass_start, x_sci),
                                 ("airmass_end", v.airmass_end, float(airmass[i, -1]))):
            if not np.isfinite(got) or abs(got - want) > REPORTED_AIRMASS_TOL * want:
                problems.append(f"visit {v.id} ({v.target}): reported {label} {got:.3f}, astropy {want:.3f}")
        mid_sep = float(np.interp(0.5 * (v.science_start_jd + v.end_jd), jd[i], moon_sep[i]))
        if abs(v.moon_separation_deg - mid_sep) > REPORTED_MOON_TOL_DEG:
            problems.append(f"visit {v.id} ({v.target}): reported Moon separation {v.moon_separation_deg:.1f}°, "
                            f"astropy {mid_sep:.1f}°")
    return problems


def _timing_problems(plan, visits) -> list[str]:
    """Overlaps, visits out of order, outside the usable window or in a closed period."""
    problems = []
    order = sorted(visits, key=lambda v: v.start_jd)
    for a, b in zip(order, order[1:]):
        if b.start_jd < a.end_jd - TIME_TOL_D:
            problems.append(f"visits {a.id} ({a.target}) and {b.id} ({b.target}) overlap")
    for v in visits:
        if not (v.start_jd <= v.science_start_jd <= v.end_jd):
            problems.append(f"visit {v.id}: start, science start and end out of order")
        if v.start_jd < plan.window_start_jd - TIME_TOL_D or v.end_jd > plan.window_end_jd + TIME_TOL_D:
            problems.append(f"visit {v.id} ({v.target}) lies outside the usable window")
        for a, b in plan.closed:
            if v.start_jd < b - TIME_TOL_D and v.end_jd > a + TIME_TOL_D and v.status == "planned":
                problems.append(f"visit {v.id} ({v.target}) falls in a closed period")
    return problems


def _alt_at(alt_row, jd_row, when):
    return np.interp(when, jd_row, alt_row)
