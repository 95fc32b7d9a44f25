"""The Sun and Moon of a run of nights, computed once, and each night's usable window.

(Named the night's sky, not a "frame", so as not to be read as an image frame.)

Shared by every night of a campaign (:mod:`planner.scheduling.campaign`) and by the
one-night commands; also the ad-hoc requests of a one-night schedule (every target once, one visit).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from planner.model.constraints import Constraints
from planner.scheduling.visits import VisitRequest
from planner.sky.almanac import dark_windows_for_spans
from planner.sky.ephemeris import Ephemeris, moon_phase, site_geometry


@dataclass(frozen=True)
class NightSky:
    """The Sun and Moon of a run of nights, computed once: the ephemeris, each night's
    usable window (the Sun below the constraints' twilight) and the Moon's illuminated
    fraction at the window's middle."""

    nights: tuple[dt.date, ...]
    ephemeris: Ephemeris
    window_start_jd: np.ndarray  # NaN: no such darkness
    window_end_jd: np.ndarray
    moon_illumination: np.ndarray


def usable_windows_jd(eph: Ephemeris, geo, span_start_jd, span_end_jd, twilight: str):
    """Start and end of the Sun below the twilight's altitude in each span (noon to noon):
    the almanac's own definition (:func:`planner.almanac.dark_windows_for_spans`)."""
    return dark_windows_for_spans(eph, geo, span_start_jd, span_end_jd, twilight)


def night_sky(site, nights, constraints: Constraints, ut1_table=None, store=None) -> NightSky:
    """The Sun and Moon over ``nights`` once.  ``ut1_table`` (from
    :func:`planner.earth_rotation.load_ut1_table`) saves re-reading the IERS table
    when a process plans many times; ``store`` (a shell's
    :class:`~planner.sky.ephemeris.SampleStore`) keeps the Sun and Moon samples between
    runs — the same values, see :func:`~planner.sky.ephemeris.build_ephemeris`."""
    from planner.sky.ephemeris import build_ephemeris
    from planner.sky.nights import night_spans_jd

    nights = list(nights)
    loc = site.location
    s, e = night_spans_jd(nights, loc.timezone)
    eph = build_ephemeris(float(s.min()), float(e.max()), ut1_table=ut1_table, store=store)
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    w0, w1 = usable_windows_jd(eph, geo, s, e, constraints.twilight)
    mid = np.where(np.isfinite(w0), 0.5 * (w0 + w1), 0.5 * (s + e))
    return NightSky(tuple(nights), eph, w0, w1, np.asarray(moon_phase(eph, mid)[0], dtype=float))


def night_ephemeris(site, night: dt.date, store=None, ut1_table=None) -> Ephemeris:
    """The Sun, Moon and Earth rotation of one night, local noon to noon (what a re-plan of
    the night plans with); ``store`` and ``ut1_table`` as for :func:`night_sky` (the same
    values either way)."""
    from planner.sky.ephemeris import build_ephemeris
    from planner.sky.nights import night_spans_jd

    s, e = night_spans_jd([night], site.location.timezone)
    return build_ephemeris(float(s[0]), float(e[0]), ut1_table=ut1_table, store=store)


def held_night_ephemeris(site, night: dt.date, store, ut1_table=None) -> Ephemeris | None:
    """:func:`night_ephemeris` from the years ``store`` holds already; None where it holds
    none (an unwritable cache folder): the samples are then not made for it."""
    try:
        return night_ephemeris(site, night, _HeldYears(store), ut1_table)
    except LookupError:
        return None


class _HeldYears:
    """A Sun and Moon store as it stands: a year it does not hold stops the build before
    any sample is made."""

    def __init__(self, store):
        self._store = store

    def load(self, year: int, step_d: float):
        samples = self._store.load(year, step_d)
        if samples is None:
            raise LookupError(year)
        return samples

    def save(self, year: int, step_d: float, samples) -> None:  # only for a year not held whole
        raise LookupError(year)


def requests_for_targets(targets, exposures, purpose: str = "visit") -> list[VisitRequest]:
    """One visit per target (the ad-hoc form of ``gcplan schedule``), keyed by target name."""
    seen: dict[str, int] = {}
    out = []
    for t in targets:
        n = seen.get(t.name, 0)
        seen[t.name] = n + 1
        key = t.name if n == 0 else f"{t.name}#{n + 1}"
        out.append(VisitRequest(key, t.name, t.ra_deg, t.dec_deg, purpose, tuple(exposures), float(t.priority)))
    return out
