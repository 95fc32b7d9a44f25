"""Tests for planner.sky.airmass: Kasten & Young (1989) air mass and its inverse.

Outside reference: Kasten, F. & Young, A. T. 1989, Applied Optics 28, 4735,
eq. 3; the check values of tests/REFERENCES.md, "Airmass" (computed from the
formula, and listed beside Hardie 1962, Young 1994 and Pickering 2002, which
agree with it to ~1 % above 10°).
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.sky.airmass import airmass_kasten_young, altitude_for_airmass


@pytest.mark.parametrize(
    "altitude_deg, expected",
    [
        (30.0, 1.9943),  # tests/REFERENCES.md, "Airmass", Kasten & Young 1989 column
        (10.0, 5.5860),
        (5.0, 10.3058),
    ],
)
def test_kasten_young_table_values(altitude_deg, expected):
    # The table has four decimals: ±5e-5 is its rounding.
    assert airmass_kasten_young(altitude_deg) == pytest.approx(expected, abs=5e-5)


def test_kasten_young_at_the_horizon_and_zenith():
    # From memory: Kasten & Young give an air mass of about 37.92 at the
    # horizon (their model atmosphere, ISO 1976), far below sec z's infinity.
    assert airmass_kasten_young(0.0) == pytest.approx(37.92, abs=0.01)
    # Near the zenith the formula is sec z to better than 3e-4 (it is an
    # interpolation formula, not normalised to exactly 1 at h = 90°).
    assert airmass_kasten_young(90.0) == pytest.approx(1.0, abs=3e-4)
    assert airmass_kasten_young(60.0) == pytest.approx(1.0 / np.sin(np.radians(60.0)), abs=1e-3)


def test_between_published_formulas_at_10_degrees():
    # tests/REFERENCES.md, "Airmass", at h = 10°: Young 1994 5.5407, Hardie 1962 5.5979;
    # Kasten & Young lies between the two and below sec z (5.7588).
    x = airmass_kasten_young(10.0)
    assert 5.5407 < x < 5.5979 < 5.7588


def test_nan_below_the_horizon():
    x = airmass_kasten_young(np.array([-0.001, -1.0, -30.0, -90.0]))
    assert np.all(np.isnan(x))
    assert np.isfinite(airmass_kasten_young(0.0))


def test_monotonic_in_altitude():
    # Strictly decreasing from the horizon to 89.9°.  (The fitted formula has a
    # shallow minimum at h ≈ 89.984°, 4e-11 below its value at 90°: harmless.)
    h = np.linspace(0.0, 89.9, 89901)
    x = airmass_kasten_young(h)
    assert np.all(np.diff(x) < 0.0)


def test_inverse_round_trip():
    h = np.linspace(0.0, 89.0, 8901)
    back = altitude_for_airmass(airmass_kasten_young(h))
    assert np.max(np.abs(back - h)) < 1e-9


@pytest.mark.parametrize("airmass, altitude_deg", [(1.9943, 30.0), (5.5860, 10.0), (10.3058, 5.0)])
def test_inverse_of_table_values(airmass, altitude_deg):
    # The table's four decimals pin the altitude to about 1e-3° at 30° (dX/dh
    # ≈ −0.06 per degree) and better lower down.
    assert altitude_for_airmass(airmass) == pytest.approx(altitude_deg, abs=2e-3)


def test_inverse_is_vectorised():
    x = np.array([[1.2, 2.0], [2.5, 3.0]])
    h = altitude_for_airmass(x)
    assert h.shape == x.shape
    np.testing.assert_allclose(airmass_kasten_young(h), x, rtol=1e-12)
