"""planner.sky.astrometry against astropy: the same ERFA calls, the same numbers.

Reference: astropy's ``Time`` scale conversions (UTC → TT, TDB) and its
ICRS → GCRS frame transform (built-in ephemeris), which gcplan used before;
the module promises equality to the last bit, so the tests ask for it.
"""

from __future__ import annotations

import numpy as np
import pytest


@pytest.fixture(scope="module")
def epochs():
    # leap-second days, midnights (x.5: the day split's rounding) and a span beyond the IERS table
    return np.concatenate([np.linspace(2457000.5, 2457900.5, 37), [2457754.4999, 2457754.5, 2457754.5001],
                           np.linspace(2461400.3, 2462400.7, 23), [2463500.5]])


def test_time_scales_equal_astropy(epochs):
    from astropy.time import Time

    from planner.sky.astrometry import tdb_of_utc, tt_of_utc

    t = Time(epochs, format="jd", scale="utc")
    tt, tdb = tt_of_utc(epochs), tdb_of_utc(epochs)
    assert np.array_equal(tt[0], t.tt.jd1) and np.array_equal(tt[1], t.tt.jd2)
    assert np.array_equal(tdb[0], t.tdb.jd1) and np.array_equal(tdb[1], t.tdb.jd2)


def test_icrs_to_gcrs_equals_astropy(epochs):
    import astropy.units as u
    from astropy.coordinates import GCRS, SkyCoord
    from astropy.time import Time

    from planner.sky.astrometry import icrs_to_gcrs_xyz

    rng = np.random.default_rng(7)
    ra = np.concatenate([rng.uniform(0.0, 360.0, 60), [0.0, 359.999, 180.0, 266.4]])
    dec = np.concatenate([np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, 60))), [89.99, -89.99, 0.0, -29.0]])
    coords = SkyCoord(ra * u.deg, dec * u.deg, frame="icrs")
    gcrs = coords[:, None].transform_to(GCRS(obstime=Time(epochs, format="jd", scale="utc")[None, :]))
    theirs = np.moveaxis(gcrs.cartesian.xyz.value, 0, -1)
    ours = icrs_to_gcrs_xyz(ra[:, None], dec[:, None], epochs[None, :])
    assert ours.shape == theirs.shape
    assert np.array_equal(ours, theirs)
