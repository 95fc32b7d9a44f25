"""The RR Lyrae period recovery forecast against the number of nights, for a time request.

For each number of nights in :data:`RECOVERY_NIGHTS`, the cluster's variables (of the
campaign's variables table) are simulated at ``visits_per_night`` times spread through
the target's observable window on that many of the nights that serve it, from the
recommended window on, with the noise of the cadence's frames from the exposure core,
and searched with the multi-term Lomb–Scargle periodogram, as the campaign forecast
does (:func:`planner.scheduling.campaign.forecast_variables`).  A one-day alias (the
true frequency ± 1 d⁻¹) is what a single site's nightly gaps leave behind: the
forecast counts those apart.  Pure computation; the random numbers are seeded.
"""

from __future__ import annotations

import numpy as np

#: Numbers of nights the forecast is made for.
RECOVERY_NIGHTS = (3, 5, 7, 10, 14)
#: The share of periods a cadence must recover for its nights to be enough (our choice).
RECOVERY_GOAL = 0.9
#: The forecast's seed: a request must be reproducible.
FORECAST_SEED = 1
#: Noise realisations per star: at least this many light curves a cluster, so that a cluster
#: with one or two variables gets a fraction, not a coin toss (our choice).
MIN_LIGHT_CURVES = 40
MAX_REALISATIONS = 20
#: Jitter of each visit around its slot's centre, days (as ``gcplan recover``'s default).
JITTER_D = 10.0 / 1440.0


def recovery_against_nights(campaign, run, k: int, stars, work, order) -> list[tuple[int, float, float]]:
    """(nights, recovered fraction, one-day alias fraction) for each count of
    :data:`RECOVERY_NIGHTS` that ``order`` (indices of the serving nights, in time order)
    can hold; ``work`` is the cadence's frames and conditions."""
    from astropy.time import Time

    from planner.light.exposure import snr_of_exposure
    from planner.variables.phases import ephemeris_dates
    from planner.variables.recovery import (
        OOSTERHOFF_I,
        StarSample,
        bailey_amplitude_mag,
        simulate_recovery,
        visit_noise_mag,
        visit_times_in_windows,
    )

    vis = run.visibility
    windows = np.column_stack([vis.window_start_jd[k], vis.window_end_jd[k]])
    per_night = campaign.cadence.visits_per_night
    types = tuple("RRc" if s.type in ("RRc", "RRd") else "RRab" for s in stars)
    period = np.array([s.period_d for s in stars])
    # Missing amplitudes: the Oosterhoff I Bailey locus for RRab, 0.45 mag for RRc (as the campaign forecast).
    guess = np.where([t == "RRc" for t in types], 0.45,
                     np.clip(bailey_amplitude_mag(period), *OOSTERHOFF_I.rrab_amplitude_range_mag))
    amp = np.array([s.amplitude_mag if s.amplitude_mag is not None else g for s, g in zip(stars, guess)])
    fallback = work.magnitude if work.magnitude is not None else 16.0
    mean = np.array([s.mean_mag if s.mean_mag is not None else fallback for s in stars])
    snr = np.asarray(snr_of_exposure(campaign.site, work.filter, mean, work.frame_s, **work.conditions), dtype=float)
    sigma = visit_noise_mag(snr * np.sqrt(work.frames))
    r = int(min(MAX_REALISATIONS, -(-MIN_LIGHT_CURVES // len(stars))))  # each star r times, its own noise
    sample = StarSample(tuple(f"{s.id}#{j}" for s in stars for j in range(r)), np.repeat(period, r),
                        np.repeat(amp, r), tuple(t for t in types for _ in range(r)),
                        np.repeat([s.epoch_hjd for s in stars], r))
    mean, sigma = np.repeat(mean, r), np.repeat(sigma, r)
    # The visits of the longest run once (the light-time correction is the costly part); a shorter
    # run's visits are its first nights' — the same seed draws the same jitter for them.
    counts = [n for n in RECOVERY_NIGHTS if n <= len(order)]
    if not counts:
        return []
    jd = visit_times_in_windows(windows[order[:counts[-1]]], per_night, np.random.default_rng(FORECAST_SEED),
                                JITTER_D)
    times = np.repeat(ephemeris_dates(Time(jd, format="jd", scale="utc"), stars), r, axis=0)
    out = []
    for n in counts:
        used = n * per_night
        if used < 4:
            continue
        result, _ = simulate_recovery(times[:, :used], sample, mean, sigma, np.random.default_rng(FORECAST_SEED))
        out.append((n, float(result.recovered_fraction), float(result.alias_fraction)))
    return out
