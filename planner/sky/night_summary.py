"""One night, or a run of nights, for a site and its targets: the core behind
``gcplan night`` and ``gcplan observability`` (and the app).

Pure computation on the core modules: almanac, apparent places, visibility
windows, and altitude curves for the figures.  No printing, no files.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from planner.cautions import CIVIL_TWILIGHT_CAUTION
from planner.model.constraints import Constraints
from planner.model.site import SiteProfile
from planner.model.target import Target
from planner.sky.almanac import Almanac, almanac_for_nights
from planner.sky.ephemeris import (
    Ephemeris,
    SampleStore,
    build_ephemeris,
    iers_warning,
    site_geometry,
)
from planner.sky.nights import night_spans_jd
from planner.sky.visibility import SkyGrid, apparent_places, sky_grid
from planner.sky.windows import NightVisibility, visibility_for_nights

#: Step of the altitude curves drawn in the night's figure, days (2 minutes).
CURVE_STEP_D = 2.0 / 1440.0


@dataclass(frozen=True)
class RunOfNights:
    """Almanac and visibility of targets over consecutive (or any) nights."""

    site: SiteProfile
    targets: tuple[Target, ...]
    constraints: Constraints
    almanac: Almanac
    visibility: NightVisibility  # arrays (targets, nights)
    ephemeris: Ephemeris
    warnings: tuple[str, ...]

    @property
    def nights(self) -> tuple[dt.date, ...]:
        return self.almanac.nights


def run_of_nights(
    site: SiteProfile,
    targets: list[Target],
    nights: list[dt.date],
    constraints: Constraints,
    store: SampleStore | None = None,
) -> RunOfNights:
    """Everything about ``targets`` on ``nights``: the Sun and Moon computed once for the span
    (or read from ``store``'s years, see :func:`~planner.sky.ephemeris.build_ephemeris`)."""
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    span_start, span_end = night_spans_jd(list(nights), loc.timezone)
    jd0, jd1 = float(span_start.min()), float(span_end.max())
    eph = build_ephemeris(jd0, jd1, store=store)
    almanac = almanac_for_nights(site, list(nights), eph)
    places = apparent_places([t.ra_deg for t in targets], [t.dec_deg for t in targets], jd0, jd1)
    vis = visibility_for_nights(eph, geo, places, almanac, constraints)
    notes = []
    iers = iers_warning(eph, jd1)
    if iers:
        notes.append(iers)
    if constraints.twilight == "civil":
        notes.append(CIVIL_TWILIGHT_CAUTION)
    dark_start, _ = almanac.dark_window_jd(constraints.twilight)
    if np.isnan(dark_start).all():
        notes.append(f"no {constraints.twilight} darkness on any of these nights at this latitude")
    return RunOfNights(site, tuple(targets), constraints, almanac, vis, eph, tuple(notes))


@dataclass(frozen=True)
class NightCurves:
    """Altitude curves over one night for the figure: targets × times, plus Sun and Moon."""

    sky: SkyGrid
    start_jd: float
    end_jd: float


def night_curves(run: RunOfNights, index: int = 0, step_d: float = CURVE_STEP_D) -> NightCurves:
    """Curves for night ``index`` of a run: from an hour before sunset to an hour after sunrise."""
    alm = run.almanac
    start = alm.sunset_jd[index] - 1.0 / 24.0
    end = alm.sunrise_jd[index] + 1.0 / 24.0
    if not np.isfinite(start):
        start = alm.span_start_jd[index]
    if not np.isfinite(end):
        end = alm.span_end_jd[index]
    jd = np.arange(start, end + step_d / 2, step_d)
    loc = run.site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    places = apparent_places([t.ra_deg for t in run.targets], [t.dec_deg for t in run.targets], start, end)
    return NightCurves(sky_grid(run.ephemeris, geo, places, jd), float(start), float(end))


@dataclass(frozen=True)
class TargetSeason:
    """One target over a run of nights: the best night and how the hours add up."""

    name: str
    total_hours: float
    best_night: dt.date | None
    best_hours: float
    nights_observable: int
    hours_by_month: dict[str, float]  # "YYYY-MM" -> hours


def seasons(run: RunOfNights) -> list[TargetSeason]:
    """Best night (most observable hours; ties to the darker Moon) and totals per target."""
    hours = run.visibility.observable_hours  # (N, M)
    months = np.array([f"{n:%Y-%m}" for n in run.nights])
    month_keys = list(dict.fromkeys(months.tolist()))
    in_month = months[None, :] == np.array(month_keys)[:, None]  # (months, M)
    by_month = hours @ in_month.T.astype(float)  # (N, months)
    # Among nights within a minute of the most hours, the least illuminated Moon wins.
    near_best = hours >= hours.max(axis=1, keepdims=True) - 1.0 / 60.0
    best = np.argmin(np.where(near_best, run.almanac.moon_illumination[None, :], np.inf), axis=1)
    rows = np.arange(hours.shape[0])
    any_hours = (hours > 0).any(axis=1)
    totals = hours.sum(axis=1)
    counts = (hours > 0).sum(axis=1)
    return [
        TargetSeason(
            name=t.name,
            total_hours=float(totals[i]),
            best_night=run.nights[best[i]] if any_hours[i] else None,
            best_hours=float(hours[rows[i], best[i]]) if any_hours[i] else 0.0,
            nights_observable=int(counts[i]),
            hours_by_month={m: float(by_month[i, j]) for j, m in enumerate(month_keys)},
        )
        for i, t in enumerate(run.targets)
    ]
