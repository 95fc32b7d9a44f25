"""Tests for planner.sky.ephemeris: the sampled Sun, Moon and Earth rotation.

Outside references
------------------
* astropy's full transforms: ``get_body(...).transform_to(AltAz(location=...,
  obstime=..., pressure=0))`` (no refraction) for altitudes, ``TETE`` (true
  equator and equinox of date, topocentric for the Moon) for RA/Dec, and
  ``Time.sidereal_time("apparent", longitude)`` for local sidereal time — at
  random instants over a year at several sites.
* Meeus, *Astronomical Algorithms*, 2nd ed., examples 47.a (the Moon's
  apparent place) and 48.a (illuminated fraction k = 0.6786, phase angle
  69.0756°), 1992 April 12, 0h TD (tests/REFERENCES.md, "The Moon (Meeus)").
* astroplan's ``moon_illumination`` and ``moon_phase_angle``.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.sky.ephemeris import (
    SiteGeometry,
    build_ephemeris,
    local_sidereal_deg,
    moon_phase,
    moon_radec_deg,
    site_geometry,
    sun_radec_deg,
)
from planner.sky.sidereal import wrap_180

#: 2026-10-01 .. 2027-10-01 (UTC JD): a year inside the bundled IERS table, so
#: astropy's reference transforms use measured/predicted UT1, not extrapolation.
YEAR_START_JD = 2461314.5
YEAR_END_JD = YEAR_START_JD + 365.0

#: (latitude, east longitude, elevation): the fictional demo site's place, a
#: sub-arctic site, a high mountain site, an arctic site, a southern one.
SITES = [
    (-30.95, -70.45, 2310.0),
    (64.1, -21.9, 50.0),
    (19.82, -155.47, 4200.0),
    (69.6, 18.9, 100.0),
    (-45.0, 170.5, 300.0),
]


@pytest.fixture(scope="module", autouse=True)
def _runtime():
    from planner.config import configure_runtime

    configure_runtime()


@pytest.fixture(scope="module")
def year_ephemeris():
    return build_ephemeris(YEAR_START_JD, YEAR_END_JD)


def _astropy_site(lat, lon, elev):
    import astropy.units as u
    from astropy.coordinates import EarthLocation

    return EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elev * u.m)


def _random_times(seed, n=150):
    rng = np.random.default_rng(seed)
    return np.sort(YEAR_START_JD + 0.5 + rng.uniform(0.0, 364.0, n))


def _sky_difference_arcsec(ra1, dec1, ra2, dec2):
    """RA difference on the sky (× cos δ) and Dec difference, arcseconds."""
    return (np.abs(wrap_180(ra1 - ra2)) * np.cos(np.radians(dec2)) * 3600.0, np.abs(dec1 - dec2) * 3600.0)


@pytest.mark.parametrize("lat, lon, elev", SITES)
def test_sun_and_moon_against_astropy_altaz(year_ephemeris, lat, lon, elev):
    import astropy.units as u
    from astropy.coordinates import TETE, AltAz, get_body
    from astropy.time import Time

    from planner.sky.almanac import moon_altitude_deg, sun_altitude_deg

    jd = _random_times(int(abs(lat * 100)))
    t = Time(jd, format="jd", scale="utc")
    loc = _astropy_site(lat, lon, elev)
    altaz = AltAz(location=loc, obstime=t, pressure=0 * u.hPa)
    sun = get_body("sun", t, location=loc)
    moon = get_body("moon", t, location=loc)
    sun_ref_alt = sun.transform_to(altaz).alt.degree
    moon_ref_alt = moon.transform_to(altaz).alt.degree
    sun_ref = get_body("sun", t).transform_to(TETE(obstime=t))  # geocentric, as the module's Sun
    moon_ref = moon.transform_to(TETE(obstime=t, location=loc))  # topocentric

    geo = site_geometry(lat, lon, elev)
    eph = year_ephemeris

    # Sun RA/Dec: only the interpolation of a smooth curve between samples;
    # 0.5″ is ample (measured 0.02″).
    s_ra, s_dec = sun_radec_deg(eph, jd)
    d_ra, d_dec = _sky_difference_arcsec(s_ra, s_dec, sun_ref.ra.degree, sun_ref.dec.degree)
    assert d_ra.max() < 0.5 and d_dec.max() < 0.5

    # Moon, topocentric RA/Dec: the interpolation of the geocentric Moon
    # dominates (documented "about 1e-3°", measured ≤ 2.1″ with half-day
    # samples); 10″ leaves room for that and for what the module neglects
    # (polar motion < 0.5″, diurnal aberration 0.3″), and is still a fifth of
    # the 0.01° that gcplan's altitudes must meet.
    m_ra, m_dec, m_km = moon_radec_deg(eph, geo, jd)
    d_ra, d_dec = _sky_difference_arcsec(m_ra, m_dec, moon_ref.ra.degree, moon_ref.dec.degree)
    assert d_ra.max() < 10.0 and d_dec.max() < 10.0
    # Distance: both are astropy's (light-time corrected) distance, so only
    # interpolation separates them (measured < 1 km); 5 km is 1.4e-5 of it.
    assert np.max(np.abs(m_km - moon_ref.distance.to_value(u.km))) < 5.0

    # Altitudes, against astropy's full AltAz transform; gcplan's must be within 0.01°.
    # The Sun's is geocentric by design: its 8.8″ (0.0024°) parallax is
    # neglected, so it is held to 0.004° (measured 0.0026°).  The Moon's is
    # topocentric: held to 0.003° (10″, as above; measured 0.0006°).
    assert np.max(np.abs(sun_altitude_deg(eph, geo, jd) - sun_ref_alt)) < 0.004
    assert np.max(np.abs(moon_altitude_deg(eph, geo, jd) - moon_ref_alt)) < 0.003


def test_moon_interpolation_as_documented(year_ephemeris):
    """The module says its samples leave 'about 1e-3°' of Moon interpolation error.

    Checked against astropy's geocentric Moon in TETE at random instants; a
    generous 1.5e-3° (5.4″) stands for "about 1e-3°".
    """
    from astropy.coordinates import TETE, get_body
    from astropy.time import Time

    jd = _random_times(7, 300)
    t = Time(jd, format="jd", scale="utc")
    ref = get_body("moon", t).transform_to(TETE(obstime=t))
    ra, dec, _ = moon_radec_deg(year_ephemeris, SiteGeometry(0.0, 0.0, 0.0, 0.0), jd)
    d_ra, d_dec = _sky_difference_arcsec(ra, dec, ref.ra.degree, ref.dec.degree)
    assert max(d_ra.max(), d_dec.max()) < 1.5e-3 * 3600.0


@pytest.mark.parametrize("lon", [-155.47, -70.45, 0.0, 18.9, 170.5])
def test_local_sidereal_time_against_astropy(year_ephemeris, lon):
    """Local apparent sidereal time vs astropy's ``Time.sidereal_time('apparent', lon)``.

    astropy's default is IAU 2006A (Earth rotation angle based); gcplan uses
    the IAU 1982 GMST plus the IAU 2006/2000A equation of the equinoxes.  The
    two GMST models drift apart by ~4 ms of time by 2027 (0.06″), so 0.01 s
    (0.15″) is the bound — far below anything a plan can feel.
    """
    import astropy.units as u
    from astropy.time import Time

    jd = _random_times(int(abs(lon)) + 3, 400)
    t = Time(jd, format="jd", scale="utc")
    expected = t.sidereal_time("apparent", lon * u.deg).degree
    got = local_sidereal_deg(year_ephemeris, jd, lon)
    assert np.max(np.abs(wrap_180(got - expected))) * 240.0 < 0.01
    assert np.all((got >= 0.0) & (got < 360.0))


# --- Meeus 47.a / 48.a: the Moon on 1992 April 12, 0h TD ----------------------


@pytest.fixture(scope="module")
def meeus_1992():
    from astropy.time import Time

    jd_utc = Time("1992-04-12 00:00:00", scale="tt").utc.jd
    # Start half a day off so that the instant falls mid-way between daily
    # samples: the worst case of the interpolation, not a node.
    return jd_utc, build_ephemeris(jd_utc - 2.5, jd_utc + 2.5)


def test_meeus_47a_moon_position(meeus_1992):
    # Meeus 47.a: apparent α = 134.688469°, δ = 13.768367°, Δ = 368409.7 km
    # (geocentric).  astropy's built-in Moon is ERFA's moon98, Meeus's own
    # ch. 47 series, so what is left is the interpolation at a mid-point
    # (≤ 1e-3° documented): bound 0.002°.  The distance: astropy's is light-time
    # corrected in barycentric coordinates (Moon at emission minus Earth at
    # reception), which differs from Meeus's geometric distance by the
    # Earth's ~30 km/s × 1.23 s (34 km here): bound 60 km, 1.6e-4 of the
    # distance, 0.6″ of parallax.
    jd, eph = meeus_1992
    ra, dec, km = moon_radec_deg(eph, SiteGeometry(0.0, 0.0, 0.0, 0.0), jd)
    assert abs(wrap_180(ra - 134.688469)) < 0.002
    assert abs(dec - 13.768367) < 0.002
    assert abs(km - 368409.7) < 60.0


def test_meeus_48a_illuminated_fraction(meeus_1992):
    # Meeus 48.a: k = 0.6786, phase angle i = 69.0756°.  k has four decimals
    # (±5e-5 rounding); dk/di = −sin(i)/2 ≈ −0.47 per radian, so 0.002° of
    # interpolation error moves k by 2e-5: bound 1e-4.  i: bound 0.002°.
    jd, eph = meeus_1992
    k, i = moon_phase(eph, jd)
    assert abs(k - 0.6786) < 1e-4
    assert abs(i - 69.0756) < 0.002


def test_moon_phase_against_astroplan(year_ephemeris):
    # astroplan computes both from astropy's geocentric get_body Sun and Moon
    # (elongation, then the phase angle from the distances, as Meeus 48.2–48.3);
    # differences come from the Moon's interpolation (≤ 1e-3° documented):
    # bounds 5e-5 in k and 0.005° in the phase angle (measured 3e-6, 0.0004°).
    import astropy.units as u
    from astroplan import moon_illumination
    from astroplan.moon import moon_phase_angle
    from astropy.time import Time

    jd = _random_times(11, 200)
    t = Time(jd, format="jd", scale="utc")
    k, i = moon_phase(year_ephemeris, jd)
    assert np.max(np.abs(k - moon_illumination(t))) < 5e-5
    assert np.max(np.abs(i - moon_phase_angle(t).to_value(u.deg))) < 0.005
    # The fraction spans new to full over a year.
    assert k.min() < 0.02 and k.max() > 0.98


def test_outside_the_span_is_refused(year_ephemeris):
    with pytest.raises(ValueError):
        sun_radec_deg(year_ephemeris, YEAR_END_JD + 10.0)


def test_site_geometry_matches_astropy_geocentric():
    # Geocentric vector of a geodetic place on WGS84 (Meeus ch. 11) vs
    # astropy's EarthLocation (ERFA gd2gc): agreement to 1 m.
    import astropy.units as u

    for lat, lon, elev in SITES:
        geo = site_geometry(lat, lon, elev)
        xyz = _astropy_site(lat, lon, elev).get_itrs().cartesian.xyz.to_value(u.km)
        assert geo.rho_cos_phi_km == pytest.approx(np.hypot(xyz[0], xyz[1]), abs=1e-3)
        assert geo.rho_sin_phi_km == pytest.approx(xyz[2], abs=1e-3)
