"""Tests for planner.sky.sidereal: sidereal time and the equatorial → horizontal kernels.

Outside references
------------------
* Meeus, *Astronomical Algorithms*, 2nd ed. (1998), worked examples 12.a and
  12.b (sidereal time at Greenwich) and 13.b (altitude and azimuth of Venus
  from the US Naval Observatory), values in tests/REFERENCES.md, "Sidereal time
  and horizontal coordinates (Meeus)".
* astropy's ``Time.sidereal_time(..., model="IAU1982")`` (ERFA ``gmst82``), the
  same IAU 1982 expression evaluated by an independent implementation.
* For the closed-form hour angle at an altitude: a brute-force search on a
  fine hour-angle grid, with altitudes from a rotation-matrix computation
  written here (not the spherical-trigonometry formula under test).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.sky.sidereal import (
    altaz_deg,
    altitude_deg,
    culmination_altitudes_deg,
    gmst_deg,
    hour_angle_at_altitude_deg,
    wrap_180,
)


@pytest.fixture(scope="module", autouse=True)
def _runtime():
    from planner.config import configure_runtime

    configure_runtime()


def hms_deg(h, m, s):
    return (h + m / 60.0 + s / 3600.0) * 15.0


def dms_deg(d, m, s, sign=1.0):
    return sign * (d + m / 60.0 + s / 3600.0)


def seconds_of_time(deg):
    return deg / 15.0 * 3600.0


# --- Meeus example 12.a: 1987 April 10, 0h UT --------------------------------

JD_MEEUS_12A = 2446895.5  # 1987 Apr 10.0 UT (Meeus 12.a)


def test_meeus_12a_mean_sidereal_time():
    # Meeus 12.a: θ0 = 13h10m46.3668s (mean, Greenwich).  Meeus quotes four
    # decimals of a second; 1e-3 s allows for his rounding only.
    expected = hms_deg(13, 10, 46.3668)
    got = gmst_deg(JD_MEEUS_12A)
    assert abs(seconds_of_time(wrap_180(got - expected))) < 1e-3


def test_meeus_12a_apparent_sidereal_time():
    # Meeus 12.a: apparent θ0 = 13h10m46.1351s, i.e. an equation of the
    # equinoxes of −0.2317 s (from his IAU 1980 nutation).  The ephemeris takes
    # the equation of the equinoxes from IAU 2006/2000A and UT1 − UTC from the
    # IERS table, so the instant is given as UTC (UT1 → UTC with astropy).
    # 2 ms of time (30 mas) covers the nutation-model difference (~7 mas here).
    from astropy.time import Time

    from planner.sky.ephemeris import build_ephemeris, local_sidereal_deg

    jd_utc = Time(JD_MEEUS_12A, format="jd", scale="ut1").utc.jd
    eph = build_ephemeris(jd_utc - 1.0, jd_utc + 1.0)
    got = local_sidereal_deg(eph, jd_utc, 0.0)
    expected = hms_deg(13, 10, 46.1351)
    assert abs(seconds_of_time(wrap_180(got - expected))) < 2e-3


# --- Meeus example 12.b: 1987 April 10, 19:21:00 UT --------------------------

JD_MEEUS_12B = 2446896.30625  # Meeus 12.b


def test_meeus_12b_mean_sidereal_time():
    # Meeus 12.b: θ0 = 8h34m57.0896s.
    expected = hms_deg(8, 34, 57.0896)
    got = gmst_deg(JD_MEEUS_12B)
    assert abs(seconds_of_time(wrap_180(got - expected))) < 1e-3


# --- Meeus example 13.b: Venus from Washington, 1987 April 10, 19:21 UT -------


def test_meeus_13b_altitude_azimuth():
    # Meeus 13.b: α = 23h09m16.641s, δ = −6°43′11.61″, φ = +38°55′17″,
    # L = 77°03′56″ W (Meeus counts west positive; gcplan east positive).
    # Apparent sidereal time: the mean time of 12.b plus the equation of the
    # equinoxes of 12.a (−0.2317 s; it changes by < 1 ms within the day).
    # Result: altitude 15.125°, azimuth 68.034° measured from the SOUTH,
    # i.e. 248.034° from the north through east, gcplan's convention.
    ra = hms_deg(23, 9, 16.641)
    dec = dms_deg(6, 43, 11.61, sign=-1.0)
    lat = dms_deg(38, 55, 17)
    lon_east = dms_deg(77, 3, 56, sign=-1.0)
    theta0 = gmst_deg(JD_MEEUS_12B) + (-0.2317) / 240.0
    ha = theta0 + lon_east - ra  # Meeus eq. 13.x: H = θ0 − L − α, L west positive
    alt, az = altaz_deg(lat, dec, ha)
    # 6e-4°: Meeus gives three decimals (rounding ±5e-4°).
    assert abs(alt - 15.125) < 6e-4
    assert abs(wrap_180(az - (68.034 + 180.0))) < 6e-4
    assert abs(altitude_deg(lat, dec, ha) - alt) < 1e-12


# --- against ERFA's IAU 1982 GMST at many instants ---------------------------


def test_gmst_matches_erfa_gmst82():
    # ERFA gmst82 evaluates the same IAU 1982 expression (Meeus 12.4 is its
    # JD form); agreement to 1e-6 s of time at dates 1950–2050 shows the
    # polynomial and its epoch are right.  float64 JD resolution is ~4e-6 s,
    # times 1.0027 sidereal: a tolerance of 5e-5 s leaves room for that only.
    from astropy.time import Time

    rng = np.random.default_rng(12)
    jd = rng.uniform(2433282.5, 2469807.5, 500)
    t = Time(jd, format="jd", scale="ut1")
    expected = t.sidereal_time("mean", "greenwich", model="IAU1982").degree
    got = gmst_deg(jd)
    assert np.max(np.abs(seconds_of_time(wrap_180(got - expected)))) < 5e-5


# --- conversions: vector check of the formula ---------------------------------


def _altaz_by_rotation(lat_deg, dec_deg, ha_deg):
    """Altitude and azimuth (north through east) by rotating the star's unit vector.

    Hour-angle frame: x to the meridian on the equator (south-ish), y to the
    west, z to the pole; rotating about y by (90° − φ) brings z to the zenith.
    Azimuth from the north: −x is north in the horizon frame, y is west.
    """
    lat, dec, ha = (np.radians(np.asarray(a, dtype=float)) for a in (lat_deg, dec_deg, ha_deg))
    v = np.stack(np.broadcast_arrays(np.cos(dec) * np.cos(ha), np.cos(dec) * np.sin(ha), np.sin(dec)))
    c = np.pi / 2 - lat
    x = np.cos(c) * v[0] - np.sin(c) * v[2]
    y = v[1]
    z = np.sin(c) * v[0] + np.cos(c) * v[2]
    alt = np.degrees(np.arcsin(np.clip(z, -1, 1)))
    az = np.mod(np.degrees(np.arctan2(-y, -x)), 360.0)  # east is −y
    return alt, az


def test_altaz_matches_rotation_matrix():
    rng = np.random.default_rng(13)
    lat = rng.uniform(-89, 89, 2000)
    dec = rng.uniform(-89, 89, 2000)
    ha = rng.uniform(-180, 180, 2000)
    alt, az = altaz_deg(lat, dec, ha)
    alt_r, az_r = _altaz_by_rotation(lat, dec, ha)
    assert np.max(np.abs(alt - alt_r)) < 1e-9
    # Azimuth is ill-defined at the zenith: compare away from it.
    ok = alt_r < 89.9
    assert np.max(np.abs(wrap_180(az - az_r)[ok])) < 1e-6


# --- closed-form hour angle at an altitude vs brute force ---------------------


@settings(max_examples=40, deadline=None)
@given(
    lat=st.floats(-85, 85),
    dec=st.floats(-85, 85),
    limit=st.floats(-18, 70),
)
def test_hour_angle_at_altitude_matches_brute_force(lat, dec, limit):
    ha_grid = np.linspace(0.0, 180.0, 180001)  # 0.001° steps
    alt, _ = _altaz_by_rotation(lat, dec, ha_grid)  # falls monotonically from 0 to 180°
    upper, lower = culmination_altitudes_deg(lat, dec)
    assert abs(upper - alt[0]) < 1e-6
    assert abs(lower - alt[-1]) < 1e-6
    h0 = hour_angle_at_altitude_deg(lat, dec, limit)
    if alt[0] < limit:  # never reaches the limit
        assert h0 == 0.0
    elif alt[-1] >= limit:  # never goes below it
        assert h0 == 180.0
    else:
        brute = ha_grid[np.nonzero(alt >= limit)[0].max()]
        # Grid step 0.001°; near a culmination dH/dh blows up, so allow more there.
        slope_ok = min(alt[0] - limit, limit - alt[-1]) > 0.01
        assert abs(h0 - brute) < (2e-3 if slope_ok else 0.5)


def test_ut1_table_sliced_at_once_equals_row_by_row():
    """The IERS table's columns sliced from all rows at once are the row-by-row floats
    (the test of UT1 against astropy covers both); a file with rows of uneven length
    is read row by row."""
    from astropy_iers_data import IERS_A_FILE

    from planner.sky import earth_rotation

    with open(IERS_A_FILE, "rb") as f:
        data = f.read()
    fast, slow = earth_rotation._fixed_width_columns(data), earth_rotation._line_by_line_columns(data)
    assert len(slow[0]) > 10000
    assert all(np.array_equal(a, b) for a, b in zip(fast, slow))
    assert earth_rotation._fixed_width_columns(data.replace(b"\n", b"\r\n", 1)) is None


def test_ut1_table_of_a_span_gives_the_whole_tables_values():
    """The rows an ephemeris's span needs give the same UT1 − UTC as the whole table at
    every date of the span — inside the table, across its start and its last value, and
    past both ends (held there) — and the same last date."""
    from planner.sky.earth_rotation import load_ut1_table, ut1_minus_utc_s

    whole = load_ut1_table()
    start, end = float(whole.mjd[0]) + 2400000.5, whole.end_jd
    spans = [(2461411.5, 2461413.5), (2451544.5, 2451910.5), (start - 40.0, start + 3.25), (start - 9.0, start - 2.0),
             (end - 6.75, end + 30.0), (end + 100.0, end + 400.0), (2450000.0, 2450000.0)]
    for a, b in spans:
        part = load_ut1_table(span_jd=(a, b))
        assert len(part.mjd) < 400 and part.end_jd == end
        jd = np.concatenate([np.linspace(a, b, 1001), np.floor(np.linspace(a, b, 40)) + 0.5])
        jd = jd[(jd >= a) & (jd <= b)]
        assert np.array_equal(ut1_minus_utc_s(part, jd), ut1_minus_utc_s(whole, jd)), (a, b)
