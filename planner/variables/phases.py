"""RR Lyrae ephemerides: heliocentric times, pulsation phases, phase coverage, alias warnings.

Pure computation (no files, no printing, no clock): the variables come in as
:class:`Variable` records, the observation times as an astropy ``Time``.

Conventions
-----------
* Phase ``φ = frac((HJD − epoch) / P)`` with the epoch a time of **maximum light**, so
  φ = 0 is maximum light and an RRab's steep rising branch sits just before φ = 1.
* Times are **heliocentric** Julian dates on the **UTC** scale, HJD(UTC) = JD(UTC) + the
  light-travel time from the observer to the Sun along the line of sight (the system in
  which cluster-variable ephemerides were traditionally published), or **barycentric**
  Julian dates on the **TDB** scale, BJD(TDB) = JD(TDB) + the light-travel time to the
  solar-system barycentre, the recommended standard (Eastman, Siverd & Gaudi 2010,
  PASP 122, 935).  Each star's dates are in the system of its epoch.  The two differ by
  TT − UTC (69.184 s since 2017) plus up to about 4 s between the barycentre and the
  Sun's centre: about 73 s, 0.0042 of a 0.2 d period, so never mix them.
* The light-travel time is computed for the geocentre unless a location is given: the
  topocentric term is at most R_earth / c ≈ 0.021 s.

Hot paths take float arrays shaped ``(n_stars, n_times)`` and are vectorised; the only
loops are over the handful of stars that earn a warning.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

import numpy as np

from planner.model.variable import DEFAULT_MAX_DRIFT_PER_DAY

if TYPE_CHECKING:  # pragma: no cover - typing only
    from astropy.coordinates import EarthLocation
    from astropy.time import Time

# RRab rising branch, phase 0.85–1.0: gcplan's definition, matching the rise time of
# 0.1–0.2 of a period typical of RRab light curves (from memory; the adopted RRab
# template in planner.variables.recovery rises from minimum to maximum in 0.20 P).
RRAB_RISING_BRANCH = (0.85, 1.0)
# Minimum light: the phases where the adopted Fourier templates of planner.variables.recovery
# (RRAB_SHAPE, RRC_SHAPE) lie within 10 % of the full amplitude of their faintest
# point; tests/test_variables.py recomputes this from the templates.
RRAB_MINIMUM_LIGHT = (0.74, 0.84)
RRC_MINIMUM_LIGHT = (0.51, 0.71)

# DEFAULT_MAX_DRIFT_PER_DAY (why 0.05 cycles a day): see planner.model.variable.

@dataclass(frozen=True, eq=False)
class PhaseCoverage:
    """Phase coverage of a set of observation times, one entry per star.

    Attributes
    ----------
    n_bins : int
        Number of equal phase bins.
    bin_counts : ndarray, shape (n_stars, n_bins)
        Observations per bin (bin i covers phases [i/n_bins, (i+1)/n_bins)).
    bins_covered : ndarray of int, shape (n_stars,)
    largest_gap : ndarray, shape (n_stars,)
        Largest phase interval without an observation, on the circle (1.0 when the
        star has fewer than two observations).
    rising_branch_applies : ndarray of bool
        True for RRab and for stars of unknown type (most cluster RR Lyrae are RRab).
    rising_branch_sampled : ndarray of bool
        At least one phase in :data:`RRAB_RISING_BRANCH` (False where it does not apply).
    minimum_light_sampled : ndarray of bool
        At least one phase in the type's minimum-light window.
    n_observed : ndarray of int
        Finite phases per star (NaN marks a time at which the star was not observed).
    """

    n_bins: int
    bin_counts: np.ndarray
    bins_covered: np.ndarray
    largest_gap: np.ndarray
    rising_branch_applies: np.ndarray
    rising_branch_sampled: np.ndarray
    minimum_light_sampled: np.ndarray
    n_observed: np.ndarray


@dataclass(frozen=True)
class ClusterCoverage:
    """Summary of the phase coverage of one cluster's variables."""

    cluster: str
    n_stars: int
    median_bins_covered: float
    min_bins_covered: int
    worst_star: str  # the star with the fewest bins covered
    max_largest_gap: float
    n_rising_branch_sampled: int
    n_rising_branch_applies: int
    n_minimum_light_sampled: int


@dataclass(frozen=True)
class AliasWarning:
    """A star whose phase barely moves from one night to the next."""

    star_id: str
    period_d: float
    drift_per_day: float  # cycles per day, in [-0.5, 0.5)
    nearest_n: int  # the period is close to 1/n days
    message: str


# ---------------------------------------------------------------------------------
# Times and phases


def heliocentric_jd(
    times: "Time",
    ra_deg: Sequence[float] | np.ndarray,
    dec_deg: Sequence[float] | np.ndarray,
    location: "EarthLocation | None" = None,
) -> np.ndarray:
    """Heliocentric Julian dates (UTC scale) of ``times`` for each star.

    Parameters
    ----------
    times : astropy.time.Time, shape (n_times,)
        Observation times (any scale; converted to UTC).
    ra_deg, dec_deg : array_like, shape (n_stars,)
        ICRS position of each star, degrees.
    location : astropy.coordinates.EarthLocation, optional
        Observer; the geocentre when omitted (the difference is below 0.03 s).

    Returns
    -------
    ndarray, shape (n_stars, n_times)
        HJD(UTC) = JD(UTC) + heliocentric light-travel time, in days.
    """
    return _light_time_dates(times, ra_deg, dec_deg, location, "heliocentric")


def _light_time_dates(times, ra_deg, dec_deg, location, kind: str) -> np.ndarray:
    """JD + light-travel time to the Sun's centre (UTC scale) or the barycentre (TDB scale)."""
    import astropy.units as u
    from astropy.coordinates import EarthLocation, SkyCoord

    ra = np.atleast_1d(np.asarray(ra_deg, dtype=float))
    dec = np.atleast_1d(np.asarray(dec_deg, dtype=float))
    times = times.reshape(-1) if times.ndim != 1 else times
    if location is None:
        location = EarthLocation.from_geocentric(0.0, 0.0, 0.0, unit=u.m)
    stars = SkyCoord(ra=ra * u.deg, dec=dec * u.deg, frame="icrs")
    # One call on the broadcast (n_stars, n_times) grid: the Sun's and Earth's
    # positions are computed once per time, not once per star.
    ltt = times[np.newaxis, :].light_travel_time(stars[:, np.newaxis], kind=kind, location=location)
    scale = times.utc if kind == "heliocentric" else times.tdb
    jd = scale.jd1 + scale.jd2  # float64: ~40 µs resolution at JD 2.46e6
    return jd[np.newaxis, :] + ltt.to_value(u.day)


def barycentric_jd_tdb(
    times: "Time",
    ra_deg: Sequence[float] | np.ndarray,
    dec_deg: Sequence[float] | np.ndarray,
    location: "EarthLocation | None" = None,
) -> np.ndarray:
    """Barycentric Julian dates (TDB scale) of ``times`` for each star, shape (n_stars, n_times):
    BJD(TDB) = JD(TDB) + light-travel time to the solar-system barycentre (as
    :func:`heliocentric_jd`, with the barycentre for the Sun and TDB for UTC)."""
    return _light_time_dates(times, ra_deg, dec_deg, location, "barycentric")


def ephemeris_dates(times: "Time", variables, location: "EarthLocation | None" = None) -> np.ndarray:
    """Each star's dates of ``times`` in the time system of its epoch, (n_stars, n_times)."""
    ra = np.array([v.ra_deg for v in variables], dtype=float)
    dec = np.array([v.dec_deg for v in variables], dtype=float)
    bary = np.array([getattr(v, "time_system", "HJD_UTC") == "BJD_TDB" for v in variables])
    out = np.empty((ra.size, len(np.atleast_1d(times.jd))))
    if np.any(~bary):
        out[~bary] = heliocentric_jd(times, ra[~bary], dec[~bary], location)
    if np.any(bary):
        out[bary] = barycentric_jd_tdb(times, ra[bary], dec[bary], location)
    return out


def time_system_label(variables) -> str:
    """What the phase output's dates are, for a set of variables."""
    systems = sorted({getattr(v, "time_system", "HJD_UTC") for v in variables})
    labels = {"HJD_UTC": "HJD (UTC scale), heliocentric", "BJD_TDB": "BJD (TDB scale), barycentric"}
    return "; ".join(labels[s] for s in systems) + ", for the geocentre, as each star's epoch"


def phases(hjd: np.ndarray, epoch_hjd, period_d) -> np.ndarray:
    """Pulsation phase ``frac((HJD − epoch) / P)`` in [0, 1); NaN times stay NaN.

    ``hjd`` is (n_stars, n_times) or (n_times,); ``epoch_hjd`` and ``period_d`` are
    per star (n_stars,) or scalars.
    """
    hjd = np.asarray(hjd, dtype=float)
    epoch = np.asarray(epoch_hjd, dtype=float)
    period = np.asarray(period_d, dtype=float)
    if hjd.ndim == 2:
        epoch = epoch.reshape(-1, 1) if epoch.ndim else epoch
        period = period.reshape(-1, 1) if period.ndim else period
    cycles = (hjd - epoch) / period
    phase = cycles - np.floor(cycles)
    # Rounding can give exactly 1.0 for a tiny negative fraction.
    return np.where(phase >= 1.0, 0.0, phase)


def phase_drift_per_day(period_d) -> np.ndarray:
    """Phase advance per day δ = frac(1/P), folded to [−0.5, 0.5) cycles per day.

    δ ≈ 0 for periods near 1/n days (0.5, 0.333…, 0.25 d): visits made at the same
    clock time every night then hit the same phase again and again.
    """
    frequency = 1.0 / np.asarray(period_d, dtype=float)
    return np.mod(frequency + 0.5, 1.0) - 0.5


# ---------------------------------------------------------------------------------
# Coverage


def _type_masks(n_stars: int, types: Sequence[str | None] | None) -> tuple[np.ndarray, np.ndarray]:
    """Boolean masks (is RRab-like, is RRc-like); unknown types count as RRab."""
    if types is None:
        return np.ones(n_stars, bool), np.zeros(n_stars, bool)
    overtone = np.array([t in ("RRc", "RRd") for t in types], dtype=bool)
    return ~overtone, overtone


def _any_in(phase: np.ndarray, window: tuple[float, float]) -> np.ndarray:
    lo, hi = window
    with np.errstate(invalid="ignore"):
        return np.any((phase >= lo) & (phase < hi), axis=1)


def phase_coverage(
    phase: np.ndarray,
    n_bins: int = 20,
    types: Sequence[str | None] | None = None,
) -> PhaseCoverage:
    """Coverage of the phase circle per star.

    Parameters
    ----------
    phase : ndarray, shape (n_stars, n_times)
        Phases in [0, 1); NaN where the star was not observed.
    n_bins : int
        Number of equal phase bins (≥ 1).
    types : sequence of str or None, optional
        Star types (``"RRab"``, ``"RRc"``, ``"RRd"`` or None); they choose the
        minimum-light window and whether the rising branch applies.
    """
    if n_bins < 1:
        raise ValueError(f"n_bins must be at least 1, not {n_bins}")
    phase = np.atleast_2d(np.asarray(phase, dtype=float))
    n_stars = phase.shape[0]
    finite = np.isfinite(phase)
    n_observed = finite.sum(axis=1)

    bins = np.where(finite, np.floor(np.where(finite, phase, 0.0) * n_bins), n_bins)
    bins = np.clip(bins.astype(np.intp), 0, n_bins)  # n_bins collects the NaNs
    flat = bins + (n_bins + 1) * np.arange(n_stars)[:, np.newaxis]
    counts = np.bincount(flat.ravel(), minlength=n_stars * (n_bins + 1))
    bin_counts = counts.reshape(n_stars, n_bins + 1)[:, :n_bins]

    # Circular largest gap: NaNs sort to the end of each row, so the gaps between
    # consecutive finite phases are the first n_observed − 1 differences, and the
    # wrap-around gap runs from the last finite phase through 1 back to the first.
    ordered = np.sort(phase, axis=1)
    inner = np.diff(ordered, axis=1)
    if inner.shape[1]:
        inner_max = np.nanmax(np.where(np.isfinite(inner), inner, -np.inf), axis=1)
    else:
        inner_max = np.full(n_stars, -np.inf)
    last_index = np.clip(n_observed - 1, 0, None)
    first = ordered[:, 0]
    last = np.take_along_axis(ordered, last_index[:, np.newaxis], axis=1)[:, 0]
    wrap = 1.0 - last + first
    largest_gap = np.where(n_observed >= 2, np.maximum(inner_max, wrap), 1.0)

    fundamental, overtone = _type_masks(n_stars, types)
    rising = _any_in(phase, RRAB_RISING_BRANCH) & fundamental
    minimum = np.where(
        overtone, _any_in(phase, RRC_MINIMUM_LIGHT), _any_in(phase, RRAB_MINIMUM_LIGHT)
    )
    return PhaseCoverage(
        n_bins=int(n_bins),
        bin_counts=bin_counts,
        bins_covered=(bin_counts > 0).sum(axis=1),
        largest_gap=largest_gap,
        rising_branch_applies=fundamental,
        rising_branch_sampled=rising,
        minimum_light_sampled=minimum,
        n_observed=n_observed,
    )


def cluster_coverage_summary(
    star_ids: Sequence[str],
    clusters: Sequence[str | None],
    coverage: PhaseCoverage,
) -> tuple[ClusterCoverage, ...]:
    """One :class:`ClusterCoverage` per cluster, in order of first appearance
    (stars without a cluster go under "field")."""
    ids = np.asarray(star_ids, dtype=object)
    names = np.array([c if c else "field" for c in clusters], dtype=object)
    out = []
    for name in dict.fromkeys(names.tolist()):  # a loop over clusters, not stars
        sel = names == name
        bins = coverage.bins_covered[sel]
        worst = int(np.argmin(bins))
        out.append(
            ClusterCoverage(
                cluster=str(name),
                n_stars=int(sel.sum()),
                median_bins_covered=float(np.median(bins)),
                min_bins_covered=int(bins[worst]),
                worst_star=str(ids[sel][worst]),
                max_largest_gap=float(np.max(coverage.largest_gap[sel])),
                n_rising_branch_sampled=int(coverage.rising_branch_sampled[sel].sum()),
                n_rising_branch_applies=int(coverage.rising_branch_applies[sel].sum()),
                n_minimum_light_sampled=int(coverage.minimum_light_sampled[sel].sum()),
            )
        )
    return tuple(out)


# ---------------------------------------------------------------------------------
# Aliases


def alias_warnings(
    star_ids: Sequence[str],
    period_d: Sequence[float] | np.ndarray,
    max_drift_per_day: float = DEFAULT_MAX_DRIFT_PER_DAY,
) -> tuple[AliasWarning, ...]:
    """Warn for stars whose phase drifts less than ``max_drift_per_day`` cycles a day.

    With nightly visits at roughly the same clock time such a star is seen at nearly
    the same phases every night (periods near 1/n days), so more nights add little
    phase coverage and the one-day aliases f ± n c/d are hard to reject.
    """
    period = np.asarray(period_d, dtype=float)
    drift = phase_drift_per_day(period)
    flagged = np.flatnonzero(np.abs(drift) < max_drift_per_day)
    warnings = []
    for i in flagged:  # only the flagged stars: usually a few
        n = int(np.rint(1.0 / period[i]))
        nights = np.inf if drift[i] == 0 else 1.0 / abs(drift[i])
        sweep = "never" if not np.isfinite(nights) else f"once in {nights:.0f} nights"
        warnings.append(
            AliasWarning(
                star_id=str(star_ids[i]),
                period_d=float(period[i]),
                drift_per_day=float(drift[i]),
                nearest_n=n,
                message=(
                    f"{star_ids[i]}: P = {period[i]:.5f} d is close to 1/{n} d; its phase "
                    f"drifts {drift[i]:+.4f} cycle per day, so nightly visits at the same "
                    f"hour sweep the cycle {sweep} and the 1-day aliases compete"
                ),
            )
        )
    return tuple(warnings)
