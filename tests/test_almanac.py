"""Tests for planner.sky.almanac: sunset, sunrise, twilights and the Moon, night by night.

Outside references
------------------
* skyfield with the JPL DE421 ephemeris from skyfield-data (test-only
  dependencies; the files ship inside the skyfield-data package, and the
  loader below is pointed at them so nothing is ever downloaded — a socket
  guard makes sure).  Conventions, matched to the module's:

  - Sun: ``almanac.find_settings/find_risings`` with skyfield's default solar
    horizon, the Sun's centre at −0.8333° (34′ refraction + 16′ radius), the
    almanac convention the module uses (−0.833°).
  - Twilights: ``almanac.dark_twilight_day`` (Sun's centre at −6°, −12°,
    −18°, and −0.8333° for day), its transitions found with
    ``find_discrete``.
  - Moon: the module puts the topocentric Moon's *centre* at −0.833°; the
    same horizon is passed to skyfield (``horizon_degrees=-0.8333``).  A
    second test uses skyfield's default for the Moon, the upper limb on a
    horizon lowered 34′ by refraction with the Moon's actual topocentric
    radius (asin(1737.4 km / distance), 14.7′–16.8′) — the usual almanac
    definition of moonrise.
  - skyfield's altitudes are topocentric and apparent without refraction
    (geometric), like the module's; its Sun includes the 8.8″ parallax the
    module neglects (< 0.1 minute of a sunset).

* astroplan's ``Observer`` through ``tests/helpers/astroplan_reference.py`` (built on
  :mod:`planner.reports.cross_check`, the code of ``gcplan night --cross-check``)
  (a second, slower computation of the Moon and the twilights).

Every event is held to 1 minute (gcplan's required accuracy); measured agreement is
far better for the Sun (≤ 0.06 min) and within 0.8 min for the Moon at
64.1°N, where it rises slowly and at a slant.
"""

from __future__ import annotations

import datetime as dt
import socket
import warnings
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from planner.inputs.sites import resolve_site
from planner.sky.almanac import almanac_for_nights

from helpers.astroplan_reference import night_almanac_astroplan

UNIX_EPOCH_JD = 2440587.5
EPOCH = dt.datetime(1970, 1, 1, tzinfo=dt.timezone.utc)
TWILIGHT_STATE = {"civil": 2, "nautical": 1, "astronomical": 0}  # skyfield state below each level
ONE_MINUTE_D = 1.0 / 1440.0


@pytest.fixture(scope="module", autouse=True)
def _runtime():
    from planner.config import configure_runtime

    configure_runtime()


@pytest.fixture(scope="module")
def no_network():
    """Fail loudly if anything in these tests tries to open a network connection."""

    def refuse(*args, **kwargs):
        raise AssertionError(f"network access attempted: {args!r}")

    mp = pytest.MonkeyPatch()
    mp.setattr(socket.socket, "connect", refuse)
    mp.setattr(socket, "create_connection", refuse)
    yield
    mp.undo()


@pytest.fixture(scope="module")
def de421(no_network):
    """skyfield's timescale (built-in tables) and DE421 from skyfield-data: never downloads."""
    with warnings.catch_warnings():
        # skyfield-data warns that its *finals2000A.all* is old; it is not used
        # (the timescale is skyfield's built-in one).
        warnings.simplefilter("ignore", RuntimeWarning)
        from skyfield.api import Loader
        from skyfield_data import get_skyfield_data_path

        load = Loader(get_skyfield_data_path(), verbose=False)
        ts = load.timescale(builtin=True)
        eph = load("de421.bsp")
    return ts, eph


def _sf_time(ts, jd_utc):
    return ts.from_datetime(EPOCH + dt.timedelta(days=float(jd_utc) - UNIX_EPOCH_JD))


def _jd(t) -> float:
    return (t.utc_datetime() - EPOCH).total_seconds() / 86400.0 + UNIX_EPOCH_JD


def skyfield_night(de421, lat, lon, elev, start_jd, end_jd, moon_horizon_deg=None):
    """The night's events from skyfield/DE421.

    The night is the one around the Sun's lowest point in the span (solar
    midnight, from skyfield's Sun every 10 minutes): evening events are the
    last descending crossings before it, morning events the first ascending
    ones after it.  Moonrise/moonset: the first of each in the span, with
    skyfield's own convention (upper limb, −34′ refraction, the Moon's actual
    topocentric radius — gcplan's convention too) unless ``moon_horizon_deg``
    fixes the centre's altitude.  NaN where there is none.
    """
    from skyfield import almanac
    from skyfield.api import wgs84

    ts, eph = de421
    topos = wgs84.latlon(lat, lon, elevation_m=elev)
    observer = eph["earth"] + topos
    t0, t1 = _sf_time(ts, start_jd), _sf_time(ts, end_jd)

    def crossings(finder, body, **kw):
        t, real = finder(observer, eph[body], t0, t1, **kw)
        return np.array([_jd(x) for x, ok in zip(t, real) if ok])

    grid = np.linspace(start_jd, end_jd, int(round((end_jd - start_jd) * 144)) + 1)
    sun_alt = observer.at(_sf_time(ts, grid[0]) + (grid - grid[0])).observe(eph["sun"]).apparent().altaz()[0].degrees
    lowest = grid[np.argmin(sun_alt)]

    def evening_morning(falls, rises):
        before, after = falls[falls < lowest], rises[rises > lowest]
        return (before[-1] if before.size else np.nan), (after[0] if after.size else np.nan)

    out = {}
    out["sunset"], out["sunrise"] = evening_morning(
        crossings(almanac.find_settings, "sun"), crossings(almanac.find_risings, "sun")
    )
    state = almanac.dark_twilight_day(eph, topos)
    state.step_days = 0.01  # 14-minute search steps: no short twilight is missed at high latitude
    t, s = almanac.find_discrete(t0, t1, state)
    jd = np.array([_jd(x) for x in t])
    before = np.concatenate([np.atleast_1d(state(t0)), s[:-1]]) if len(s) else np.array([], int)
    for name, level in TWILIGHT_STATE.items():
        falls = jd[(before > level) & (s <= level)]
        rises = jd[(before <= level) & (s > level)]
        out[f"evening_{name}"], out[f"morning_{name}"] = evening_morning(falls, rises)
    moon_kw = {} if moon_horizon_deg is None else {"horizon_degrees": moon_horizon_deg}
    rises = crossings(almanac.find_risings, "moon", **moon_kw)
    sets = crossings(almanac.find_settings, "moon", **moon_kw)
    out["moonrise"] = rises[0] if rises.size else np.nan
    out["moonset"] = sets[0] if sets.size else np.nan
    return out


def events_of(alm, k=0):
    out = {"sunset": alm.sunset_jd[k], "sunrise": alm.sunrise_jd[k]}
    for name in TWILIGHT_STATE:
        out[f"evening_{name}"] = alm.evening_jd[name][k]
        out[f"morning_{name}"] = alm.morning_jd[name][k]
    out["moonrise"] = alm.moonrise_jd[k]
    out["moonset"] = alm.moonset_jd[k]
    return out


def assert_events_agree(ours, ref, tol_d=ONE_MINUTE_D, keys=None, label=""):
    problems = []
    for key in keys or ref:
        a, b = float(ours[key]), float(ref[key])
        if np.isnan(a) != np.isnan(b):
            problems.append(f"{key}: ours {'none' if np.isnan(a) else a} vs reference {'none' if np.isnan(b) else b}")
        elif np.isfinite(a) and abs(a - b) > tol_d:
            problems.append(f"{key}: off by {(a - b) * 1440.0:+.2f} min")
    assert not problems, f"{label}: " + "; ".join(problems)


def _site(spec, tz):
    return resolve_site(spec, timezone=tz)


# (site, time zone, nights): the fictional demo site (−31°), Mauna Kea (20°N,
# 4200 m), La Palma (29°N), a sub-arctic site at 64.1°N (nights chosen where
# the Sun sets and it gets astronomically dark) and a southern one at 45°S.
SKYFIELD_CASES = [
    ("demo", None, "2026-12-21"),
    ("demo", None, "2027-03-10"),
    ("demo", None, "2027-06-21"),
    ("19.82,-155.47,4200", "Pacific/Honolulu", "2027-02-14"),
    ("19.82,-155.47,4200", "Pacific/Honolulu", "2027-08-05"),
    ("28.76,-17.88,2400", "Atlantic/Canary", "2027-05-12"),
    ("64.1,-21.9,50", "Atlantic/Reykjavik", "2027-01-30"),
    ("64.1,-21.9,50", "Atlantic/Reykjavik", "2027-03-02"),
    ("64.1,-21.9,50", "Atlantic/Reykjavik", "2027-09-21"),
    ("-45.0,170.5,300", "Pacific/Auckland", "2027-07-15"),
    # LAT,LON sites without a zone: the clock nearest mean solar time must give whole
    # nights on both sides of the date line (Mauna Kea, Tokyo, Chatham Islands)
    ("19.82,-155.47,4200", None, "2027-01-20"),
    ("35.7,139.7,40", None, "2027-01-10"),
    ("-44.0,-176.5,50", None, "2027-06-15"),
]


@pytest.mark.parametrize("spec, tz, night", SKYFIELD_CASES)
def test_fast_path_vs_skyfield_de421(de421, spec, tz, night):
    site = _site(spec, tz)
    loc = site.location
    alm = almanac_for_nights(site, [dt.date.fromisoformat(night)])
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    assert np.isfinite(ref["sunset"]) and np.isfinite(ref["evening_astronomical"])  # the events exist
    assert_events_agree(events_of(alm), ref, label=f"{spec} {night}")


def skyfield_moon_upper_limb(de421, lat, lon, elev, start_jd, end_jd):
    """Moon risings, settings (skyfield's default upper-limb horizon) over a long span,
    and the times of near-grazing passes: where the Moon's altitude turns
    within 0.25° of that horizon (10-minute samples).
    """
    from skyfield import almanac
    from skyfield.api import wgs84

    ts, eph = de421
    topos = wgs84.latlon(lat, lon, elevation_m=elev)
    observer = eph["earth"] + topos
    t0, t1 = _sf_time(ts, start_jd), _sf_time(ts, end_jd)
    found = []
    for finder in (almanac.find_risings, almanac.find_settings):
        t, real = finder(observer, eph["moon"], t0, t1)
        found.append(np.array([_jd(x) for x, ok in zip(t, real) if ok]))
    grid_jd = np.arange(start_jd, end_jd, 10.0 / 1440.0)
    grid = _sf_time(ts, grid_jd[0]) + (grid_jd - grid_jd[0])  # skyfield adds days
    alt, _, dist = observer.at(grid).observe(eph["moon"]).apparent().altaz()
    horizon = -34.0 / 60.0 - np.degrees(np.arcsin(1737.4 / dist.km))
    margin = alt.degrees - horizon
    turn = np.nonzero(np.diff(np.sign(np.diff(margin))) != 0)[0] + 1
    grazing = grid_jd[turn[np.abs(margin[turn]) < 0.25]]
    return found[0], found[1], grazing


@pytest.mark.parametrize(
    "spec, tz, first_night",
    [("demo", None, "2027-01-01"), ("64.1,-21.9,50", "Atlantic/Reykjavik", "2027-01-01")],
)
def test_moonrise_moonset_vs_skyfield_upper_limb(de421, spec, tz, first_night):
    """Moonrise/moonset against skyfield's upper-limb convention, a month of nights.

    skyfield's default Moon horizon is −34′ − (the Moon's topocentric angular
    radius); the module's fixed −0.833° for the centre stands for a radius
    of 16.0′.  The radius varies 14.7′–16.8′ over the month, so the two differ
    by up to 1.3′ in altitude — seconds at mid-latitudes, but minutes where
    the Moon climbs slowly (64.1°N).  Nights with a near-grazing pass (the
    Moon turning within 0.25° of the horizon) are skipped: there the time
    from rise to culmination goes as the square root of the height gained, so
    1′ of convention moves the events by minutes (measured over 2026-10 to
    2027-09: up to 2.6 min at 64.1°N and 1.8 min at 69.6°N on nights whose
    Moon peaks 0.08°–0.21° above the horizon; at most 0.12 min at the demo
    site).  On all other nights the conventions agree within a minute.
    """
    site = _site(spec, tz)
    loc = site.location
    start = dt.date.fromisoformat(first_night)
    nights = [start + dt.timedelta(days=i) for i in range(31)]
    alm = almanac_for_nights(site, nights)
    rises, sets, grazing = skyfield_moon_upper_limb(
        de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m, alm.span_start_jd[0], alm.span_end_jd[-1]
    )
    problems, compared = [], 0
    for k, night in enumerate(nights):
        a, b = alm.span_start_jd[k], alm.span_end_jd[k]
        if np.any((grazing >= a) & (grazing <= b)):
            continue
        ref = {}
        for key, times in (("moonrise", rises), ("moonset", sets)):
            inside = times[(times >= a) & (times <= b)]
            ref[key] = inside[0] if inside.size else np.nan
        compared += 1
        try:
            assert_events_agree(events_of(alm, k), ref, keys=("moonrise", "moonset"), label=str(night))
        except AssertionError as exc:
            problems.append(str(exc).splitlines()[0])
    assert compared >= 25
    assert not problems, "\n".join(problems)


# --- against astroplan ---------------------------------------------------------


def _compare_with_astroplan(spec, tz, night):
    site = _site(spec, tz)
    n = dt.date.fromisoformat(night)
    fast = almanac_for_nights(site, [n])
    slow = night_almanac_astroplan(site, n)
    # astroplan's horizon is a fixed altitude, so its Moon uses the mean
    # semi-diameter (−0.833° for the centre) while gcplan uses the actual
    # one (14.7′–16.8′): seconds apart at mid-latitudes, but minutes where the
    # Moon climbs slowly.  Moon events are compared here only below 50°
    # latitude; test_moonrise_moonset_vs_skyfield_upper_limb holds them everywhere.
    keys = None if abs(site.location.latitude_deg) < 50 else [k for k in events_of(slow) if not k.startswith("moon")]
    assert_events_agree(events_of(fast), events_of(slow), keys=keys, label=f"{spec} {night}")
    # Illuminated fraction and phase angle at the middle of the night: both
    # from astropy's geocentric Sun and Moon (astroplan's moon_illumination);
    # the middle itself agrees to a minute where the Sun sets, and the Moon's
    # phase angle changes 0.5° an hour: bounds 2e-4 and 0.05° (measured
    # 8e-5 and 0.03° where the middle is solar midnight on a 10-minute grid).
    assert abs(fast.moon_illumination[0] - slow.moon_illumination[0]) < 2e-4
    assert abs(fast.moon_phase_angle_deg[0] - slow.moon_phase_angle_deg[0]) < 0.05
    if np.isfinite(fast.sunset_jd[0]):
        assert abs(fast.middle_jd[0] - slow.middle_jd[0]) < ONE_MINUTE_D


@pytest.mark.slow
def test_fast_path_vs_astroplan_demo():
    _compare_with_astroplan("demo", None, "2027-05-12")


@pytest.mark.slow
@pytest.mark.filterwarnings("ignore:Target with index")  # astroplan on polar night: no sunrise to find
@pytest.mark.parametrize(
    "spec, tz, night",
    [
        ("demo", None, "2026-12-21"),
        ("64.1,-21.9,50", "Atlantic/Reykjavik", "2027-09-21"),
        ("69.6,18.9,100", "Europe/Oslo", "2026-12-21"),
        ("-45.0,170.5,300", "Pacific/Auckland", "2027-07-15"),
    ],
)
def test_fast_path_vs_astroplan(spec, tz, night):
    _compare_with_astroplan(spec, tz, night)


def test_many_nights_equal_one_at_a_time():
    # The vectorised pass over a run of nights gives each night what it gives
    # alone (rows do not disturb each other; nights need not be consecutive).
    site = _site("demo", None)
    nights = [dt.date(2027, 1, 5), dt.date(2027, 4, 20), dt.date(2027, 7, 1)]
    together = almanac_for_nights(site, nights)
    for k, night in enumerate(nights):
        alone = almanac_for_nights(site, [night])
        a, b = events_of(together, k), events_of(alone)
        assert_events_agree(a, b, tol_d=1.0 / 86400.0, label=str(night))


def test_events_refined_together_equal_each_refined_alone():
    # The almanac refines its ten crossings in one pass; each is the same number,
    # to the bit, as that crossing refined by itself (common practice, no source).
    from planner.sky import almanac as al

    site = _site("demo", None)
    nights = [dt.date(2027, 1, 1) + dt.timedelta(days=9 * i) for i in range(41)]
    got = almanac_for_nights(site, nights)
    loc = site.location
    geo = al.site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    s0, s1 = al.night_spans_jd(nights, loc.timezone)
    eph = al.build_ephemeris(float(s0.min()), float(s1.max()))
    grid = al.night_grid_jd(s0, s1, al._GRID_STEP_D)
    sun_fn = lambda t: al.sun_altitude_deg(eph, geo, t)  # noqa: E731
    moon_fn = lambda t: al.moon_limb_above_rise_level_deg(eph, geo, t)  # noqa: E731
    sun, moon = sun_fn(grid), moon_fn(grid)
    low = np.argmin(sun, axis=1)
    alone = {"sunset": al._crossing(grid, sun, al.SUNRISE_ALTITUDE_DEG, sun_fn, -1, before=low, last=True),
             "sunrise": al._crossing(grid, sun, al.SUNRISE_ALTITUDE_DEG, sun_fn, +1, after=low),
             "moonrise": al._crossing(grid, moon, 0.0, moon_fn, +1),
             "moonset": al._crossing(grid, moon, 0.0, moon_fn, -1)}
    for name, level in al.TWILIGHT_ALTITUDE_DEG.items():
        alone[f"evening {name}"] = al._crossing(grid, sun, level, sun_fn, -1, before=low, last=True)
        alone[f"morning {name}"] = al._crossing(grid, sun, level, sun_fn, +1, after=low)
    together = {"sunset": got.sunset_jd, "sunrise": got.sunrise_jd, "moonrise": got.moonrise_jd,
                "moonset": got.moonset_jd, **{f"evening {k}": v for k, v in got.evening_jd.items()},
                **{f"morning {k}": v for k, v in got.morning_jd.items()}}
    assert together.keys() == alone.keys()
    for name in alone:
        assert np.array_equal(together[name], alone[name], equal_nan=True), name
    assert np.isfinite(together["moonrise"]).sum() > 30 and np.isfinite(together["sunset"]).all()


# --- the edge cases the sky really has ---------------------------------------


TROMSO = ("69.6,18.9,100", "Europe/Oslo")


def test_polar_day_at_69_6_north(de421):
    site = _site(*TROMSO)
    alm = almanac_for_nights(site, [dt.date(2027, 6, 20)])
    loc = site.location
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    # skyfield: the Sun neither sets nor rises, and twilight never begins.
    assert all(np.isnan(v) for k, v in ref.items() if not k.startswith("moon"))
    assert_events_agree(events_of(alm), ref, label="polar day")
    assert np.isnan(alm.sunset_jd[0]) and np.isnan(alm.sunrise_jd[0])
    for twilight in TWILIGHT_STATE:
        start, end = alm.dark_window_jd(twilight)
        assert np.isnan(start[0]) and np.isnan(end[0])
        assert alm.dark_hours(twilight)[0] == 0.0
    assert alm.sun_min_altitude_deg[0] > 0.0  # the midnight sun (about +3°)


def test_polar_night_at_69_6_north(de421):
    # 69.6°N on 21 December: the Sun peaks about 3° below the horizon, so
    # there is no sunrise or sunset, but it climbs above −6°, −12° and −18°
    # around noon: all three twilights have crossings, and the dark windows
    # run from the evening crossing to the morning one.
    site = _site(*TROMSO)
    alm = almanac_for_nights(site, [dt.date(2026, 12, 21)])
    loc = site.location
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    assert np.isnan(ref["sunset"]) and np.isnan(ref["sunrise"])
    assert all(np.isfinite(ref[f"{w}_{name}"]) for w in ("evening", "morning") for name in TWILIGHT_STATE)
    assert_events_agree(events_of(alm), ref, label="polar night")
    for name in ("nautical", "astronomical"):
        start, end = alm.dark_window_jd(name)
        assert start[0] == alm.evening_jd[name][0] and end[0] == alm.morning_jd[name][0]
        assert alm.dark_hours(name)[0] == pytest.approx((end[0] - start[0]) * 24.0)
    assert alm.dark_hours("nautical")[0] > alm.dark_hours("astronomical")[0] > 12.0


def test_polar_night_with_a_24_hour_dark_window(de421):
    # 82.5°N (Alert, Nunavut) on 21 December: the Sun never climbs above
    # −15.9° (90° − 82.5° − 23.4°): nautically dark all span long, while
    # astronomical twilight still comes and goes around noon.
    site = _site("82.5,-62.3,30", "America/Toronto")
    alm = almanac_for_nights(site, [dt.date(2026, 12, 21)])
    loc = site.location
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    assert np.isnan(ref["evening_nautical"]) and np.isfinite(ref["evening_astronomical"])
    assert_events_agree(events_of(alm), ref, label="Alert")
    start, end = alm.dark_window_jd("nautical")
    assert start[0] == alm.span_start_jd[0] and end[0] == alm.span_end_jd[0]
    assert alm.dark_hours("nautical")[0] == pytest.approx(24.0)
    assert 0.0 < alm.dark_hours("astronomical")[0] < 24.0


def test_summer_night_at_55_north_never_astronomically_dark(de421):
    # 55°N at the June solstice: the Sun bottoms out near −11.6°
    # (−(90° − 55° − 23.4°)): civil darkness only.
    site = _site("55.0,-3.0,50", "Europe/London")
    alm = almanac_for_nights(site, [dt.date(2027, 6, 21)])
    loc = site.location
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    assert np.isfinite(ref["evening_civil"]) and np.isnan(ref["evening_nautical"])
    assert_events_agree(events_of(alm), ref, label="55N June")
    for name in ("nautical", "astronomical"):
        start, end = alm.dark_window_jd(name)
        assert np.isnan(start[0]) and np.isnan(end[0])
        assert alm.dark_hours(name)[0] == 0.0
    assert alm.dark_hours("civil")[0] > 4.0


@pytest.mark.parametrize(
    "spec, tz, night, span_hours",
    [
        # Europe/Berlin springs forward at 02:00 on 2027-03-28: a 23-hour night.
        ("52.5,13.4,40", "Europe/Berlin", "2027-03-27", 23.0),
        # Chile falls back at midnight starting 2027-04-04: a 25-hour night.
        ("-33.4,-70.6,500", "America/Santiago", "2027-04-03", 25.0),
    ],
)
def test_night_across_a_daylight_saving_change(de421, spec, tz, night, span_hours):
    from planner.sky.nights import jd_to_datetime, local_hhmm

    site = _site(spec, tz)
    n = dt.date.fromisoformat(night)
    alm = almanac_for_nights(site, [n])
    assert (alm.span_end_jd[0] - alm.span_start_jd[0]) * 24.0 == pytest.approx(span_hours, abs=1e-6)
    loc = site.location
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    assert_events_agree(events_of(alm), ref, label=f"{tz} {night}")
    # Local clock readings follow the zone's rules (zoneinfo/tzdata) on both
    # sides of the change: the sunset is on the night's date, the sunrise on
    # the next, and their UTC offsets differ by the hour that was changed.
    zone = ZoneInfo(tz)
    sunset, sunrise = jd_to_datetime(alm.sunset_jd[0], tz), jd_to_datetime(alm.sunrise_jd[0], tz)
    assert sunset.date() == n and sunrise.date() == n + dt.timedelta(days=1)
    offset_change_h = (sunrise.utcoffset() - sunset.utcoffset()).total_seconds() / 3600.0
    assert offset_change_h == pytest.approx(24.0 - span_hours)
    sf_sunrise_local = (EPOCH + dt.timedelta(days=ref["sunrise"] - UNIX_EPOCH_JD)).astimezone(zone)
    shown = dt.datetime.strptime(local_hhmm(alm.sunrise_jd[0], tz), "%H:%M")
    minutes = shown.hour * 60 + shown.minute
    assert abs(minutes - (sf_sunrise_local.hour * 60 + sf_sunrise_local.minute + sf_sunrise_local.second / 60)) <= 1.5


def test_night_beyond_the_bundled_iers_table(de421):
    # 2031 is past the bundled IERS predictions: the almanac still works
    # (UT1 − UTC held at its last value), the events agree with skyfield
    # (whose built-in ΔT table extrapolates independently), and exactly one
    # warning — gcplan's own sentence — reaches the user, not astropy's repeats.
    from planner.model.constraints import constraints_for_site
    from planner.sky.ephemeris import build_ephemeris, iers_warning
    from planner.sky.night_summary import run_of_nights

    site = _site("demo", None)
    night = dt.date(2031, 5, 12)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("default")
        from planner.config import configure_runtime

        configure_runtime()  # its filters, inside this recording context
        alm = almanac_for_nights(site, [night])
        run = run_of_nights(site, [], [night], constraints_for_site(site))
        eph = build_ephemeris(alm.span_start_jd[0], alm.span_end_jd[0])
    loc = site.location
    ref = skyfield_night(de421, loc.latitude_deg, loc.longitude_deg, loc.elevation_m,
                         alm.span_start_jd[0], alm.span_end_jd[0])
    assert_events_agree(events_of(alm), ref, label="2031")
    leaked = [str(w.message) for w in caught]
    assert not leaked, leaked
    iers_notes = [w for w in run.warnings if "IERS" in w]
    assert len(iers_notes) == 1
    assert iers_warning(eph, alm.span_end_jd[0]) == iers_notes[0]
    assert iers_warning(eph, eph.iers_end_jd - 1.0) is None


def test_clock_far_from_solar_time(de421):
    """A site given UTC far from its solar time: at 139.7°E local clock
    noon (12:00 UTC) is 21:19 solar time, after dark.  The night's span then
    starts in the dark; the sunrise inside the span and the dark stretch
    around the Sun's lowest point must still be found.  (skyfield: on the
    night of 2027-01-10 the Sun rises at 21:51 UTC and astronomical twilight
    begins at 20:21 UTC, both inside the span 2027-01-10T12:00Z..2027-01-11T12:00Z.)
    """
    site = _site("35.7,139.7", "UTC")
    assert site.location.timezone == "UTC"
    assert _site("35.7,139.7", None).location.timezone == "Etc/GMT-9"  # without a zone: UTC+9
    alm = almanac_for_nights(site, [dt.date(2027, 1, 10)])
    loc = site.location
    from skyfield import almanac as sf_almanac
    from skyfield.api import wgs84

    ts, eph = de421
    obs = eph["earth"] + wgs84.latlon(loc.latitude_deg, loc.longitude_deg, elevation_m=loc.elevation_m)
    t, real = sf_almanac.find_risings(obs, eph["sun"], _sf_time(ts, alm.span_start_jd[0]), _sf_time(ts, alm.span_end_jd[0]))
    risings = [_jd(x) for x, ok in zip(t, real) if ok]
    assert len(risings) == 1  # skyfield: one sunrise in the span
    assert np.isfinite(alm.sunrise_jd[0]), "the sunrise inside the span is missing"
    assert abs(alm.sunrise_jd[0] - risings[0]) < ONE_MINUTE_D
    # The astronomical dark window holds the Sun's lowest point of the span
    # (about 14:50 UTC) and ends at skyfield's dawn, the first end of
    # astronomical night (state 0 → 1 of dark_twilight_day) in the span.
    jd = np.linspace(alm.span_start_jd[0], alm.span_end_jd[0], 1441)
    alt = obs.at(_sf_time(ts, jd[0]) + (jd - jd[0])).observe(eph["sun"]).apparent().altaz()[0].degrees
    lowest = jd[np.argmin(alt)]
    state = sf_almanac.dark_twilight_day(eph, wgs84.latlon(loc.latitude_deg, loc.longitude_deg, elevation_m=loc.elevation_m))
    t, s = sf_almanac.find_discrete(_sf_time(ts, alm.span_start_jd[0]), _sf_time(ts, alm.span_end_jd[0]), state)
    dawn = min(_jd(x) for x, now in zip(t, s) if now == 1 and _jd(x) > lowest)
    start, end = alm.dark_window_jd("astronomical")
    assert start[0] <= lowest <= end[0], "the dark window misses the middle of the night"
    assert abs(end[0] - dawn) < ONE_MINUTE_D


def test_night_text_names_the_solar_clock_and_keeps_the_morning(capsys):
    # Mauna Kea as LAT,LON without a zone on 2027-01-20: skyfield/DE421 gives 10.3 h of
    # astronomical darkness (see SKYFIELD_CASES); the whole night is in the text.
    from planner.cli import main

    assert main(["night", "--site=19.82,-155.47,4200", "--date", "2027-01-20", "--target", "NGC 104"]) == 0
    out = capsys.readouterr().out
    assert "Etc/GMT+10 (UTC−10:00 at midnight)" in out
    assert "local clock: the whole hour nearest the site's mean solar time" in out
    assert "astronomically dark: 10.3 h" in out
    sun = next(line for line in out.splitlines() if line.strip().startswith("sun ("))
    assert "—" not in sun and len(sun.split()) == 6  # sunset and sunrise, local and UTC


def test_moon_events_on_their_side_of_the_night(de421, capsys):
    # Demo site, night of 2027-01-05 (a waning crescent): skyfield/DE421 sets the Moon
    # before sunset and raises it before dawn.  The night log puts the moonset in the
    # evening column and the moonrise in the morning one; the night text says "before sunset".
    from types import SimpleNamespace

    from skyfield import almanac as sf_almanac
    from skyfield.api import wgs84

    from planner.cli import main
    from planner.reports.nightlog import almanac_rows

    site = _site("demo", None)
    alm = almanac_for_nights(site, [dt.date(2027, 1, 5)])
    ts, eph = de421
    loc = site.location
    obs = eph["earth"] + wgs84.latlon(loc.latitude_deg, loc.longitude_deg, elevation_m=loc.elevation_m)
    t, kinds = sf_almanac.find_settings(obs, eph["moon"], _sf_time(ts, alm.span_start_jd[0]),
                                        _sf_time(ts, alm.sunset_jd[0]))
    assert len(t) == 1  # skyfield: the Moon sets once between local noon and sunset
    assert abs(alm.moonset_jd[0] - _jd(t[0])) < ONE_MINUTE_D
    rows = almanac_rows(SimpleNamespace(almanac=alm, site=site))
    evening = [r[0] for r in rows]
    morning = [r[3] for r in rows]
    assert "moonset" in evening and "moonrise" in morning
    assert main(["night", "--site", "demo", "--date", "2027-01-05", "--target", "47 Tuc"]) == 0
    out = capsys.readouterr().out
    moon_line = next(line for line in out.splitlines() if "moonset" in line)
    assert moon_line.index("moonset") < moon_line.index("moonrise") and "before sunset" in moon_line
