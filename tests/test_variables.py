"""Tests for planner.variables.phases: phases, heliocentric dates, coverage, alias warnings."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.time import Time

from planner.variables.phases import (
    RRAB_MINIMUM_LIGHT,
    RRAB_RISING_BRANCH,
    RRC_MINIMUM_LIGHT,
    alias_warnings,
    cluster_coverage_summary,
    heliocentric_jd,
    phase_coverage,
    phase_drift_per_day,
    phases,
)
from planner.variables.recovery import RRAB_SHAPE, RRC_SHAPE, template_magnitude

# RR Lyr itself, the ephemeris as listed in the GCVS (Samus et al., General Catalogue
# of Variable Stars), FROM MEMORY: HJD(max) = 2442923.4193 + 0.56686776 E.  (Le Borgne
# et al. 2014, MNRAS 441, 1435, abstract: RR Lyr alternates between P0 > 0.56684 d and
# P0 < 0.56682 d, so the period is right to 5e-5; for arithmetic that does not matter.)
RR_LYR_EPOCH_HJD = 2442923.4193
RR_LYR_PERIOD_D = 0.56686776


def test_phase_hand_worked_rr_lyr():
    # Worked by hand:
    #   HJD − epoch = 2460000.0 − 2442923.4193 = 17076.5807 d
    #   17076.5807 / 0.56686776 = 30124.452…  →  E = 30124 whole cycles
    #   30124 × 0.56686776 = 17076.32440224 d; remainder 0.25629776 d
    #   phase = 0.25629776 / 0.56686776 = 0.452130
    assert phases(np.array([2460000.0]), RR_LYR_EPOCH_HJD, RR_LYR_PERIOD_D)[0] == pytest.approx(0.452130, abs=2e-6)
    # A quarter of a day before the epoch: 0.56686776 × 0.441 = 0.24998868, so
    # 0.25 / 0.56686776 = 0.441 + 0.00001132 / 0.56686776 = 0.441020; phase = 1 − 0.441020 = 0.558980
    before = phases(np.array([RR_LYR_EPOCH_HJD - 0.25]), RR_LYR_EPOCH_HJD, RR_LYR_PERIOD_D)[0]
    assert before == pytest.approx(0.558980, abs=2e-6)
    # The epoch itself is maximum light, phase 0 — also a whole number of cycles later.
    at = phases(np.array([RR_LYR_EPOCH_HJD, RR_LYR_EPOCH_HJD + 1000 * RR_LYR_PERIOD_D]),
                RR_LYR_EPOCH_HJD, RR_LYR_PERIOD_D)
    assert np.all((at < 1e-6) | (at > 1 - 1e-6))


def test_phases_broadcast_range_and_nan():
    hjd = np.array([[2460000.1, np.nan, 2460001.7], [2460000.1, 2460000.2, 2460000.3]])
    ph = phases(hjd, [2460000.0, 2459999.0], [0.5, 0.3])
    assert ph.shape == (2, 3)
    assert np.isnan(ph[0, 1])
    finite = ph[np.isfinite(ph)]
    assert np.all((finite >= 0) & (finite < 1))
    # Row 0: (0.1 / 0.5) = 0.2; (1.7 / 0.5) = 3.4 → 0.4.  Row 1: (1.1 / 0.3) = 3.6667 → 0.6667.
    assert ph[0, 0] == pytest.approx(0.2, abs=1e-9)
    assert ph[0, 2] == pytest.approx(0.4, abs=1e-9)
    assert ph[1, 0] == pytest.approx(2.0 / 3.0, abs=1e-9)


# Three stars far apart on the sky, times over a year so the Earth goes all the way round.
RA = np.array([291.3663, 322.493, 6.024])  # RR Lyr (approx.), M15 and 47 Tuc centres
DEC = np.array([42.7843, 12.167, -72.081])
TIMES = Time(2460000.5 + np.linspace(0.0, 365.0, 9), format="jd", scale="utc")


def test_heliocentric_jd_against_astropy_body_positions():
    """Independent route: Earth − Sun vector from get_body_barycentric, projected on the star.

    HJD = JD + (r_earth − r_sun) · n̂ / c.  Both routes use astropy's built-in ephemeris,
    so they should agree to far better than a millisecond.
    """
    import astropy.units as u
    from astropy.constants import c
    from astropy.coordinates import SkyCoord, get_body_barycentric

    hjd = heliocentric_jd(TIMES, RA, DEC)
    tdb = TIMES.tdb
    earth_from_sun = (get_body_barycentric("earth", tdb) - get_body_barycentric("sun", tdb)).xyz.to_value(u.m)
    n = SkyCoord(RA * u.deg, DEC * u.deg).cartesian.xyz.value  # (3, n_stars)
    ltt_s = np.einsum("it,is->st", earth_from_sun, n) / c.to_value(u.m / u.s)
    expected = (TIMES.utc.jd1 + TIMES.utc.jd2)[None, :] + ltt_s / 86400.0
    assert np.max(np.abs(hjd - expected)) * 86400.0 < 1e-3  # seconds
    # The correction is bounded by the Earth–Sun distance: at most 1.0167 au / c = 507.4 s.
    assert np.max(np.abs(ltt_s)) < 507.5
    assert np.max(np.abs(ltt_s)) > 300.0  # and it is really applied


def test_heliocentric_jd_against_skyfield_de421():
    """A fully independent ephemeris: JPL DE421 through skyfield (skyfield-data)."""
    skyfield_api = pytest.importorskip("skyfield.api")
    skyfield_data = pytest.importorskip("skyfield_data")
    import warnings

    with warnings.catch_warnings():  # skyfield-data's bundled IERS table may be "expired"
        warnings.simplefilter("ignore")
        load = skyfield_api.Loader(skyfield_data.get_skyfield_data_path())
        eph = load("de421.bsp")
        ts = load.timescale(builtin=True)
    jd_utc = TIMES.utc.jd
    t = ts.tt_jd(TIMES.tt.jd)
    r_au = (eph["earth"] - eph["sun"]).at(t).position.au  # (3, n_times), ICRF
    dec, ra = np.radians(DEC), np.radians(RA)
    n = np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])
    c_au_per_day = 173.1446326846693  # IAU: c = 299792458 m/s, au = 149597870700 m
    expected = jd_utc[None, :] + np.einsum("it,is->st", r_au, n) / c_au_per_day
    hjd = heliocentric_jd(TIMES, RA, DEC)
    # DE421 against astropy's built-in (VSOP-based) Earth: kilometres, i.e. ~1e-5 s;
    # 0.01 s leaves room and is still 1e-7 of the shortest RR Lyrae period.
    assert np.max(np.abs(hjd - expected)) * 86400.0 < 0.01


def test_barycentric_jd_tdb_against_skyfield_de421():
    """BJD(TDB) = JD(TDB) + r_earth,SSB · n̂ / c (Eastman, Siverd & Gaudi 2010, eq. 1-2,
    from memory), with the Earth's barycentric position from JPL DE421 (skyfield)."""
    skyfield_api = pytest.importorskip("skyfield.api")
    skyfield_data = pytest.importorskip("skyfield_data")
    import warnings

    from planner.variables.phases import barycentric_jd_tdb

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        load = skyfield_api.Loader(skyfield_data.get_skyfield_data_path())
        eph = load("de421.bsp")
        ts = load.timescale(builtin=True)
    t = ts.tt_jd(TIMES.tt.jd)
    r_au = eph["earth"].at(t).position.au  # barycentric, ICRF
    dec, ra = np.radians(DEC), np.radians(RA)
    n = np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])
    c_au_per_day = 173.1446326846693
    expected = TIMES.tdb.jd[None, :] + np.einsum("it,is->st", r_au, n) / c_au_per_day
    assert np.max(np.abs(barycentric_jd_tdb(TIMES, RA, DEC) - expected)) * 86400.0 < 0.01
    # Against HJD(UTC): TT − UTC = 32.184 + 37 s (TAI − UTC since 2017, IERS; from memory)
    # plus the barycentre's offset from the Sun's centre, a few seconds at most; at
    # P = 0.2 d, 73 s is 0.0042 in phase (computed).
    diff_s = (barycentric_jd_tdb(TIMES, RA, DEC) - heliocentric_jd(TIMES, RA, DEC)) * 86400.0
    assert np.all(np.abs(diff_s - 69.184) < 4.5) and np.max(np.abs(diff_s - 69.184)) > 0.5
    assert 73.0 / 86400.0 / 0.2 == pytest.approx(0.0042, abs=5e-5)


def test_ephemeris_dates_follow_each_stars_time_system():
    from planner.model.variable import Variable
    from planner.variables.phases import barycentric_jd_tdb, ephemeris_dates

    stars = [Variable("a", 0.5, 2460000.0, RA[0], DEC[0]),
             Variable("b", 0.5, 2460000.0, RA[1], DEC[1], time_system="BJD_TDB")]
    dates = ephemeris_dates(TIMES, stars)
    assert np.array_equal(dates[0], heliocentric_jd(TIMES, RA[:1], DEC[:1])[0])
    assert np.array_equal(dates[1], barycentric_jd_tdb(TIMES, RA[1:2], DEC[1:2])[0])


def test_heliocentric_grid_shape_and_topocentre():
    import astropy.units as u
    from astropy.coordinates import EarthLocation

    geo = heliocentric_jd(TIMES, RA, DEC)
    assert geo.shape == (3, TIMES.size)
    site = EarthLocation.from_geodetic(-70.7 * u.deg, -29.3 * u.deg, 2400 * u.m)
    topo = heliocentric_jd(TIMES, RA, DEC, location=site)
    # The topocentric term is at most R_earth / c = 0.0213 s.
    assert np.max(np.abs(topo - geo)) * 86400.0 < 0.022


# ---------------------------------------------------------------------------------
# Coverage


def test_coverage_hand_examples():
    ph = np.array([
        [0.00, 0.10, 0.50, np.nan],  # 3 bins of 20; gap 0.5 (0.5 → 1.0)
        [0.05, 0.95, np.nan, np.nan],  # gap 0.90 inside, 0.10 across phase 0
        [0.20, np.nan, 0.70, np.nan],  # gap 0.5 either way
        [0.42, np.nan, np.nan, np.nan],  # one point: the whole circle is a gap
    ])
    cov = phase_coverage(ph, n_bins=20)
    assert cov.bins_covered.tolist() == [3, 2, 2, 1]
    assert cov.largest_gap == pytest.approx([0.5, 0.9, 0.5, 1.0])
    assert cov.n_observed.tolist() == [3, 2, 2, 1]
    assert cov.bin_counts[0, 0] == 1 and cov.bin_counts[0, 2] == 1 and cov.bin_counts[0, 10] == 1


def test_coverage_matches_brute_force():
    rng = np.random.default_rng(7)
    ph = rng.random((40, 25))
    ph[rng.random(ph.shape) < 0.3] = np.nan
    cov = phase_coverage(ph, n_bins=13)
    for i in range(ph.shape[0]):  # the slow, obvious way
        p = np.sort(ph[i][np.isfinite(ph[i])])
        bins = {int(x * 13) for x in p}
        gaps = np.diff(np.r_[p, p[0] + 1.0]) if p.size >= 2 else np.array([1.0])
        assert cov.bins_covered[i] == len(bins)
        assert cov.largest_gap[i] == pytest.approx(gaps.max())


def test_rising_branch_and_minimum_windows():
    ph = np.array([[0.90, 0.30], [0.78, 0.30], [0.60, 0.10], [0.90, 0.20]])
    cov = phase_coverage(ph, types=["RRab", "RRab", "RRc", None])
    assert cov.rising_branch_sampled.tolist() == [True, False, False, True]
    assert cov.rising_branch_applies.tolist() == [True, True, False, True]
    assert cov.minimum_light_sampled.tolist() == [False, True, True, False]


@pytest.mark.parametrize("shape, window", [(RRAB_SHAPE, RRAB_MINIMUM_LIGHT), (RRC_SHAPE, RRC_MINIMUM_LIGHT)])
def test_minimum_light_window_is_where_the_template_is_faint(shape, window):
    """The stated windows are where the adopted template is within 10 % of minimum light."""
    lo, hi = window
    inside = template_magnitude(shape, np.linspace(lo, hi, 200))
    assert np.all(inside >= 0.9)  # 0 = maximum light, 1 = minimum
    outside = template_magnitude(shape, np.array([lo - 0.03, hi + 0.03]))
    assert np.all(outside < 0.9)  # and the window is not drawn much too small


def test_rising_branch_lies_on_the_template_rise():
    # RRab rise time from minimum to maximum: 0.1–0.25 of the period is typical (from
    # memory; cf. the "rise" durations of RRab ephemerides). gcplan's rising-branch window 0.85–1.0
    # must then be on the rise of the adopted template.
    grid = np.linspace(0.0, 1.0, 4001)[:-1]
    m = template_magnitude(RRAB_SHAPE, grid)
    phase_min = grid[np.argmax(m)]
    assert 0.75 <= phase_min <= 0.9
    assert 0.1 <= 1.0 - phase_min <= 0.25
    rise = template_magnitude(RRAB_SHAPE, np.linspace(RRAB_RISING_BRANCH[0], 0.999, 100))
    assert np.all(np.diff(rise) < 0)  # brightening throughout


# ---------------------------------------------------------------------------------
# Aliases


def test_phase_drift_values():
    # δ = frac(1/P) folded to [−0.5, 0.5): by hand, 1/0.6 = 1.6667 → 0.6667 → −0.3333;
    # 1/0.4995 = 2.002002 → +0.002002; 1/0.5, 1/0.25 and 1/1.0 are whole numbers → 0.
    drift = phase_drift_per_day([0.5, 0.6, 0.4995, 0.25, 1.0, 0.4])
    assert drift == pytest.approx([0.0, -1 / 3, 0.002002, 0.0, 0.0, -0.5], abs=1e-6)
    assert np.all((drift >= -0.5) & (drift < 0.5))


def test_alias_warning_for_half_day_period():
    warnings = alias_warnings(["V1", "V2", "V3"], [0.5, 0.6, 0.3334])
    names = [w.star_id for w in warnings]
    assert names == ["V1", "V3"]
    assert warnings[0].nearest_n == 2 and warnings[1].nearest_n == 3
    assert "V1" in warnings[0].message and "+0.0000" in warnings[0].message
    assert f"{warnings[1].drift_per_day:+.4f}" in warnings[1].message


def test_half_day_period_at_nightly_cadence_repeats_phases():
    """The P = 0.5 d case: one visit a night at the same hour never moves in phase."""
    nightly = Time(2461000.25 + np.arange(30.0), format="jd", scale="utc")
    hjd = heliocentric_jd(nightly, [322.493, 322.493], [12.167, 12.167])
    cov = phase_coverage(phases(hjd, [2461000.0, 2461000.0], [0.5, 0.61]))
    # Over 30 nights the heliocentric correction drifts by a few minutes, i.e. < 0.01 in
    # phase at P = 0.5 d: the visits stay in one or two bins.  P = 0.61 d sweeps them all.
    assert cov.bins_covered[0] <= 2
    assert cov.bins_covered[1] >= 15
    assert [w.star_id for w in alias_warnings(["half", "other"], [0.5, 0.61])] == ["half"]


def test_cluster_summary():
    ph = np.array([[0.1, 0.2, 0.9], [0.1, 0.15, np.nan], [0.0, 0.5, 0.8]])
    cov = phase_coverage(ph, n_bins=10, types=["RRab", "RRab", "RRc"])
    summary = cluster_coverage_summary(["a", "b", "c"], ["NGC 7078", "NGC 7078", None], cov)
    assert [s.cluster for s in summary] == ["NGC 7078", "field"]
    m15 = summary[0]
    assert m15.n_stars == 2 and m15.min_bins_covered == 1 and m15.worst_star == "b"
    assert m15.n_rising_branch_sampled == 1 and m15.n_rising_branch_applies == 2
    assert m15.max_largest_gap == pytest.approx(0.95)
