"""``gcplan night --cross-check``: the night's Sun, twilights and Moon recomputed with
astroplan's ``Observer`` and set beside gcplan's own almanac.

gcplan's almanac (:mod:`planner.sky.almanac`) has its own ephemeris and root
finder; astroplan goes through astropy's full coordinate machinery, so the two
are independent paths to the same events.  Conventions passed to astroplan:

* sunset and sunrise: the Sun's centre at −0.833° (astroplan's own default
  horizon is 0°); twilights at −6°, −12° and −18°;
* moonrise and moonset: the Moon's centre at −0.833°, a fixed level, where
  gcplan uses the Moon's actual topocentric semi-diameter (14.7′–16.8′): the
  two agree to seconds at mid-latitudes and to a minute or so where the Moon
  rises slowly, at high latitude;
* no refraction model (astroplan refracts only when given a pressure), as in
  gcplan: altitudes are geometric;
* a 1-minute search grid: astroplan's default of 150 points over a day
  interpolates linearly between samples 10 minutes apart, which misplaces
  grazing events by a minute or more;
* the Moon's illuminated fraction at gcplan's middle of the night.

astroplan is imported only when a cross-check is asked for.  It downloads
nothing: the runtime policy (:func:`planner.config.configure_runtime`, set by
the command line) keeps astropy's IERS auto-download off.
"""

from __future__ import annotations

import datetime as dt
import textwrap
import warnings
from dataclasses import dataclass

import numpy as np

from planner.reports.night_report import rounded
from planner.sky.almanac import SUNRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG, Almanac
from planner.sky.nights import iso_utc, jd_to_datetime

#: Grid points over the day for astroplan's rise/set search: one a minute (see above).
GRID_POINTS = 1441
#: The events compared, in the order the table shows them: (key, label).
EVENTS = (
    ("sunset", "sunset (−0.833°)"),
    ("civil_evening", "civil (−6°) evening"),
    ("nautical_evening", "nautical (−12°) evening"),
    ("astronomical_evening", "astronomical (−18°) evening"),
    ("astronomical_morning", "astronomical (−18°) morning"),
    ("nautical_morning", "nautical (−12°) morning"),
    ("civil_morning", "civil (−6°) morning"),
    ("sunrise", "sunrise (−0.833°)"),
    ("moonrise", "moonrise"),
    ("moonset", "moonset"),
)
_TWILIGHTS = ("civil", "nautical", "astronomical")


def observer_for(site):
    """astroplan's ``Observer`` at the site (no pressure given: no refraction)."""
    import astropy.units as u
    from astroplan import Observer
    from astropy.coordinates import EarthLocation

    loc = site.location
    return Observer(
        location=EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg,
                                             loc.elevation_m * u.m),
        timezone=loc.timezone,
    )


def astroplan_events(site, night: dt.date, span_jd: tuple[float, float]) -> dict[str, float]:
    """JD (UTC) of each of :data:`EVENTS` by astroplan within the night's span
    (local noon to noon); NaN where the event does not happen in it."""
    import astropy.units as u
    from astropy.time import Time

    observer = observer_for(site)
    a, b = span_jd
    t0 = Time(a, format="jd", scale="utc")

    def within(t) -> float:
        if t is None:
            return np.nan
        jd = float(np.ma.filled(np.ma.masked_invalid(np.atleast_1d(t.jd)), np.nan)[0])
        return jd if a <= jd <= b else np.nan

    def setting_then_rising(level_deg: float) -> tuple[float, float]:
        h = level_deg * u.deg
        down = within(observer.sun_set_time(t0, which="next", horizon=h, n_grid_points=GRID_POINTS))
        after = Time(down, format="jd") if np.isfinite(down) else t0
        up = within(observer.sun_rise_time(after, which="next", horizon=h, n_grid_points=GRID_POINTS))
        return down, up

    events: dict[str, float] = {}
    with warnings.catch_warnings():
        # astroplan warns when a body never crosses the level (polar day or night):
        # that is a NaN here and a null in JSON, said in the table.
        warnings.simplefilter("ignore")
        events["sunset"], events["sunrise"] = setting_then_rising(SUNRISE_ALTITUDE_DEG)
        for name in _TWILIGHTS:
            events[f"{name}_evening"], events[f"{name}_morning"] = setting_then_rising(TWILIGHT_ALTITUDE_DEG[name])
        # The Moon's centre at −0.833° for a mean semi-diameter (see the module docstring).
        h = SUNRISE_ALTITUDE_DEG * u.deg
        events["moonrise"] = within(observer.moon_rise_time(t0, which="next", horizon=h, n_grid_points=GRID_POINTS))
        events["moonset"] = within(observer.moon_set_time(t0, which="next", horizon=h, n_grid_points=GRID_POINTS))
    return events


def astroplan_moon(site, jd: float) -> tuple[float, float]:
    """astroplan's illuminated fraction of the Moon and its phase angle (degrees) at ``jd``."""
    import astropy.units as u
    from astropy.time import Time

    observer = observer_for(site)
    t = Time(jd, format="jd", scale="utc")
    return float(observer.moon_illumination(t)), float(observer.moon_phase(t).to_value(u.deg))


def gcplan_events(alm: Almanac, i: int = 0) -> dict[str, float]:
    """The same events from gcplan's almanac (night ``i``), JD UTC or NaN."""
    events = {"sunset": float(alm.sunset_jd[i]), "sunrise": float(alm.sunrise_jd[i]),
              "moonrise": float(alm.moonrise_jd[i]), "moonset": float(alm.moonset_jd[i])}
    for name in _TWILIGHTS:
        events[f"{name}_evening"] = float(alm.evening_jd[name][i])
        events[f"{name}_morning"] = float(alm.morning_jd[name][i])
    return events


@dataclass(frozen=True)
class CrossCheck:
    """gcplan's events of one night beside astroplan's (JD UTC, NaN: does not happen)."""

    night: dt.date
    gcplan: dict[str, float]
    astroplan: dict[str, float]
    middle_jd: float  # the moment the Moon's illumination is compared
    gcplan_illumination: float
    astroplan_illumination: float
    reference: str

    def difference_s(self, key: str) -> float | None:
        """gcplan − astroplan, seconds; None unless both found the event."""
        ours, theirs = self.gcplan[key], self.astroplan[key]
        if not (np.isfinite(ours) and np.isfinite(theirs)):
            return None
        return (ours - theirs) * 86400.0

    @property
    def max_abs_difference_s(self) -> float | None:
        found = [abs(d) for d in (self.difference_s(k) for k, _ in EVENTS) if d is not None]
        return max(found) if found else None

    @property
    def found_by_one_only(self) -> list[str]:
        return [k for k, _ in EVENTS if np.isfinite(self.gcplan[k]) != np.isfinite(self.astroplan[k])]


def cross_check(site, alm: Almanac, i: int = 0) -> CrossCheck:
    """Night ``i`` of ``alm`` recomputed with astroplan (see the module docstring)."""
    import astroplan

    span = (float(alm.span_start_jd[i]), float(alm.span_end_jd[i]))
    middle = float(alm.middle_jd[i])
    lit, _phase = astroplan_moon(site, middle)
    return CrossCheck(
        night=alm.nights[i], gcplan=gcplan_events(alm, i), astroplan=astroplan_events(site, alm.nights[i], span),
        middle_jd=middle, gcplan_illumination=float(alm.moon_illumination[i]), astroplan_illumination=lit,
        reference=f"astroplan {astroplan.__version__} Observer, {GRID_POINTS}-point grid over the day; "
                  "the Moon's centre at −0.833° there, its actual semi-diameter in gcplan",
    )


def cross_check_json(check: CrossCheck) -> dict:
    """The ``cross_check`` object of ``gcplan night --json --cross-check``.

    Each event holds ``gcplan`` and ``astroplan`` (ISO 8601 UTC, null when the
    event does not happen that night) and ``difference_s`` (gcplan − astroplan,
    seconds; null unless both happen); ``max_abs_difference_s`` is the largest
    over the events both found.
    """
    return {
        "events": {key: {"gcplan": iso_utc(check.gcplan[key]), "astroplan": iso_utc(check.astroplan[key]),
                         "difference_s": rounded(check.difference_s(key), 1)} for key, _ in EVENTS},
        "moon_illumination": {"at": iso_utc(check.middle_jd), "gcplan": round(check.gcplan_illumination, 5),
                              "astroplan": round(check.astroplan_illumination, 5),
                              "difference": round(check.gcplan_illumination - check.astroplan_illumination, 5)},
        "max_abs_difference_s": rounded(check.max_abs_difference_s, 1),
        "found_by_one_only": check.found_by_one_only,
        "reference": check.reference,
    }


def _hhmmss(jd: float) -> str:
    moment = jd_to_datetime(jd)
    return "—" if moment is None else moment.strftime("%H:%M:%S")


def cross_check_text(check: CrossCheck) -> str:
    """The cross-check as a small table: gcplan's time, astroplan's, the difference in seconds."""
    lines = ["  Cross-check with astroplan (UTC; Δ = gcplan − astroplan)",
             f"  {'event':<28}{'gcplan':>10}{'astroplan':>11}{'Δ s':>8}"]
    for key, label in EVENTS:
        diff = check.difference_s(key)
        lines.append(f"  {label:<28}{_hhmmss(check.gcplan[key]):>10}{_hhmmss(check.astroplan[key]):>11}"
                     f"{'—' if diff is None else f'{diff:+.1f}':>8}")
    ours, theirs = check.gcplan_illumination, check.astroplan_illumination
    lines.append(f"  {'Moon illuminated':<28}{100 * ours:>9.2f}%{100 * theirs:>10.2f}%  Δ {100 * (ours - theirs):+.3f} %")
    worst = check.max_abs_difference_s
    lines.append(f"  largest difference {worst:.1f} s" if worst is not None else "  no event to compare")
    labels = dict(EVENTS)
    if any(check.difference_s(key) is None for key, _ in EVENTS):
        lines.append("  —: the event does not happen this night (between local noon and noon)")
    if check.found_by_one_only:
        lines.append("  found by one only: " + ", ".join(labels[k] for k in check.found_by_one_only))
    lines.extend(textwrap.wrap(f"reference: {check.reference}", 78, initial_indent="  ", subsequent_indent="    "))
    return "\n".join(lines)
