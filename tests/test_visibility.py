"""Tests for planner.sky.visibility: targets × times in one vectorised computation.

Outside reference: astropy's full transforms with refraction off —
``SkyCoord(...).transform_to(AltAz(location=..., obstime=..., pressure=0))``
for altitude and azimuth, ``HADec`` (same options) for the hour angle, and
``get_body("moon"/"sun", t, location=...)`` in the same AltAz frame for the
separations as the observer sees them — for the whole bundled catalog at a
few hundred instants over a year, and for random targets at random sites
(hypothesis).  gcplan's altitudes must be within 0.01°.
Airmass: Kasten & Young 1989, Applied Optics 28, 4735, eq. 3, written out here.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from planner.model.constraints import Constraints
from planner.sky.ephemeris import build_ephemeris, site_geometry
from planner.sky.sidereal import wrap_180
from planner.sky.visibility import (
    angular_separation_deg,
    apparent_places,
    constraint_margin_deg,
    horizon_altitude_deg,
    sky_at,
    sky_grid,
    sun_cannot_bind,
    time_track,
)

YEAR_START_JD = 2461314.5  # 2026-10-01: a year inside the bundled IERS table
YEAR_END_JD = YEAR_START_JD + 365.0


@pytest.fixture(scope="module", autouse=True)
def _runtime():
    from planner.config import configure_runtime

    configure_runtime()


@pytest.fixture(scope="module")
def catalog_radec():
    from planner.inputs.catalog import load_catalog
    from planner.inputs.targets import catalog_targets

    targets = catalog_targets(load_catalog())
    assert len(targets) >= 140
    return np.array([t.ra_deg for t in targets]), np.array([t.dec_deg for t in targets])


@pytest.fixture(scope="module")
def year_ephemeris():
    return build_ephemeris(YEAR_START_JD, YEAR_END_JD)


def kasten_young(alt_deg):
    """Kasten & Young 1989 eq. 3 (tests/REFERENCES.md, "Airmass"; independent of planner.sky.airmass)."""
    h = np.asarray(alt_deg, dtype=float)
    return 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)


def astropy_reference(lat, lon, elev, ra, dec, jd):
    """Altitude, azimuth, hour angle of targets (N, T), and the Moon's and Sun's
    separations from them, with astropy's full transforms (refraction off)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, HADec, SkyCoord, get_body
    from astropy.time import Time

    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elev * u.m)
    t = Time(jd, format="jd", scale="utc")
    stars = SkyCoord(np.atleast_1d(ra) * u.deg, np.atleast_1d(dec) * u.deg, frame="icrs")[:, None]
    altaz = AltAz(location=loc, obstime=t, pressure=0 * u.hPa)
    aa = stars.transform_to(AltAz(location=loc, obstime=t[None, :], pressure=0 * u.hPa))
    hd = stars.transform_to(HADec(location=loc, obstime=t[None, :], pressure=0 * u.hPa))
    moon = get_body("moon", t, location=loc).transform_to(altaz)
    sun = get_body("sun", t, location=loc).transform_to(altaz)

    def sep(body):
        return _altaz_separation(aa.alt.degree, aa.az.degree, body.alt.degree[None], body.az.degree[None])

    return {
        "alt": aa.alt.degree,
        "az": aa.az.degree,
        "ha": hd.ha.degree,
        "moon_sep": sep(moon),
        "sun_sep": sep(sun),
        "moon_alt": moon.alt.degree,
        "sun_alt": sun.alt.degree,
    }


def _altaz_separation(alt1, az1, alt2, az2):
    """Great-circle angle between two horizon directions (degrees), haversine form."""
    a1, a2 = np.radians(alt1), np.radians(alt2)
    daz = np.radians(az2 - az1)
    h = np.sin((a2 - a1) / 2) ** 2 + np.cos(a1) * np.cos(a2) * np.sin(daz / 2) ** 2
    return np.degrees(2 * np.arcsin(np.sqrt(np.clip(h, 0, 1))))


def _compare(grid, ref, dec):
    """Largest differences (degrees): altitude, azimuth on the sky, hour angle on the sky, separations."""
    alt_ref = ref["alt"]
    # Azimuth is meaningless at the zenith: compare it as an arc (× cos alt).
    d_az = np.abs(wrap_180(grid.azimuth_deg - ref["az"])) * np.cos(np.radians(alt_ref))
    d_ha = np.abs(wrap_180(grid.hour_angle_deg - ref["ha"])) * np.cos(np.radians(np.atleast_1d(dec)))[:, None]
    return {
        "alt": np.max(np.abs(grid.altitude_deg - alt_ref)),
        "az": np.max(d_az),
        "ha": np.max(d_ha),
        "moon_sep": np.max(np.abs(grid.moon_separation_deg - ref["moon_sep"])),
        "sun_sep": np.max(np.abs(grid.sun_separation_deg - ref["sun_sep"])),
        "moon_alt": np.max(np.abs(grid.moon_altitude_deg - ref["moon_alt"])),
        "sun_alt": np.max(np.abs(grid.sun_altitude_deg - ref["sun_alt"])),
    }


# Bounds (degrees).  Altitude: gcplan's required 0.01° (measured 0.0009° over the
# catalog: annual aberration, precession and nutation are astropy's own,
# interpolated between 15-day epochs; diurnal aberration, 0.3″, and polar
# motion are what the module leaves out).  Azimuth and hour angle as arcs: the
# same 0.01°.  Separations: the Moon's place is good to a few arcseconds
# (test_ephemeris), the Sun's apparent place to < 1″ but geocentric (8.8″
# parallax): 0.01° for both.  Sun altitude: 0.004° (its parallax, neglected by
# design); Moon altitude: 0.003° (test_ephemeris).
BOUNDS = {"alt": 0.01, "az": 0.01, "ha": 0.01, "moon_sep": 0.01, "sun_sep": 0.01, "moon_alt": 0.003, "sun_alt": 0.004}


@pytest.mark.parametrize("lat, lon, elev", [(-30.95, -70.45, 2310.0), (64.1, -21.9, 50.0)])
def test_sky_grid_whole_catalog_against_astropy(year_ephemeris, catalog_radec, lat, lon, elev):
    ra, dec = catalog_radec
    rng = np.random.default_rng(int(abs(lat)))
    jd = np.sort(YEAR_START_JD + 1.0 + rng.uniform(0.0, 363.0, 200))
    places = apparent_places(ra, dec, YEAR_START_JD, YEAR_END_JD)
    grid = sky_grid(year_ephemeris, site_geometry(lat, lon, elev), places, jd)
    assert grid.altitude_deg.shape == (len(ra), len(jd))
    ref = astropy_reference(lat, lon, elev, ra, dec, jd)
    worst = _compare(grid, ref, dec)
    assert all(worst[k] < BOUNDS[k] for k in BOUNDS), worst
    # Airmass: Kasten & Young of the altitude, NaN below the horizon.
    up = ref["alt"] > 1.0
    np.testing.assert_allclose(grid.airmass[up], kasten_young(ref["alt"][up]), rtol=2e-3)
    assert np.all(np.isnan(grid.airmass[ref["alt"] < -0.1]))


# Seconds an example: a few cases, derandomised in CI (tests/conftest.py), and no
# shrinking (it could run for minutes); a failure prints its arguments and blob.
@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          phases=[Phase.explicit, Phase.reuse, Phase.generate])
@given(
    lat=st.floats(-75.0, 75.0),
    lon=st.floats(-180.0, 180.0),
    elev=st.floats(0.0, 4500.0),
    ra=st.lists(st.floats(0.0, 359.99), min_size=3, max_size=3),
    dec=st.lists(st.floats(-89.0, 89.0), min_size=3, max_size=3),
    start=st.floats(0.0, 330.0),
)
def test_sky_grid_random_sites_and_targets(lat, lon, elev, ra, dec, start):
    jd0 = YEAR_START_JD + start
    jd = jd0 + np.linspace(0.05, 29.95, 40)
    eph = build_ephemeris(jd0, jd0 + 30.0)
    places = apparent_places(np.array(ra), np.array(dec), jd0, jd0 + 30.0)
    grid = sky_grid(eph, site_geometry(lat, lon, elev), places, jd)
    ref = astropy_reference(lat, lon, elev, np.array(ra), np.array(dec), jd)
    worst = _compare(grid, ref, np.array(dec))
    assert all(worst[k] < BOUNDS[k] for k in BOUNDS), worst


# --- pieces of the constraint margin -------------------------------------------


def test_angular_separation_against_astropy():
    import astropy.units as u
    from astropy.coordinates import SkyCoord

    rng = np.random.default_rng(21)
    ra1, ra2 = rng.uniform(0, 360, (2, 3000))
    dec1, dec2 = np.degrees(np.arcsin(rng.uniform(-1, 1, (2, 3000))))
    # include near-coincident and near-antipodal pairs, where naive formulas fail
    ra2[:10], dec2[:10] = ra1[:10] + 1e-6, dec1[:10]
    ra2[10:20], dec2[10:20] = ra1[10:20] + 180.0, -dec1[10:20] + 1e-6
    ref = SkyCoord(ra1 * u.deg, dec1 * u.deg).separation(SkyCoord(ra2 * u.deg, dec2 * u.deg)).degree
    assert np.max(np.abs(angular_separation_deg(ra1, dec1, ra2, dec2) - ref)) < 1e-9


def test_horizon_mask_interpolates_and_wraps():
    # The demo profile's mask: [az, alt] = [0, 4] [30, 9] ... [330, 3]; linear
    # in azimuth and wrapping through north (330° → 360°/0°).
    c = Constraints(
        min_altitude_deg=0.0, max_airmass=None, twilight="nautical", min_moon_separation_deg=0.0,
        horizon_az_deg=(0.0, 30.0, 60.0, 90.0, 150.0, 225.0, 270.0, 330.0),
        horizon_alt_deg=(4.0, 9.0, 14.0, 8.0, 3.0, 6.0, 3.0, 3.0),
    )
    az = np.array([0.0, 15.0, 45.0, 60.0, 120.0, 345.0, 359.0, 360.0, 375.0])
    expected = np.array([4.0, 6.5, 11.5, 14.0, 5.5, 3.5, 3.0 + 1.0 * 29.0 / 30.0, 4.0, 6.5])
    np.testing.assert_allclose(horizon_altitude_deg(c, az), expected, atol=1e-12)
    none = Constraints(0.0, None, "nautical", 0.0)
    assert np.all(horizon_altitude_deg(none, az) == 0.0)


def test_altitude_limit_is_the_stricter_one():
    # Kasten & Young give 1.9943 at h = 30° (tests/REFERENCES.md, "Airmass"), so that
    # airmass limit is the 30° altitude limit; 2.0 lies just below 30° (sec z
    # would put it at exactly 30°).
    assert Constraints(20.0, 1.9943, "nautical", 0.0).altitude_limit_deg == pytest.approx(30.0, abs=2e-3)
    limit_2 = Constraints(20.0, 2.0, "nautical", 0.0).altitude_limit_deg
    assert 29.5 < limit_2 < 30.0
    assert kasten_young(limit_2) == pytest.approx(2.0, rel=1e-9)
    assert Constraints(40.0, 2.0, "nautical", 0.0).altitude_limit_deg == 40.0
    assert Constraints(15.0, None, "nautical", 0.0).altitude_limit_deg == 15.0


def test_margin_signs_follow_each_constraint(year_ephemeris):
    # On an astropy-checked grid (test above), each constraint's margin is
    # negative exactly where the constraint fails, judged from the reference.
    lat, lon, elev = -30.95, -70.45, 2310.0
    ra = np.array([10.0, 95.0, 180.0, 250.0, 300.0])
    dec = np.array([-60.0, 20.0, -10.0, -25.0, 5.0])
    jd = YEAR_START_JD + 40.0 + np.linspace(0.0, 3.0, 300)
    grid = sky_grid(year_ephemeris, site_geometry(lat, lon, elev), apparent_places(ra, dec, jd[0], jd[-1]), jd)
    ref = astropy_reference(lat, lon, elev, ra, dec, jd)
    mask_az, mask_alt = (0.0, 90.0, 180.0, 270.0), (10.0, 25.0, 5.0, 15.0)
    c = Constraints(12.0, None, "nautical", 40.0, mask_az, mask_alt, sun_avoidance_deg=70.0)
    ref_margin = np.minimum.reduce([
        ref["alt"] - 12.0,
        ref["alt"] - np.interp(ref["az"], mask_az, mask_alt, period=360.0),
        np.maximum(ref["moon_sep"] - 40.0, -(ref["moon_alt"][None] + 0.833)),
        ref["sun_sep"] - 70.0,
    ])
    margin = constraint_margin_deg(grid, c)
    # Each term binds somewhere on this grid, and the pass/fail verdicts agree
    # except where the reference sits within 0.02° of a limit.
    assert np.any(ref["alt"] < 12.0) and np.any(ref["moon_sep"] < 40.0) and np.any(ref["sun_sep"] < 70.0)
    assert np.any(ref["alt"] < np.interp(ref["az"], mask_az, mask_alt, period=360.0))
    disagree = (margin >= 0.0) != (ref_margin >= 0.0)
    assert np.all(np.abs(ref_margin[disagree]) < 0.02)
    assert np.max(np.abs(margin - ref_margin)) < 0.02


@pytest.mark.parametrize("twilight, max_airmass, avoid", [("astronomical", 2.0, 45.0), ("nautical", 1.5, 45.0),
                                                          ("nautical", 2.0, 45.0), ("civil", 3.0, 20.0)])
def test_the_sun_left_out_only_where_it_cannot_bind(year_ephemeris, twilight, max_airmass, avoid):
    """The night planner leaves the Sun's separation out when the altitude limit already keeps
    every target at least the avoidance angle from the Sun (an arc is never shorter than the
    difference of its ends' altitudes).  Where the rule says so, the margins with and without
    the Sun are the same; where it does not, a random sky has targets the Sun would bind."""
    from planner.sky.almanac import TWILIGHT_ALTITUDE_DEG

    rng = np.random.default_rng(7)
    geo = site_geometry(-30.95, -70.45, 2310.0)
    jd = YEAR_START_JD + 100.0 + np.linspace(0.0, 60.0, 4000)
    track = time_track(year_ephemeris, geo, jd)
    night = track.sun_altitude_deg <= TWILIGHT_ALTITUDE_DEG[twilight]
    jd, track = jd[night], time_track(year_ephemeris, geo, jd[night])
    ra, dec = rng.uniform(0, 360, (400, 1)), np.degrees(np.arcsin(rng.uniform(-1, 1, (400, 1))))
    c = Constraints(10.0, max_airmass, twilight, 0.0, sun_avoidance_deg=avoid)
    full = sky_at(track, geo.latitude_deg, ra, dec)
    up = full.altitude_deg >= c.altitude_limit_deg
    # the closed form behind the rule: separation ≥ altitude difference, everywhere
    assert np.all(full.sun_separation_deg >= full.altitude_deg - track.sun_altitude_deg - 1e-9)
    if sun_cannot_bind(c, track.sun_altitude_deg):
        lean = sky_at(track, geo.latitude_deg, ra, dec, sun_separation=False)
        assert np.array_equal(constraint_margin_deg(lean, c), constraint_margin_deg(full, c))
    else:
        assert np.any(up & (full.sun_separation_deg < avoid))
