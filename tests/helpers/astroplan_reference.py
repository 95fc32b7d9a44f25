"""The tests' astroplan reference: one night's :class:`~planner.sky.almanac.Almanac`
through astroplan's ``Observer``, the slow, independent path.

The events come from :func:`planner.reports.cross_check.astroplan_events`, the
code behind ``gcplan night --cross-check`` (its docstring states the
conventions passed to astroplan: −0.833° for sunset, sunrise and the Moon's
centre, no refraction, a 1-minute grid); this adds what the tests compare
besides: the middle of the night, the Moon's illumination and phase angle
there, and the Sun's lowest and highest altitude of the span.
"""

from __future__ import annotations

import datetime as dt
from types import MappingProxyType

import numpy as np

from planner.model.site import TWILIGHTS, SiteProfile
from planner.reports.cross_check import astroplan_events, astroplan_moon, observer_for
from planner.sky.almanac import Almanac
from planner.sky.nights import night_spans_jd


def night_almanac_astroplan(site: SiteProfile, night: dt.date) -> Almanac:
    """One night through astroplan's Observer (about 0.02 s per twilight, 0.08 s per moonrise)."""
    from astropy.time import Time

    loc = site.location
    span_start, span_end = night_spans_jd([night], loc.timezone)
    e = astroplan_events(site, night, (float(span_start[0]), float(span_end[0])))
    observer = observer_for(site)
    sunset, sunrise = e["sunset"], e["sunrise"]
    middle = (sunset + sunrise) / 2.0 if np.isfinite(sunset) and np.isfinite(sunrise) else np.nan
    if not np.isfinite(middle):
        middle = float(observer.midnight(Time(span_start[0], format="jd", scale="utc"), which="next").jd)
    illumination, phase_angle = astroplan_moon(site, middle)
    samples = Time(np.linspace(span_start[0], span_end[0], 289), format="jd")
    sun_alt = observer.sun_altaz(samples).alt.degree
    return Almanac(
        nights=(night,),
        timezone=loc.timezone,
        span_start_jd=span_start,
        span_end_jd=span_end,
        sunset_jd=np.array([sunset]),
        sunrise_jd=np.array([sunrise]),
        evening_jd=MappingProxyType({name: np.array([e[f"{name}_evening"]]) for name in TWILIGHTS}),
        morning_jd=MappingProxyType({name: np.array([e[f"{name}_morning"]]) for name in TWILIGHTS}),
        moonrise_jd=np.array([e["moonrise"]]),
        moonset_jd=np.array([e["moonset"]]),
        middle_jd=np.array([middle]),
        moon_illumination=np.array([illumination]),
        moon_phase_angle_deg=np.array([phase_angle]),
        sun_min_altitude_deg=np.array([sun_alt.min()]),
        sun_max_altitude_deg=np.array([sun_alt.max()]),
    )
