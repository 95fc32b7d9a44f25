"""What is up, and for how long: targets × times in one vectorised computation.

The pipeline for one site:

1. :func:`apparent_places` — each target's ICRS position carried to the true
   equator and equinox of date (precession, nutation, annual aberration) with
   astropy, at a few epochs; a cluster's apparent place then changes so
   slowly (aberration: 20″ a year around) that linear interpolation between
   epochs 15 days apart is good to 0.1″.
2. :func:`sky_grid` — altitude, azimuth, hour angle, airmass and Moon
   separation for every target at every time, by spherical trigonometry of
   the local sidereal time (:mod:`planner.sky.sidereal`); the Sun and Moon come
   from one :class:`~planner.ephemeris.Ephemeris`.
3. :func:`constraint_margin_deg` — how far inside all constraints each
   target-time is; :mod:`planner.sky.windows` turns margins and closed forms into
   observable hours and windows per night.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.model.constraints import Constraints
from planner.sky.airmass import airmass_kasten_young
from planner.sky.almanac import MOONRISE_ALTITUDE_DEG
from planner.sky.ephemeris import (
    Ephemeris,
    SiteGeometry,
    hour_angle_deg,
    local_sidereal_deg,
    moon_radec_deg,
    sun_radec_deg,
)
from planner.sky.sidereal import altaz_deg, altitude_deg

#: Apparent places are computed at epochs this far apart (days) and interpolated.
APPARENT_PLACE_STEP_D = 15.0


@dataclass(frozen=True)
class ApparentPlaces:
    """Targets' apparent RA/Dec of date (TETE, geocentric) at epochs, shape (targets, epochs)."""

    epochs_jd: np.ndarray
    ra_deg: np.ndarray  # unwrapped along the epoch axis
    dec_deg: np.ndarray

    def at(self, jd) -> tuple[np.ndarray, np.ndarray]:
        """RA, Dec (targets, len(jd)) linearly interpolated to the given times (1-D)."""
        jd = np.atleast_1d(np.asarray(jd, dtype=float))
        if len(self.epochs_jd) == 1:
            return (np.repeat(self.ra_deg, len(jd), axis=1), np.repeat(self.dec_deg, len(jd), axis=1))
        x = np.clip(np.interp(jd, self.epochs_jd, np.arange(len(self.epochs_jd))), 0, len(self.epochs_jd) - 1)
        i = np.minimum(np.floor(x).astype(int), len(self.epochs_jd) - 2)
        p = x - i
        ra = self.ra_deg[:, i] * (1 - p) + self.ra_deg[:, i + 1] * p
        dec = self.dec_deg[:, i] * (1 - p) + self.dec_deg[:, i + 1] * p
        return np.mod(ra, 360.0), dec


def apparent_places(ra_icrs_deg, dec_icrs_deg, jd_start: float, jd_end: float) -> ApparentPlaces:
    """ICRS → apparent place of date for all targets at epochs spanning [jd_start, jd_end].

    astropy's ICRS → GCRS transform (annual aberration, light deflection),
    then ERFA's bias-precession-nutation rotation to the true equator and
    equinox of date: what astropy's ``TETE`` frame does, without starting its
    IERS table reader (the rotation needs none).  Both steps run as the same
    ERFA calls astropy makes (:mod:`planner.sky.astrometry`, equal to astropy's
    transform bit for bit), without importing astropy.coordinates.
    """
    import erfa

    from planner.sky.astrometry import icrs_to_gcrs_xyz, tt_of_utc

    n_epochs = max(int(np.ceil((jd_end - jd_start) / APPARENT_PLACE_STEP_D)) + 1, 1)
    epochs = np.linspace(jd_start, jd_end, n_epochs) if n_epochs > 1 else np.array([0.5 * (jd_start + jd_end)])
    ra = np.atleast_1d(np.asarray(ra_icrs_deg, dtype=float))[:, None]
    dec = np.atleast_1d(np.asarray(dec_icrs_deg, dtype=float))[:, None]
    xyz = icrs_to_gcrs_xyz(ra, dec, epochs[None, :])  # (N, E, 3), unit vectors
    npb = erfa.pnm06a(*tt_of_utc(epochs))  # (E, 3, 3)
    v = np.einsum("eij,nej->nei", npb, xyz)
    ra = np.degrees(np.arctan2(v[..., 1], v[..., 0])) % 360.0
    dec = np.degrees(np.arcsin(np.clip(v[..., 2] / np.linalg.norm(v, axis=-1), -1.0, 1.0)))
    return ApparentPlaces(epochs_jd=epochs, ra_deg=np.unwrap(ra, period=360.0, axis=1), dec_deg=dec)


@dataclass(frozen=True)
class SkyGrid:
    """Targets × times.  Per-target arrays broadcast targets against times
    (``sky_grid``: (targets, times)); Sun and Moon arrays have the times' shape."""

    jd_utc: np.ndarray
    altitude_deg: np.ndarray
    azimuth_deg: np.ndarray  # from north through east
    hour_angle_deg: np.ndarray  # [−180, 180), west positive
    airmass: np.ndarray  # Kasten & Young 1989; NaN below the horizon
    moon_separation_deg: np.ndarray  # from the topocentric Moon
    sun_separation_deg: np.ndarray
    sun_altitude_deg: np.ndarray  # (*times.shape)
    moon_altitude_deg: np.ndarray


@dataclass(frozen=True)
class TimeTrack:
    """What depends on time alone — sidereal time, Sun, Moon — computed once per set of times."""

    jd_utc: np.ndarray
    lst_deg: np.ndarray
    moon_ra_deg: np.ndarray  # topocentric, of date
    moon_dec_deg: np.ndarray
    moon_altitude_deg: np.ndarray
    sun_ra_deg: np.ndarray
    sun_dec_deg: np.ndarray
    sun_altitude_deg: np.ndarray

    def rows(self, index) -> "TimeTrack":
        """The track for a selection along the first axis (e.g. one row per target-night)."""
        return TimeTrack(*(getattr(self, f)[index] for f in self.__dataclass_fields__))


def time_track(eph: Ephemeris, geo: SiteGeometry, jd_utc) -> TimeTrack:
    jd = np.asarray(jd_utc, dtype=float)
    lst = local_sidereal_deg(eph, jd, geo.longitude_deg)
    m_ra, m_dec, _ = moon_radec_deg(eph, geo, jd, lst)
    s_ra, s_dec = sun_radec_deg(eph, jd)
    return TimeTrack(
        jd_utc=jd,
        lst_deg=lst,
        moon_ra_deg=m_ra,
        moon_dec_deg=m_dec,
        moon_altitude_deg=altitude_deg(geo.latitude_deg, m_dec, lst - m_ra),
        sun_ra_deg=s_ra,
        sun_dec_deg=s_dec,
        sun_altitude_deg=altitude_deg(geo.latitude_deg, s_dec, lst - s_ra),
    )


def sky_grid(eph: Ephemeris, geo: SiteGeometry, places: ApparentPlaces, jd_utc) -> SkyGrid:
    """Everything about every target at every time (1-D ``jd_utc``), in one broadcast computation."""
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    ra, dec = places.at(jd)  # (N, T)
    return sky_at(time_track(eph, geo, jd), geo.latitude_deg, ra, dec)


def sky_at(track: TimeTrack, latitude_deg: float, ra_deg, dec_deg, *, sun_separation: bool = True) -> SkyGrid:
    """Altitude, azimuth, hour angle, airmass and Moon separation where RA/Dec and the track broadcast.

    ``ra_deg``/``dec_deg`` are apparent places of date.  ``sun_separation=False`` leaves the
    Sun's separation out (+inf): for callers that know it cannot bind (see
    :func:`sun_cannot_bind`).
    """
    ha = hour_angle_deg(track.lst_deg, ra_deg)
    alt, az = altaz_deg(latitude_deg, dec_deg, ha)
    return SkyGrid(
        jd_utc=track.jd_utc,
        altitude_deg=alt,
        azimuth_deg=az,
        hour_angle_deg=ha,
        airmass=airmass_kasten_young(alt),
        moon_separation_deg=angular_separation_deg(ra_deg, dec_deg, track.moon_ra_deg, track.moon_dec_deg),
        sun_separation_deg=(angular_separation_deg(ra_deg, dec_deg, track.sun_ra_deg, track.sun_dec_deg)
                            if sun_separation else np.inf),
        sun_altitude_deg=track.sun_altitude_deg,
        moon_altitude_deg=track.moon_altitude_deg,
    )


def angular_separation_deg(ra1, dec1, ra2, dec2):
    """Great-circle separation (degrees), Vincenty's form (stable at all separations)."""
    ra1, dec1, ra2, dec2 = (np.radians(a) for a in (ra1, dec1, ra2, dec2))
    d_ra = ra2 - ra1
    s1, c1, s2, c2 = np.sin(dec1), np.cos(dec1), np.sin(dec2), np.cos(dec2)
    cos_d_ra = np.cos(d_ra)  # once: on targets × times it is the costliest term
    num = np.hypot(c2 * np.sin(d_ra), c1 * s2 - s1 * c2 * cos_d_ra)
    den = s1 * s2 + c1 * c2 * cos_d_ra
    return np.degrees(np.arctan2(num, den))


def sun_cannot_bind(constraints: Constraints, sun_altitude_deg) -> bool:
    """True when the sun-avoidance limit cannot be the binding constraint at these Sun
    altitudes: a target at or above the altitude limit is at least (its altitude − the Sun's)
    from the Sun, as the arc between two points is never shorter than the difference of their
    altitudes; so where the altitude limit stands the avoidance limit above the Sun's highest
    altitude, the altitude margin is always the smaller."""
    if constraints.sun_avoidance_deg <= 0:
        return True
    top = float(np.max(sun_altitude_deg)) if np.size(sun_altitude_deg) else np.inf
    return constraints.altitude_limit_deg - top >= constraints.sun_avoidance_deg


def horizon_altitude_deg(constraints: Constraints, azimuth_deg):
    """The horizon mask's altitude at the given azimuths (0 where no mask is set)."""
    if not constraints.horizon_az_deg:
        return np.zeros_like(np.asarray(azimuth_deg, dtype=float))
    az = np.asarray(constraints.horizon_az_deg, dtype=float)
    alt = np.asarray(constraints.horizon_alt_deg, dtype=float)
    return np.interp(np.mod(azimuth_deg, 360.0), az, alt, period=360.0)


def constraint_margin_deg(grid: SkyGrid, constraints: Constraints) -> np.ndarray:
    """How far inside all constraints each target-time is (degrees; ≥ 0 means observable).

    The Moon term is the separation beyond the limit, or — while the Moon is
    below the horizon — its depth below it, so that the margin stays
    continuous as the Moon rises (edges are found by interpolating it).
    """
    margin = grid.altitude_deg - constraints.altitude_limit_deg
    if constraints.horizon_az_deg:
        margin = np.minimum(margin, grid.altitude_deg - horizon_altitude_deg(constraints, grid.azimuth_deg))
    if constraints.max_altitude_deg is not None:  # zenith avoidance
        margin = np.minimum(margin, constraints.max_altitude_deg - grid.altitude_deg)
    if constraints.min_moon_separation_deg > 0:
        moon_down = -(grid.moon_altitude_deg - MOONRISE_ALTITUDE_DEG)
        moon = np.maximum(grid.moon_separation_deg - constraints.min_moon_separation_deg, moon_down)
        margin = np.minimum(margin, moon)
    if constraints.sun_avoidance_deg > 0:
        margin = np.minimum(margin, grid.sun_separation_deg - constraints.sun_avoidance_deg)
    return margin
