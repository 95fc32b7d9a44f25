"""Sun, Moon and Earth rotation sampled once over a span, then interpolated.

astropy's ``get_body`` and frame transforms are exact but slow (about 0.2 ms
per Sun position and 0.5 ms per Moon position); a semester at one-minute
resolution would take minutes.  Instead we sample, once per span:

* the Sun's and the Moon's geocentric apparent places (true equator and
  equinox of date, astropy's ``TETE`` frame) and distances,
* UT1 − UTC and the equation of the equinoxes (GAST − GMST),

every :data:`SAMPLE_STEP_D` days from :data:`GRID_ORIGIN_JD`, and interpolate them with four-point
Lagrange polynomials.  Local sidereal time then comes from Meeus eq. 12.4 in
numpy (:mod:`planner.sky.sidereal`), and the Moon is made topocentric with the
observer's geocentric vector (its parallax reaches 1°).  Tests hold every
quantity here to astropy's full AltAz transform and to skyfield/DE421.

The :class:`Ephemeris` object *is* the cache within a run: build it once per
span and pass it in.  Between runs a :class:`SampleStore` (a shell's, passed in)
may keep each calendar year's Sun and Moon samples.  Nothing here reads a
clock or a file.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Protocol

import numpy as np

from planner.sky.earth_rotation import UT1Table, load_ut1_table, ut1_minus_utc_s
from planner.sky.sidereal import SIDEREAL_DEG_PER_DAY, gmst_deg, wrap_180

#: Spacing of the astropy samples, days.  The Moon's largest periodic terms
#: (the equation of the centre, 6.3° over 27.55 d; the variation, 0.66° over
#: 14.8 d) leave a four-point interpolation error of about 1e-3° at this step
#: — 0.3 s of a moonrise; the Sun's error is far smaller.  Tests hold it.
SAMPLE_STEP_D = 0.5

#: Equatorial radius of the Earth (WGS84), km.
EARTH_RADIUS_KM = 6378.137


@dataclass(frozen=True)
class SiteGeometry:
    """The observer, for the kernels: geodetic latitude and the geocentric vector."""

    latitude_deg: float
    longitude_deg: float  # east-positive
    rho_cos_phi_km: float  # distance from the Earth's axis
    rho_sin_phi_km: float  # height above the equatorial plane


def site_geometry(latitude_deg: float, longitude_deg: float, elevation_m: float) -> SiteGeometry:
    """Geocentric components of a geodetic position on the WGS84 ellipsoid (Meeus ch. 11)."""
    f = 1.0 / 298.257223563
    phi = np.radians(latitude_deg)
    b_over_a = 1.0 - f
    u = np.arctan(b_over_a * np.tan(phi))
    h_km = elevation_m / 1000.0
    rho_sin = EARTH_RADIUS_KM * b_over_a * np.sin(u) + h_km * np.sin(phi)
    rho_cos = EARTH_RADIUS_KM * np.cos(u) + h_km * np.cos(phi)
    return SiteGeometry(float(latitude_deg), float(longitude_deg), float(rho_cos), float(rho_sin))


@dataclass(frozen=True)
class Ephemeris:
    """Samples on a uniform grid ``jd0 + k * step_d`` (JD, UTC)."""

    jd0: float
    step_d: float
    sun_ra_deg: np.ndarray  # unwrapped (continuous), true equator and equinox of date
    sun_dec_deg: np.ndarray
    sun_distance_km: np.ndarray
    moon_ra_deg: np.ndarray  # geocentric, unwrapped
    moon_dec_deg: np.ndarray
    moon_distance_km: np.ndarray
    dut1_s: np.ndarray  # UT1 − UTC
    eqeq_deg: np.ndarray  # equation of the equinoxes, GAST − GMST
    iers_end_jd: float = np.inf  # last date of the IERS table's UT1 values (predictions included)

    @property
    def jd_end(self) -> float:
        return self.jd0 + self.step_d * (len(self.dut1_s) - 1)


#: The sample grid's origin, JD (UTC): 2000-01-01 0h.  Every span is sampled on
#: ``GRID_ORIGIN_JD + k × step`` — the same instants whatever the span — so a
#: year's samples, once made, serve any span inside it (see :class:`SampleStore`).
GRID_ORIGIN_JD = 2451544.5

#: What :func:`sun_moon_samples` gives per sample: functions of time alone, the
#: same at every site (the Moon here is geocentric).
SAMPLE_FIELDS = ("sun_ra_deg", "sun_dec_deg", "sun_distance_km", "moon_ra_deg", "moon_dec_deg",
                 "moon_distance_km", "eqeq_deg")


class SampleStore(Protocol):
    """Where a year's samples are kept between runs (a shell gives one; the core only calls it)."""

    def load(self, year: int, step_d: float) -> dict[str, np.ndarray] | None: ...

    def save(self, year: int, step_d: float, samples: dict[str, np.ndarray]) -> None: ...


def build_ephemeris(
    jd_start: float,
    jd_end: float,
    step_d: float = SAMPLE_STEP_D,
    ut1_table: UT1Table | None = None,
    store: SampleStore | None = None,
) -> Ephemeris:
    """Sample the Sun, the Moon and the Earth's rotation over [jd_start, jd_end].

    At least two extra samples on each side keep the four-point interpolation
    centred at the ends.  The Sun, the Moon and the equation of the equinoxes
    come from :func:`sun_moon_samples`, or — given a ``store`` — from the
    calendar years it holds, each year made once and saved there: the same
    instants, so the same values.  UT1 − UTC comes from the IERS table.  Dates
    beyond the bundled IERS table work; :func:`iers_warning` says so.
    """
    k_lo = int(np.floor((jd_start - GRID_ORIGIN_JD) / step_d)) - 2
    k_hi = int(np.ceil((jd_end - GRID_ORIGIN_JD) / step_d)) + 2
    if ut1_table is None:  # the rows of this span only: the same values, a tenth of the time
        ut1_table = load_ut1_table(span_jd=(GRID_ORIGIN_JD + step_d * k_lo, GRID_ORIGIN_JD + step_d * k_hi))
    if store is None:
        samples = sun_moon_samples(GRID_ORIGIN_JD + step_d * np.arange(k_lo, k_hi + 1))
    else:
        samples = _from_years(store, k_lo, k_hi, step_d)
    jd0 = GRID_ORIGIN_JD + step_d * k_lo
    jd = GRID_ORIGIN_JD + step_d * np.arange(k_lo, k_hi + 1)
    return Ephemeris(
        jd0=float(jd0),
        step_d=float(step_d),
        sun_ra_deg=np.unwrap(samples["sun_ra_deg"], period=360.0),
        sun_dec_deg=samples["sun_dec_deg"],
        sun_distance_km=samples["sun_distance_km"],
        moon_ra_deg=np.unwrap(samples["moon_ra_deg"], period=360.0),
        moon_dec_deg=samples["moon_dec_deg"],
        moon_distance_km=samples["moon_distance_km"],
        dut1_s=ut1_minus_utc_s(ut1_table, jd),
        eqeq_deg=samples["eqeq_deg"],
        iers_end_jd=ut1_table.end_jd,
    )


def sun_moon_samples(jd_utc: np.ndarray) -> dict[str, np.ndarray]:
    """The Sun's and the Moon's geocentric apparent places of date (RA in [0, 360)) and
    distances, and the equation of the equinoxes, at the given instants (JD, UTC).

    The Sun and Moon come from astropy's ``get_body`` (its built-in ephemeris) in
    the GCRS, rotated to the true equator and equinox of date with ERFA's IAU
    2006/2000A bias-precession-nutation matrix — the rotation astropy's ``TETE``
    frame applies, without the IERS table reader astropy's transform would also
    start.
    """
    import erfa
    from astropy.coordinates import get_body
    from astropy.time import Time

    t = Time(np.asarray(jd_utc, dtype=float), format="jd", scale="utc")
    tt = t.tt
    npb = erfa.pnm06a(tt.jd1, tt.jd2)  # GCRS -> true equator and equinox of date
    sun_ra, sun_dec, sun_km = _of_date(get_body("sun", t), npb)
    moon_ra, moon_dec, moon_km = _of_date(get_body("moon", t), npb)
    return {
        "sun_ra_deg": sun_ra,
        "sun_dec_deg": sun_dec,
        "sun_distance_km": sun_km,
        "moon_ra_deg": moon_ra,
        "moon_dec_deg": moon_dec,
        "moon_distance_km": moon_km,
        "eqeq_deg": np.degrees(erfa.ee06a(tt.jd1, tt.jd2)),
    }


def year_grid(year: int, step_d: float) -> tuple[int, int]:
    """Indices k (first, last) of the samples in a calendar year (UTC), on the grid."""
    first = _new_year_jd(year)
    k0 = int(np.ceil((first - GRID_ORIGIN_JD) / step_d))
    k1 = int(np.ceil((_new_year_jd(year + 1) - GRID_ORIGIN_JD) / step_d)) - 1
    return k0, k1


def _new_year_jd(year: int) -> float:
    """JD of 1 January 0h UTC of ``year`` (proleptic Gregorian)."""
    return GRID_ORIGIN_JD + (dt.date(year, 1, 1).toordinal() - dt.date(2000, 1, 1).toordinal())


def _year_of(k: int, step_d: float) -> int:
    day = dt.date(2000, 1, 1) + dt.timedelta(days=int(np.floor(k * step_d)))
    return day.year


def _from_years(store: SampleStore, k_lo: int, k_hi: int, step_d: float) -> dict[str, np.ndarray]:
    """Samples k_lo..k_hi from whole calendar years, each loaded from the store or made and saved."""
    parts = []
    for year in range(_year_of(k_lo, step_d), _year_of(k_hi, step_d) + 1):
        k0, k1 = year_grid(year, step_d)
        samples = store.load(year, step_d)
        if samples is None or any(len(samples.get(f, ())) != k1 - k0 + 1 for f in SAMPLE_FIELDS):
            samples = sun_moon_samples(GRID_ORIGIN_JD + step_d * np.arange(k0, k1 + 1))
            store.save(year, step_d, samples)
        lo, hi = max(k_lo, k0), min(k_hi, k1)
        parts.append({f: samples[f][lo - k0: hi - k0 + 1] for f in SAMPLE_FIELDS})
    return {f: np.concatenate([p[f] for p in parts]) for f in SAMPLE_FIELDS}


def _of_date(coord, npb):
    """RA, Dec (degrees) and distance (km) of a GCRS coordinate in the true frame of date."""
    xyz = coord.cartesian.xyz.to_value("km").T  # (n, 3)
    v = np.einsum("nij,nj->ni", npb, xyz)
    dist = np.linalg.norm(v, axis=1)
    ra = np.degrees(np.arctan2(v[:, 1], v[:, 0])) % 360.0
    dec = np.degrees(np.arcsin(v[:, 2] / dist))
    return ra, dec, dist


def iers_warning(eph: Ephemeris, jd_end: float) -> str | None:
    """One sentence for users when a span runs past the bundled IERS table, else None."""
    if jd_end <= eph.iers_end_jd:
        return None
    from planner.sky.nights import jd_to_datetime

    end = jd_to_datetime(eph.iers_end_jd)
    return (
        f"dates after {end:%Y-%m-%d} are beyond the bundled IERS table: UT1 and polar motion are "
        "extrapolated, so times may be off by up to a second (update astropy-iers-data)"
    )


def _interpolate(eph: Ephemeris, samples: np.ndarray, jd) -> np.ndarray:
    """Four-point Lagrange interpolation on the uniform sample grid."""
    return _interpolate_all(eph, (samples,), jd)[0]


def _interpolate_all(eph: Ephemeris, series, jd) -> list[np.ndarray]:
    """:func:`_interpolate` of several sample series at the same times, the weights computed
    once (the scheduler's root finding calls this hundreds of times a night on a few times)."""
    x = (np.asarray(jd, dtype=float) - eph.jd0) / eph.step_d
    n = len(series[0])
    if np.any((x < 1.0) | (x > n - 2.0)):
        raise ValueError("time outside the ephemeris span; build it over the whole range")
    i = np.clip(np.floor(x).astype(int), 1, n - 3)
    p = x - i
    # Lagrange weights for nodes i-1, i, i+1, i+2 at offset p from node i.
    w0 = -p * (p - 1.0) * (p - 2.0) / 6.0
    w1 = (p + 1.0) * (p - 1.0) * (p - 2.0) / 2.0
    w2 = -(p + 1.0) * p * (p - 2.0) / 2.0
    w3 = (p + 1.0) * p * (p - 1.0) / 6.0
    return [w0 * samples[i - 1] + w1 * samples[i] + w2 * samples[i + 1] + w3 * samples[i + 2] for samples in series]


def local_sidereal_deg(eph: Ephemeris, jd_utc, longitude_deg: float) -> np.ndarray:
    """Local apparent sidereal time, degrees [0, 360): Meeus 12.4 + equation of the equinoxes."""
    jd_utc = np.asarray(jd_utc, dtype=float)
    dut1, eqeq = _interpolate_all(eph, (eph.dut1_s, eph.eqeq_deg), jd_utc)
    jd_ut1 = jd_utc + dut1 / 86400.0
    gast = gmst_deg(jd_ut1) + eqeq
    return np.mod(gast + longitude_deg, 360.0)


def sun_radec_deg(eph: Ephemeris, jd_utc) -> tuple[np.ndarray, np.ndarray]:
    """The Sun's geocentric apparent RA and Dec of date (degrees; RA not wrapped)."""
    ra, dec = _interpolate_all(eph, (eph.sun_ra_deg, eph.sun_dec_deg), jd_utc)
    return ra, dec


def moon_radec_deg(eph: Ephemeris, geo: SiteGeometry, jd_utc, lst_deg=None):
    """The Moon's topocentric apparent RA, Dec (degrees) and distance (km) of date.

    The geocentric position minus the observer's geocentric vector, both in
    the true equatorial frame of date (the observer's right ascension is the
    local sidereal time).  Polar motion (< 0.5″) is neglected.
    """
    jd_utc = np.asarray(jd_utc, dtype=float)
    if lst_deg is None:
        lst_deg = local_sidereal_deg(eph, jd_utc, geo.longitude_deg)
    ra, dec, dist = _interpolate_all(eph, (eph.moon_ra_deg, eph.moon_dec_deg, eph.moon_distance_km), jd_utc)
    ra, dec = np.radians(ra), np.radians(dec)
    lst = np.radians(lst_deg)
    x = dist * np.cos(dec) * np.cos(ra) - geo.rho_cos_phi_km * np.cos(lst)
    y = dist * np.cos(dec) * np.sin(ra) - geo.rho_cos_phi_km * np.sin(lst)
    z = dist * np.sin(dec) - geo.rho_sin_phi_km
    rho = np.sqrt(x * x + y * y + z * z)
    return np.degrees(np.arctan2(y, x)), np.degrees(np.arcsin(z / rho)), rho


def moon_phase(eph: Ephemeris, jd_utc) -> tuple[np.ndarray, np.ndarray]:
    """Illuminated fraction and phase angle (degrees) of the Moon, geocentric (Meeus 48.2–48.4)."""
    ra_s, dec_s = (np.radians(v) for v in sun_radec_deg(eph, jd_utc))
    ra_m, dec_m, r_sun, d_moon = _interpolate_all(
        eph, (eph.moon_ra_deg, eph.moon_dec_deg, eph.sun_distance_km, eph.moon_distance_km), jd_utc)
    ra_m, dec_m = np.radians(ra_m), np.radians(dec_m)
    cos_psi = np.sin(dec_s) * np.sin(dec_m) + np.cos(dec_s) * np.cos(dec_m) * np.cos(ra_s - ra_m)
    psi = np.arccos(np.clip(cos_psi, -1.0, 1.0))  # geocentric elongation
    phase_angle = np.arctan2(r_sun * np.sin(psi), d_moon - r_sun * np.cos(psi))
    return (1.0 + np.cos(phase_angle)) / 2.0, np.degrees(phase_angle)


def hour_angle_deg(lst_deg, ra_deg) -> np.ndarray:
    """Hour angle in [−180, 180) degrees."""
    return wrap_180(np.asarray(lst_deg) - np.asarray(ra_deg))


def transit_jd(eph: Ephemeris, jd_near, ra_deg, longitude_deg: float) -> np.ndarray:
    """Upper meridian transit of a fixed RA nearest to ``jd_near`` (closed form, one step)."""
    lst = local_sidereal_deg(eph, jd_near, longitude_deg)
    ha = wrap_180(lst - np.asarray(ra_deg))
    return np.asarray(jd_near) - ha / SIDEREAL_DEG_PER_DAY
