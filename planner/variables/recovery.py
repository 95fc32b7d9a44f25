"""Would a campaign recover the RR Lyrae periods?  Simulate light curves and search them.

Pure computation: populations, light curves, noise and times come in as numbers, a
``numpy.random.Generator`` supplies the randomness, results go out as dataclasses.

* **Populations** (:data:`OOSTERHOFF_I`, :data:`OOSTERHOFF_II`): period distributions,
  RRab/RRc mix and amplitudes by Oosterhoff type (sources beside each number).
* **Light curves**: a sine Fourier series per type (:data:`RRAB_SHAPE`, :data:`RRC_SHAPE`)
  scaled to the star's peak-to-peak amplitude, maximum light at phase 0.
* **Period search**: :func:`planner.period_search.recover_periods`, the batched
  multi-term Lomb–Scargle periodogram (held to astropy's ``LombScargle`` in the tests)
  with a coarse single-term grid and a multi-term zoom on the best peaks.
* **Outcomes**: recovered (|ΔP|/P < 1e-3); imprecise (the right peak, not pinned to
  1e-3); a one-day alias (1/|1/P ± n d⁻¹|); a harmonic (P/2 or 2P); or other.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from planner.model.variable import NOISE_FLOOR_MAG, RECOVERY_TOLERANCE  # noqa: F401 (this module's API too)
from planner.variables.period_search import PeriodSearch, recover_periods

TWO_PI = 2.0 * np.pi
#: σ_mag = 2.5 / ln 10 / (S/N): the magnitude error of a flux measured to S/N.
MAG_PER_INVERSE_SNR = 2.5 / np.log(10.0)
# RECOVERY_TOLERANCE and NOISE_FLOOR_MAG (the 0.01 mag floor): see planner.model.variable.
#: S/N below which a visit is taken as this faint (σ ≈ 10⁶ mag: no information),
#: so a star too faint to measure gives a huge but finite error.
_MIN_SNR = 1e-6


def visit_noise_mag(snr, floor_mag: float = NOISE_FLOOR_MAG) -> np.ndarray:
    """Magnitude error of one visit measured to ``snr``: the photon noise
    (:data:`MAG_PER_INVERSE_SNR` / S/N) and ``floor_mag`` added in quadrature."""
    snr = np.asarray(snr, dtype=float)
    return np.hypot(MAG_PER_INVERSE_SNR / np.maximum(snr, _MIN_SNR), floor_mag)


# ---------------------------------------------------------------------------------
# Light-curve shapes


@dataclass(frozen=True)
class FourierShape:
    """A light-curve shape as a sine series m(φ) = Σ_k A_k sin(2πkφ + φ_k), A_1 = 1.

    ``amplitude_ratios`` are R_k1 = A_k/A_1 and ``phase_differences_rad`` are
    φ_k1 = φ_k − kφ_1 for k = 2, 3, ... (V band, magnitudes).
    """

    name: str
    amplitude_ratios: tuple[float, ...]
    phase_differences_rad: tuple[float, ...]
    source: str


# Typical V-band sine-series parameters of Oosterhoff I RRab (e.g. the M3 and field
# samples of Jurcsik & Kovács 1996, A&A 312, 111; Kovács & Walker 2001): FROM MEMORY,
# unverified. The resulting curve rises from minimum to maximum in 0.20 P and has
# the usual slow decline with a shallow bump before minimum (tests check the rise).
RRAB_SHAPE = FourierShape(
    name="RRab",
    amplitude_ratios=(0.50, 0.34, 0.22),
    phase_differences_rad=(2.40, 5.05, 1.45),
    source="typical V-band RRab sine-series values (Jurcsik & Kovács 1996), from memory",
)
# RRc: nearly sinusoidal, small harmonics, slightly faster rise than decline (rise
# 0.37 P with these values). FROM MEMORY of the range of published RRc decompositions
# (e.g. Simon & Clement 1993, ApJ 410, 526), chosen for that shape.
RRC_SHAPE = FourierShape(
    name="RRc",
    amplitude_ratios=(0.16, 0.07),
    phase_differences_rad=(3.30, 6.10),
    source="typical V-band RRc sine-series values (Simon & Clement 1993), from memory",
)


def _raw_shape(shape: FourierShape, phase: np.ndarray) -> np.ndarray:
    amp = np.r_[1.0, shape.amplitude_ratios]
    phi = np.r_[0.0, shape.phase_differences_rad]
    k = np.arange(1, amp.size + 1)
    arg = TWO_PI * k * phase[..., np.newaxis] + phi
    return np.sum(amp * np.sin(arg), axis=-1)


def _shape_normalisation(shape: FourierShape, n_grid: int = 8192) -> tuple[float, float, float]:
    """(phase of maximum light, magnitude there, peak-to-peak) of the raw series."""
    grid = np.arange(n_grid) / n_grid
    raw = _raw_shape(shape, grid)
    i = int(np.argmin(raw))  # magnitudes: maximum light is the smallest value
    return float(grid[i]), float(raw[i]), float(raw.max() - raw.min())


def template_magnitude(shape: FourierShape, phase) -> np.ndarray:
    """Template scaled to unit peak-to-peak: 0 at maximum light (φ = 0), 1 at minimum."""
    phase0, at_max, ptp = _shape_normalisation(shape)
    return (_raw_shape(shape, np.asarray(phase, dtype=float) + phase0) - at_max) / ptp


# ---------------------------------------------------------------------------------
# Populations


@dataclass(frozen=True)
class PopulationModel:
    """Period, amplitude and mode mix of a cluster's RR Lyrae (Oosterhoff type)."""

    name: str
    overtone_fraction: float  # N(RRc) / N(RR)
    rrab_period_mean_d: float
    rrab_period_sigma_d: float
    rrab_period_range_d: tuple[float, float]
    rrc_period_mean_d: float
    rrc_period_sigma_d: float
    rrc_period_range_d: tuple[float, float]
    bailey_log_period_shift: float  # Δ log P applied to the Oosterhoff I RRab locus
    rrab_amplitude_scatter_mag: float
    rrab_amplitude_range_mag: tuple[float, float]
    rrc_amplitude_range_mag: tuple[float, float]
    source: str


# Oosterhoff (1939) groups as summarised by Smith (1995, "RR Lyrae Stars", ch. 5):
# ⟨P_ab⟩ ≈ 0.55 / 0.65 d, ⟨P_c⟩ ≈ 0.32 / 0.37 d, N_c/N_RR ≈ 0.17 / 0.44 (FROM MEMORY;
# tests/REFERENCES.md, "RR Lyrae and the horizontal branch"). Clement et al. 2001 (read)
# give all-cluster means 0.585 / 0.342 d and about 30 % overtones, between the two
# groups. Ranges: RRab 0.45–0.9 d, RRc 0.2–0.45 d, RRc A_V 0.3–0.6 (from memory);
# Gaussian widths are a choice (from memory of the spread in well-studied clusters).
# RRab amplitudes follow the Bailey-diagram locus of M3 (Cacciari, Corwin & Carney
# 2005, AJ 129, 267; FROM MEMORY), shifted in log P by +0.06 for Oosterhoff II (the
# Oosterhoff period shift, from memory).
OOSTERHOFF_I = PopulationModel(
    name="oosterhoff-1",
    overtone_fraction=0.17,
    rrab_period_mean_d=0.55,
    rrab_period_sigma_d=0.06,
    rrab_period_range_d=(0.45, 0.90),
    rrc_period_mean_d=0.32,
    rrc_period_sigma_d=0.04,
    rrc_period_range_d=(0.20, 0.45),
    bailey_log_period_shift=0.0,
    rrab_amplitude_scatter_mag=0.10,
    rrab_amplitude_range_mag=(0.30, 1.50),
    rrc_amplitude_range_mag=(0.30, 0.60),
    source="Oosterhoff 1939 / Smith 1995 (from memory); Bailey locus Cacciari et al. 2005",
)
OOSTERHOFF_II = PopulationModel(
    name="oosterhoff-2",
    overtone_fraction=0.44,
    rrab_period_mean_d=0.65,
    rrab_period_sigma_d=0.07,
    rrab_period_range_d=(0.50, 0.90),
    rrc_period_mean_d=0.37,
    rrc_period_sigma_d=0.04,
    rrc_period_range_d=(0.25, 0.45),
    bailey_log_period_shift=0.06,
    rrab_amplitude_scatter_mag=0.10,
    rrab_amplitude_range_mag=(0.30, 1.50),
    rrc_amplitude_range_mag=(0.30, 0.60),
    source="Oosterhoff 1939 / Smith 1995 (from memory); Bailey locus Cacciari et al. 2005",
)
POPULATIONS: Mapping[str, PopulationModel] = {
    OOSTERHOFF_I.name: OOSTERHOFF_I,
    OOSTERHOFF_II.name: OOSTERHOFF_II,
}


@dataclass(frozen=True, eq=False)
class StarSample:
    """Stars to simulate: periods, amplitudes, types and epochs of maximum light."""

    star_id: tuple[str, ...]
    period_d: np.ndarray
    amplitude_mag: np.ndarray  # peak-to-peak, V
    types: tuple[str, ...]  # "RRab" or "RRc" ("RRd" simulated as RRc)
    epoch_d: np.ndarray  # same time system as the times it is simulated at


def bailey_amplitude_mag(period_d, log_period_shift: float = 0.0) -> np.ndarray:
    """RRab V amplitude on the M3 Bailey locus (Cacciari et al. 2005; from memory).

    A_V = −2.627 − 22.046 x − 30.876 x², x = log10 P − shift.
    """
    x = np.log10(np.asarray(period_d, dtype=float)) - log_period_shift
    return -2.627 - 22.046 * x - 30.876 * x**2


def _truncated_normal(rng, mean, sigma, bounds, n) -> np.ndarray:
    out = np.empty(n)
    filled = 0
    while filled < n:  # rejection in batches; the acceptance is above one half
        draw = rng.normal(mean, sigma, size=2 * (n - filled) + 8)
        ok = draw[(draw >= bounds[0]) & (draw <= bounds[1])][: n - filled]
        out[filled : filled + ok.size] = ok
        filled += ok.size
    return out


def synthetic_population(
    model: PopulationModel, n_stars: int, rng: np.random.Generator, reference_time_d: float = 0.0
) -> StarSample:
    """Draw ``n_stars`` RR Lyrae from ``model``; epochs at random phase near the reference."""
    overtone = rng.random(n_stars) < model.overtone_fraction
    n_c = int(overtone.sum())
    period = np.empty(n_stars)
    period[~overtone] = _truncated_normal(
        rng, model.rrab_period_mean_d, model.rrab_period_sigma_d,
        model.rrab_period_range_d, n_stars - n_c,
    )
    period[overtone] = _truncated_normal(
        rng, model.rrc_period_mean_d, model.rrc_period_sigma_d, model.rrc_period_range_d, n_c
    )
    amp_ab = bailey_amplitude_mag(period, model.bailey_log_period_shift)
    amp_ab = amp_ab + rng.normal(0.0, model.rrab_amplitude_scatter_mag, n_stars)
    amp_ab = np.clip(amp_ab, *model.rrab_amplitude_range_mag)
    amp_c = rng.uniform(*model.rrc_amplitude_range_mag, n_stars)
    epoch = reference_time_d + rng.random(n_stars) * period
    return StarSample(
        star_id=tuple(f"syn{i + 1:04d}" for i in range(n_stars)),
        period_d=period,
        amplitude_mag=np.where(overtone, amp_c, amp_ab),
        types=tuple("RRc" if o else "RRab" for o in overtone),
        epoch_d=epoch,
    )


def simulate_magnitudes(
    times_d, stars: StarSample, mean_mag, sigma_mag, rng: np.random.Generator
) -> np.ndarray:
    """Noisy V magnitudes (n_stars, n_times) of ``stars`` at ``times_d``.

    ``times_d`` is (n_times,) or (n_stars, n_times) in the epochs' time system;
    ``mean_mag`` and ``sigma_mag`` are scalars or per star (Gaussian noise).
    """
    t = np.asarray(times_d, dtype=float)
    t = t if t.ndim == 2 else t[np.newaxis, :]
    cycles = (t - stars.epoch_d[:, np.newaxis]) / stars.period_d[:, np.newaxis]
    phase = cycles - np.floor(cycles)
    overtone = np.array([s in ("RRc", "RRd") for s in stars.types])[:, np.newaxis]
    shape = np.where(
        overtone, template_magnitude(RRC_SHAPE, phase), template_magnitude(RRAB_SHAPE, phase)
    )
    # The template's mean over phase is not zero: remove it so mean_mag is the mean.
    grid = np.arange(1024) / 1024
    offset = np.where(
        overtone, template_magnitude(RRC_SHAPE, grid).mean(),
        template_magnitude(RRAB_SHAPE, grid).mean(),
    )
    amp = stars.amplitude_mag[:, np.newaxis]
    mean = np.reshape(np.asarray(mean_mag, dtype=float), (-1, 1))
    sigma = np.reshape(np.asarray(sigma_mag, dtype=float), (-1, 1))
    signal = mean + amp * (shape - offset)
    return signal + sigma * rng.standard_normal(signal.shape)


def visit_times_in_windows(
    windows_jd, visits_per_night: int, rng: np.random.Generator, jitter_d: float = 10.0 / 1440.0
) -> np.ndarray:
    """Visit times spread evenly through each night's window, with a small jitter.

    Each window [start, end] is cut into ``visits_per_night`` equal slots and a visit
    is put at each slot's centre, moved by a uniform random amount up to ``jitter_d``
    (default 10 minutes, capped at half a slot so visits keep their order). The jitter
    stands for the usual scatter of when a frame is really taken; without it the
    perfectly regular spacing would print artificial structure on the periodogram.
    Rows with NaN (no dark time) or end ≤ start are skipped. Returns a 1-D array.
    """
    w = np.asarray(windows_jd, dtype=float).reshape(-1, 2)
    ok = np.all(np.isfinite(w), axis=1) & (w[:, 1] > w[:, 0])
    start, end = w[ok, 0], w[ok, 1]
    slot = (end - start) / visits_per_night
    centres = start[:, None] + (np.arange(visits_per_night) + 0.5)[None, :] * slot[:, None]
    half = np.minimum(jitter_d, 0.5 * slot)[:, None]
    return (centres + rng.uniform(-1.0, 1.0, centres.shape) * half).ravel()


# ---------------------------------------------------------------------------------
# Outcomes


OUTCOMES = ("recovered", "imprecise", "alias", "harmonic", "other")


def classify_periods(
    true_period_d,
    found_period_d,
    tolerance: float = RECOVERY_TOLERANCE,
    peak_halfwidth_per_d: float = 0.0,
    max_alias_order: int = 4,
) -> np.ndarray:
    """Outcome per star, one of :data:`OUTCOMES`.

    "recovered": |ΔP|/P < ``tolerance``.  Otherwise, with a peak counted as "the same"
    when its frequency is within ``peak_halfwidth_per_d`` (or ``tolerance`` relative):
    "imprecise" (the true peak, located too loosely), "alias" (1/|1/P ± n d⁻¹|,
    n ≤ ``max_alias_order``), "harmonic" (P/2 or 2P), else "other" (or nothing found).
    Use half the periodogram's peak width, 0.5/baseline, for ``peak_halfwidth_per_d``.
    """
    p = np.asarray(true_period_d, dtype=float)
    found = np.asarray(found_period_d, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        f_found = 1.0 / found[..., None]
        f = 1.0 / p[..., None]
        n = np.arange(1, max_alias_order + 1)
        recovered = np.abs(found - p) < tolerance * p

        def near(f_target):
            width = np.maximum(peak_halfwidth_per_d, tolerance * np.abs(f_target))
            return np.any(np.abs(f_found - f_target) < width, axis=-1)

        imprecise = near(f)
        alias = near(np.concatenate([np.abs(f + n), np.abs(f - n)], axis=-1))
        harmonic = near(np.concatenate([2.0 * f, 0.5 * f], axis=-1))
    return np.select(
        [recovered, imprecise, alias, harmonic], list(OUTCOMES[:4]), default=OUTCOMES[4]
    )


@dataclass(frozen=True)
class RecoveryFailure:
    star_id: str
    type: str
    period_d: float
    recovered_period_d: float | None
    outcome: str  # one of OUTCOMES other than "recovered"


@dataclass(frozen=True)
class RecoverySummary:
    n_stars: int
    fractions: Mapping[str, float]  # per outcome in OUTCOMES, summing to 1
    failures: tuple[RecoveryFailure, ...]

    @property
    def recovered_fraction(self) -> float:
        return self.fractions["recovered"]

    @property
    def alias_fraction(self) -> float:
        return self.fractions["alias"]


def summarise_recovery(
    stars: StarSample,
    found_period_d,
    baseline_d: float,
    tolerance: float = RECOVERY_TOLERANCE,
) -> RecoverySummary:
    """Fractions by outcome and the stars whose period was not recovered.

    ``baseline_d`` (first to last observation) sets the peak half-width, 0.5/baseline,
    used to tell an imprecise or aliased peak from an unrelated one.
    """
    halfwidth = 0.5 / baseline_d if baseline_d > 0 else 0.0
    outcome = classify_periods(stars.period_d, found_period_d, tolerance, halfwidth)
    found = np.asarray(found_period_d, dtype=float)
    n = max(len(outcome), 1)
    failures = tuple(
        RecoveryFailure(
            star_id=stars.star_id[i],
            type=stars.types[i],
            period_d=float(stars.period_d[i]),
            recovered_period_d=float(found[i]) if np.isfinite(found[i]) else None,
            outcome=str(outcome[i]),
        )
        for i in np.flatnonzero(outcome != "recovered")
    )
    fractions = {name: float(np.sum(outcome == name) / n) for name in OUTCOMES}
    return RecoverySummary(n_stars=len(outcome), fractions=fractions, failures=failures)


# Fourier terms of the search model.  Four for RRab: with two, the harmonics left out
# (R31, R41 ≈ 0.3, 0.2) bias the period more than the noise does; in simulations with
# the templates above, 6 nights × 8 visits at σ = 0.003 mag recover 73 % (2 terms),
# 91 % (3), 99 % (4 or 6).  Two for RRc, whose harmonics are small: a third adds
# half-frequency confusions at high noise.
NTERMS_BY_TYPE = {"RRab": 4, "RRc": 2, "RRd": 2}
NTERMS_UNKNOWN = 4  # most cluster RR Lyrae are RRab


def nterms_for_types(types: Sequence[str | None]) -> np.ndarray:
    """Search-model order per star, from :data:`NTERMS_BY_TYPE`."""
    return np.array([NTERMS_BY_TYPE.get(t, NTERMS_UNKNOWN) for t in types], dtype=int)


def simulate_recovery(
    times_d, stars: StarSample, mean_mag, sigma_mag, rng: np.random.Generator, **search
) -> tuple[RecoverySummary, PeriodSearch]:
    """Simulate ``stars`` at ``times_d`` with noise ``sigma_mag`` and search their periods."""
    mags = simulate_magnitudes(times_d, stars, mean_mag, sigma_mag, rng)
    search.setdefault("nterms", nterms_for_types(stars.types))
    result = recover_periods(times_d, mags, sigma_mag, **search)
    t = np.asarray(times_d, dtype=float)
    baseline = float(np.nanmax(t) - np.nanmin(t)) if np.isfinite(t).any() else 0.0
    return summarise_recovery(stars, result.period_d, baseline), result
