"""Tests for planner.variables.recovery and planner.period_search."""

from __future__ import annotations

import json

import numpy as np
import pytest

from planner.variables.period_search import (
    coarse_frequency_step,
    lomb_scargle_power,
    recover_periods,
)
from planner.variables.recovery import (
    OOSTERHOFF_I,
    OOSTERHOFF_II,
    RRAB_SHAPE,
    RRC_SHAPE,
    StarSample,
    classify_periods,
    nterms_for_types,
    simulate_magnitudes,
    simulate_recovery,
    summarise_recovery,
    synthetic_population,
    template_magnitude,
    visit_times_in_windows,
)


def _nightly_windows(n_nights: int, start_jd: float = 2461000.5, hours: float = 8.4) -> np.ndarray:
    night = np.arange(n_nights)
    return np.column_stack([start_jd + night + 0.05, start_jd + night + 0.05 + hours / 24.0])


# ---------------------------------------------------------------------------------
# The batched periodogram against astropy's LombScargle (the reference library)


@pytest.mark.parametrize("nterms", [1, 2, 3])
def test_power_equals_astropy_lombscargle(nterms):
    from astropy.timeseries import LombScargle

    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0.0, 12.0, 70))
    y = np.sin(2 * np.pi * t[None, :] / np.array([[0.31], [0.55], [0.73]])) + 0.3 * rng.normal(size=(3, 70))
    dy = rng.uniform(0.05, 0.3, size=(3, 70))  # per-point errors
    y[1, :9] = np.nan  # a star missing some epochs
    freq = np.linspace(1.0, 5.0, 257)
    ours = lomb_scargle_power(t, y, dy, freq, nterms=nterms)
    for i in range(3):
        ok = np.isfinite(y[i])
        ref = LombScargle(t[ok], y[i, ok], dy[i, ok], nterms=nterms).power(freq)
        # Same formula, different arithmetic: agreement to rounding (1e-8 is generous).
        np.testing.assert_allclose(ours[i], ref, atol=1e-8)


def test_power_with_per_star_times_and_frequencies():
    from astropy.timeseries import LombScargle

    rng = np.random.default_rng(4)
    t = np.sort(rng.uniform(0.0, 8.0, (2, 50)), axis=1)
    y = np.cos(2 * np.pi * t / 0.47) + 0.2 * rng.normal(size=t.shape)
    freq = np.vstack([np.linspace(2.0, 2.3, 31), np.linspace(1.0, 1.3, 31)])
    ours = lomb_scargle_power(t, y, 0.2, freq, nterms=2)
    for i in range(2):
        ref = LombScargle(t[i], y[i], 0.2, nterms=2).power(freq[i])
        np.testing.assert_allclose(ours[i], ref, atol=1e-8)


def test_nearly_equal_per_star_times_take_the_shared_path():
    """Heliocentric dates of stars arcminutes apart differ by < 1 s: searched as shared."""
    from astropy.timeseries import LombScargle

    rng = np.random.default_rng(6)
    t = np.sort(rng.uniform(0.0, 10.0, 60))
    t2 = t[None, :] + np.array([[0.0], [4e-6], [-3e-6]])  # 0.35 s and 0.26 s offsets
    y = np.sin(2 * np.pi * t2 / 0.52) + 0.1 * rng.normal(size=t2.shape)
    freq = np.linspace(1.5, 2.3, 101)
    ours = lomb_scargle_power(t2, y, 0.1, freq, nterms=2)
    for i in range(3):
        ref = LombScargle(t2[i], y[i], 0.1, nterms=2).power(freq)
        # The error of using the mean times: ∂P/∂t × 4e-6 d ≲ 1e-4 here.
        np.testing.assert_allclose(ours[i], ref, atol=2e-4)


def test_too_few_points_give_nan_not_an_error():
    t = np.array([0.0, 0.3, 0.7])
    power = lomb_scargle_power(t, np.array([[1.0, 2.0, 1.5]]), 0.1, np.array([1.0, 2.0]), nterms=2)
    assert np.all(np.isnan(power))


# ---------------------------------------------------------------------------------
# Period recovery


def test_recovers_an_injected_sinusoid_and_agrees_with_astropy():
    from astropy.timeseries import LombScargle

    period, amplitude, sigma = 0.41237, 0.25, 0.03
    rng = np.random.default_rng(11)
    t = visit_times_in_windows(_nightly_windows(8), 6, rng)
    y = amplitude * np.sin(2 * np.pi * t / period) + rng.normal(0.0, sigma, t.size)
    found = recover_periods(t, y[None, :], sigma, nterms=1).period_d[0]
    # astropy's own search on a fine grid finds the same peak in the same data (not a
    # matter of luck: both fit the same points; 5e-5 is the fine grid's step, 2e-5 c/d).
    freq = np.arange(1.0, 5.0, 2e-5)
    p = LombScargle(t, y, sigma).power(freq, method="fast")
    assert abs(1.0 / freq[np.argmax(p)] - found) / found < 5e-5


def test_period_error_of_an_injected_sinusoid_is_the_expected_one():
    """The spread of the recovered period over many noise draws, not one draw's luck.

    Expected error (Montgomery & O'Donoghue 1999, Delta Scuti Star Newsletter 13, 28,
    eq. 1; from memory): σ_f = √6 σ / (π √N A T), here N = 48 points over T ≈ 7.3 d,
    A = 0.25 mag, σ = 0.03 mag: σ_f ≈ 0.0018 c/d, i.e. σ_P/P = σ_f P ≈ 7.6e-4.  A
    single draw lands within 1e-3 (1.3 σ) only ~80 % of the time, so no one draw may
    decide the test.  Over 8 visit patterns × 50 noise draws (n = 400, random phases):
    * the RMS relative error is within 25 % of σ_P/P.  The RMS of n Gaussian errors
      scatters by 1/√(2n) = 3.5 % (over 7σ of room each way); the formula is for even
      sampling, and these nightly clumps give 0.93 of it (measured, 20 × 200 draws);
    * at least 70 % are within 1e-3 (a Gaussian gives 81 %; binomial σ over 400 is 2 %);
    * none is further out than 6 σ_P/P (a Gaussian exceeds 6σ once in 5e8 draws): no
      alias or wrong peak, which would be off by ≳ P²/T ≈ 0.02 d.
    """
    period, amplitude, sigma = 0.41237, 0.25, 0.03
    rng = np.random.default_rng(41)
    errors, expected = [], []
    for _ in range(8):
        t = visit_times_in_windows(_nightly_windows(8), 6, rng)
        phase = rng.uniform(0.0, 1.0, (50, 1))
        y = amplitude * np.sin(2 * np.pi * (t[None, :] / period + phase)) + rng.normal(0.0, sigma, (50, t.size))
        found = recover_periods(t, y, sigma, nterms=1).period_d
        errors.append((found - period) / period)
        sigma_f = np.sqrt(6.0) * sigma / (np.pi * np.sqrt(t.size) * amplitude * (t.max() - t.min()))
        expected.append(sigma_f * period)
    errors, expected = np.concatenate(errors), float(np.mean(expected))
    rms = float(np.sqrt(np.mean(errors**2)))
    assert 0.75 * expected < rms < 1.25 * expected, (rms, expected)
    assert np.mean(np.abs(errors) < 1e-3) > 0.70
    assert np.max(np.abs(errors)) < 6.0 * expected, np.max(np.abs(errors))


def test_recovers_injected_rrab_template_with_four_terms():
    rng = np.random.default_rng(12)
    t = visit_times_in_windows(_nightly_windows(10), 6, rng)
    stars = StarSample(("a", "b"), np.array([0.5731, 0.6622]), np.array([1.0, 0.7]), ("RRab", "RRab"),
                       np.array([t[0] + 0.1, t[0] + 0.3]))
    mags = simulate_magnitudes(t, stars, 16.0, 0.02, rng)
    found = recover_periods(t, mags, 0.02, nterms=nterms_for_types(stars.types)).period_d
    assert np.all(np.abs(found - stars.period_d) / stars.period_d < 1e-3)


def test_coarse_step_from_baseline():
    # 1 / (5 × 20 d) = 0.01 cycles per day (VanderPlas 2018: 5–10 samples per peak width).
    assert coarse_frequency_step(20.0) == pytest.approx(0.01)
    assert coarse_frequency_step(20.0, oversample=10) == pytest.approx(0.005)


def test_classify_periods_by_hand():
    # P = 0.6 d: f = 1.6667 c/d.  Aliases 1/(f ± 1) = 0.375 d and 1.5 d; harmonic P/2 = 0.3 d.
    true = np.full(6, 0.6)
    found = np.array([0.6004, 0.6015, 0.375, 1.5, 0.3, 0.8])
    out = classify_periods(true, found, peak_halfwidth_per_d=0.5 / 20.0)
    assert out.tolist() == ["recovered", "imprecise", "alias", "alias", "harmonic", "other"]
    # 0.6004: |ΔP|/P = 6.7e-4 < 1e-3.  0.6015: 2.5e-3 — the right peak (Δf = 0.0042 <
    # 0.025 c/d), located too loosely.
    assert classify_periods([0.6], [np.nan]).tolist() == ["other"]


def test_fewer_nights_never_recover_more():
    """Statistically, with a fixed seed: the first k nights of one campaign, same stars."""
    rng = np.random.default_rng(2027)
    windows = _nightly_windows(16)
    t_all = visit_times_in_windows(windows, 6, rng)
    stars = synthetic_population(OOSTERHOFF_I, 150, rng, reference_time_d=float(t_all[0]))
    mags_all = simulate_magnitudes(t_all, stars, 16.0, 0.05, rng)
    fractions = []
    for k in (2, 4, 8, 16):
        n = 6 * k  # the first k nights' visits, the same noise draws
        res = recover_periods(t_all[:n], mags_all[:, :n], 0.05, nterms=nterms_for_types(stars.types))
        fractions.append(summarise_recovery(stars, res.period_d, float(t_all[n - 1] - t_all[0])).recovered_fraction)
    # Allow two stars of statistical wobble between neighbours, none overall.
    assert all(b >= a - 2 / 150 for a, b in zip(fractions, fractions[1:])), fractions
    assert fractions[-1] > fractions[0] + 0.3, fractions


def test_simulate_recovery_summary_is_consistent():
    rng = np.random.default_rng(5)
    t = visit_times_in_windows(_nightly_windows(5), 8, rng)
    stars = synthetic_population(OOSTERHOFF_II, 60, rng, reference_time_d=float(t[0]))
    summary, search = simulate_recovery(t, stars, 16.0, 0.02, rng)
    assert sum(summary.fractions.values()) == pytest.approx(1.0)
    assert summary.n_stars == 60
    assert len(summary.failures) == round(60 * (1 - summary.recovered_fraction))
    for f in summary.failures:
        assert f.outcome != "recovered"
    json.dumps([f.__dict__ for f in summary.failures])  # plain data


# ---------------------------------------------------------------------------------
# Populations and light curves


@pytest.mark.parametrize(
    "model, mean_ab, mean_c, overtone",
    # Oosterhoff groups (Smith 1995, ch. 5, FROM MEMORY): ⟨P_ab⟩ 0.55 / 0.65 d,
    # ⟨P_c⟩ 0.32 / 0.37 d, N_c/N_RR 0.17 / 0.44.
    [(OOSTERHOFF_I, 0.55, 0.32, 0.17), (OOSTERHOFF_II, 0.65, 0.37, 0.44)],
)
def test_population_statistics(model, mean_ab, mean_c, overtone):
    stars = synthetic_population(model, 4000, np.random.default_rng(8))
    rrc = np.array(stars.types) == "RRc"
    # Binomial 4σ on 4000 draws: ±0.03.  Truncation moves the means by < 0.01 d.
    assert rrc.mean() == pytest.approx(overtone, abs=0.03)
    assert stars.period_d[~rrc].mean() == pytest.approx(mean_ab, abs=0.015)
    assert stars.period_d[rrc].mean() == pytest.approx(mean_c, abs=0.015)
    # All RR Lyrae periods 0.2–1.0 d and A_V below 2 mag (Catelan & Cortés 2008, read);
    # RRc amplitudes 0.3–0.6 mag (from memory); tests/REFERENCES.md, "RR Lyrae and the
    # horizontal branch".
    assert stars.period_d.min() >= 0.2 and stars.period_d.max() <= 1.0
    assert stars.amplitude_mag.max() < 2.0
    assert np.all((stars.amplitude_mag[rrc] >= 0.3) & (stars.amplitude_mag[rrc] <= 0.6))
    # Bailey diagram: RRab amplitudes fall with period (Oosterhoff 1939 onwards).
    assert np.corrcoef(stars.period_d[~rrc], stars.amplitude_mag[~rrc])[0, 1] < -0.5


def test_template_normalisation_and_shapes():
    grid = np.linspace(0.0, 1.0, 2001)[:-1]
    for shape in (RRAB_SHAPE, RRC_SHAPE):
        m = template_magnitude(shape, grid)
        assert m[0] == pytest.approx(0.0, abs=1e-6)  # maximum light at phase 0
        assert m.max() - m.min() == pytest.approx(1.0, abs=1e-4)
    # RRab rise faster than RRc (typical RRab rise 0.1–0.2 P, RRc 0.3–0.45 P; from memory).
    rise_ab = 1.0 - grid[np.argmax(template_magnitude(RRAB_SHAPE, grid))]
    rise_c = 1.0 - grid[np.argmax(template_magnitude(RRC_SHAPE, grid))]
    assert 0.1 <= rise_ab <= 0.25 and 0.3 <= rise_c <= 0.45


def test_simulated_light_curve_mean_and_amplitude():
    t = np.linspace(0.0, 0.55, 5501)  # one cycle, densely
    stars = StarSample(("x",), np.array([0.55]), np.array([0.9]), ("RRab",), np.array([0.0]))
    m = simulate_magnitudes(t, stars, 15.5, 0.0, np.random.default_rng(0))[0]
    assert m.max() - m.min() == pytest.approx(0.9, abs=1e-3)
    assert m.mean() == pytest.approx(15.5, abs=1e-3)
    assert m[0] == pytest.approx(m.min(), abs=1e-4)  # the epoch is maximum light


def test_visit_times_in_windows():
    windows = np.array([[10.0, 10.4], [np.nan, np.nan], [12.0, 11.9], [13.0, 13.3]])
    t = visit_times_in_windows(windows, 4, np.random.default_rng(1), jitter_d=0.01)
    assert t.size == 8  # the NaN night and the empty one give nothing
    assert np.all(((t >= 10.0) & (t <= 10.4)) | ((t >= 13.0) & (t <= 13.3)))
    centres = np.r_[10.0 + 0.1 * (np.arange(4) + 0.5), 13.0 + 0.075 * (np.arange(4) + 0.5)]
    assert np.max(np.abs(t - centres)) <= 0.01 + 1e-12
    again = visit_times_in_windows(windows, 4, np.random.default_rng(1), jitter_d=0.01)
    np.testing.assert_array_equal(t, again)  # seeded: reproducible
    assert np.all(np.diff(t) > 0)


# ---------------------------------------------------------------------------------
# The benchmark script


def test_benchmark_script_runs_small(capsys):
    import importlib.util
    from pathlib import Path

    path = Path(__file__).parent / "benchmarks" / "bench_recovery.py"
    spec = importlib.util.spec_from_file_location("bench_recovery", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.main(["--stars", "8", "--nights", "4", "--visits", "5"])
    lines = capsys.readouterr().out.strip().splitlines()
    assert lines[-1].startswith("ratio baseline/ours:")


def test_visit_noise_is_photon_noise_and_floor_in_quadrature():
    from planner.variables.recovery import MAG_PER_INVERSE_SNR, NOISE_FLOOR_MAG, visit_noise_mag

    # σ = 2.5 / ln 10 / (S/N) ⊕ floor: S/N 100 gives 0.01086 mag of photon noise
    assert MAG_PER_INVERSE_SNR == pytest.approx(1.0857, abs=1e-4)
    sigma = visit_noise_mag([100.0, 1e6], 0.01)
    assert sigma[0] == pytest.approx(np.hypot(0.0108574, 0.01), rel=1e-4)
    assert sigma[1] == pytest.approx(0.01, rel=1e-6)  # bright: the floor alone
    assert visit_noise_mag(50.0) == pytest.approx(np.hypot(MAG_PER_INVERSE_SNR / 50.0, NOISE_FLOOR_MAG))
    # no signal: a huge but finite error, so a search still runs (and finds nothing)
    faint = visit_noise_mag([0.0, -1.0])
    assert np.all(np.isfinite(faint)) and np.all(faint > 1e5)
