"""Sidereal time and the equatorial → horizontal conversion, in plain numpy.

These are the hot-path kernels of the almanac and of visibility.  astropy's
full AltAz transform costs about 14 µs per target-time pair; these cost a few
nanoseconds, and tests hold them to astropy (and to Meeus's worked examples).

References
----------
Meeus, J., *Astronomical Algorithms*, 2nd ed. (1998): eq. 12.4 (mean sidereal
time at Greenwich, IAU 1982 expression) and eqs. 13.5–13.6 (altitude and
azimuth from hour angle and declination).
"""

from __future__ import annotations

import numpy as np

#: J2000.0 as a Julian date.
JD_J2000 = 2451545.0

#: Sidereal degrees per UT1 day: the linear coefficient of Meeus eq. 12.4.
SIDEREAL_DEG_PER_DAY = 360.98564736629


def gmst_deg(jd_ut1):
    """Mean sidereal time at Greenwich, degrees in [0, 360) (Meeus eq. 12.4).

    Parameters
    ----------
    jd_ut1 : float or ndarray
        Julian date on the UT1 scale.
    """
    d = np.asarray(jd_ut1, dtype=float) - JD_J2000
    t = d / 36525.0
    theta = 280.46061837 + SIDEREAL_DEG_PER_DAY * d + t * t * (0.000387933 - t / 38710000.0)
    return np.mod(theta, 360.0)


def wrap_180(angle_deg):
    """An angle folded into [−180, 180)."""
    return np.mod(np.asarray(angle_deg, dtype=float) + 180.0, 360.0) - 180.0


def altitude_deg(latitude_deg, dec_deg, hour_angle_deg):
    """Geometric altitude (degrees) from latitude, declination and hour angle (Meeus eq. 13.6)."""
    phi = np.radians(latitude_deg)
    dec = np.radians(dec_deg)
    ha = np.radians(hour_angle_deg)
    s = np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(ha)
    return np.degrees(np.arcsin(np.clip(s, -1.0, 1.0)))


def altaz_deg(latitude_deg, dec_deg, hour_angle_deg):
    """Altitude and azimuth (degrees; azimuth from north through east, [0, 360)).

    Meeus eq. 13.5 measures azimuth from the south; adding 180° gives the
    north-based azimuth used everywhere in gcplan (and by astropy's AltAz).
    """
    phi = np.radians(latitude_deg)
    dec = np.radians(dec_deg)
    ha = np.radians(hour_angle_deg)
    sin_phi, cos_phi = np.sin(phi), np.cos(phi)
    sin_dec, cos_dec = np.sin(dec), np.cos(dec)
    cos_ha = np.cos(ha)
    alt = np.degrees(np.arcsin(np.clip(sin_phi * sin_dec + cos_phi * cos_dec * cos_ha, -1.0, 1.0)))
    az_south = np.arctan2(np.sin(ha) * cos_dec, cos_ha * cos_dec * sin_phi - sin_dec * cos_phi)
    az = np.mod(np.degrees(az_south) + 180.0, 360.0)
    return alt, az


def hour_angle_at_altitude_deg(latitude_deg, dec_deg, altitude_limit_deg):
    """Hour angle (degrees, 0..180) at which a star crosses an altitude: the closed form.

    Returns 180 where the star never goes below the limit (circumpolar above
    it) and 0 where it never reaches the limit; callers tell the two apart with
    :func:`culmination_altitudes_deg`.
    """
    phi = np.radians(latitude_deg)
    dec = np.radians(dec_deg)
    h = np.radians(altitude_limit_deg)
    with np.errstate(divide="ignore", invalid="ignore"):
        c = (np.sin(h) - np.sin(phi) * np.sin(dec)) / (np.cos(phi) * np.cos(dec))
    return np.degrees(np.arccos(np.clip(c, -1.0, 1.0)))


#: The obliquity of the ecliptic, J2000 (Meeus 1998, eq. 22.2: 23°26'21.4"), to 0.01°:
#: the Sun's declination at the solstices.
OBLIQUITY_DEG = 23.44


def longest_night_hours(latitude_deg, sun_altitude_deg):
    """Hours the Sun stays below ``sun_altitude_deg`` on the longest night of the year at a
    latitude (the winter solstice; 24 in the polar night, 0 where it never gets that dark).
    Solar hours (15°/h) and a fixed declination: minutes off, enough to say what cannot fit."""
    winter_dec = -np.sign(latitude_deg) * OBLIQUITY_DEG if latitude_deg else OBLIQUITY_DEG
    h = hour_angle_at_altitude_deg(latitude_deg, winter_dec, sun_altitude_deg)
    return float((360.0 - 2.0 * h) / 15.0)


def culmination_altitudes_deg(latitude_deg, dec_deg):
    """Altitudes (degrees) at upper and lower transit: 90 − |φ − δ| and |φ + δ| − 90."""
    phi = np.asarray(latitude_deg, dtype=float)
    dec = np.asarray(dec_deg, dtype=float)
    upper = 90.0 - np.abs(phi - dec)
    lower = np.abs(phi + dec) - 90.0
    return upper, lower
