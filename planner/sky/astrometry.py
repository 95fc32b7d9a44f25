"""Time scales and the ICRS → GCRS step, straight from ERFA, as astropy computes them.

astropy's ``Time`` and coordinate frames cost about half a second to import
(astropy.coordinates brings astropy.table and the IERS tables), more than the
whole of ``gcplan night`` without them.  For the two things gcplan asks of
them at every run — UTC → TT (and TDB), and a star's direction carried from
the ICRS to the GCRS (light deflection by the Sun, annual aberration) — this
module makes the same ERFA calls in the same order on the same numbers as
astropy 6–7 does (``Time._set_scale``, ``day_frac``, ``_get_delta_tdb_tt``;
``icrs_to_gcrs`` with ``ErfaAstrom.apcs`` and the built-in ephemeris, ERFA's
``epv00``, then astropy's ``atciqz`` for a direction without distance).  The
tests hold it to astropy's own transform.
"""

from __future__ import annotations

import numpy as np


def _two_sum(a, b):
    """a + b exactly, as (sum, error) (Shewchuk; astropy.time.utils.two_sum)."""
    x = a + b
    eb = x - a
    ea = x - eb
    eb = b - eb
    ea = a - ea
    return x, ea + eb


def day_frac(val1, val2):
    """val1 + val2 as a whole day and a fraction within ±0.5 (astropy.time.utils.day_frac)."""
    sum12, err12 = _two_sum(val1, val2)
    day = np.round(sum12)
    frac, check = _two_sum(sum12 - day, err12)
    excess = np.where(frac * np.sign(check) != 0.5, np.round(frac), np.round(frac + 2 * check))
    day += excess
    frac = sum12 - day
    frac += err12
    return day, frac


def tt_of_utc(jd_utc) -> tuple[np.ndarray, np.ndarray]:
    """TT as (jd1, jd2) at UTC Julian dates: ``Time(jd, format="jd", scale="utc").tt``."""
    import erfa

    jd1, jd2 = day_frac(np.asarray(jd_utc, dtype=float), 0.0)
    return day_frac(*erfa.taitt(*erfa.utctai(jd1, jd2)))


def tdb_of_utc(jd_utc) -> tuple[np.ndarray, np.ndarray]:
    """TDB as (jd1, jd2) at UTC Julian dates, at the geocentre: ``Time(...).tdb``."""
    import erfa

    jd1, jd2 = day_frac(np.asarray(jd_utc, dtype=float), 0.0)
    tt1, tt2 = erfa.taitt(*erfa.utctai(jd1, jd2))
    # TDB − TT (Fairhead & Bretagnon, ERFA's dtdb) at the geocentre, with UT taken as UTC
    u1, u2 = erfa.taiutc(*erfa.tttai(tt1, tt2))
    ut = day_frac(u1 - 0.5, u2)[1]
    dtr = erfa.dtdb(tt1, tt2, ut, 0.0, 0.0, 0.0)
    return day_frac(*erfa.tttdb(tt1, tt2, dtr))


def icrs_to_gcrs_xyz(ra_deg, dec_deg, jd_utc) -> np.ndarray:
    """Unit vectors (..., 3) of ICRS directions seen from the geocentre (GCRS) at UTC
    Julian dates; ``ra_deg``, ``dec_deg`` and ``jd_utc`` broadcast."""
    import erfa

    tt1, tt2 = tt_of_utc(jd_utc)
    tdb1, tdb2 = tdb_of_utc(jd_utc)
    helio, bary = erfa.epv00(tdb1, tdb2)  # the Earth, heliocentric and barycentric
    observer = np.zeros(np.shape(tt1), dtype=erfa.dt_pv)  # the geocentre, at rest
    astrom = erfa.apcs(tt1, tt2, observer, bary, helio["p"])
    rad = np.pi / 180.0  # the factor astropy's unit conversion applies
    direction = erfa.s2c(np.asarray(ra_deg, dtype=float) * rad, np.asarray(dec_deg, dtype=float) * rad)
    natural = erfa.ld(1.0, direction, direction, astrom["eh"], astrom["em"], 1e-6)
    proper = erfa.rxp(astrom["bpn"], erfa.ab(natural, astrom["v"], astrom["em"], astrom["bm1"]))
    ra, dec = erfa.c2s(proper)
    ra = erfa.anp(ra)
    cos_dec = np.cos(dec)
    return np.stack([cos_dec * np.cos(ra), cos_dec * np.sin(ra), np.sin(dec)], axis=-1)
