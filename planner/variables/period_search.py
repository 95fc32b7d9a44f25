"""Period search: a batched, multi-term Lomb–Scargle periodogram and a coarse-to-fine search.

Pure computation on float arrays (times in days, magnitudes, uncertainties).

The periodogram is the floating-mean ("generalised") Lomb–Scargle of Zechmeister &
Kürster (2009, A&A 496, 577), extended to K Fourier terms as in VanderPlas & Ivezić
(2015, ApJ 812, 18), with astropy's "standard" normalisation: power = 1 − χ²(model) /
χ²(constant).  It is the quantity astropy's ``LombScargle(t, y, dy, nterms=K).power(f)``
returns, computed for many stars at once: every sum the normal equations need is
Σ_t w cos(kθ) or Σ_t w sin(kθ), so with shared times a whole population costs a few
matrix products.  tests/test_recovery.py holds it to astropy's LombScargle to 1e-8.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

TWO_PI = 2.0 * np.pi


@dataclass(frozen=True, eq=False)
class _Prepared:
    t: np.ndarray  # (n_times,) shared or (n_stars, n_times), centred, NaN → 0
    w: np.ndarray  # (n_stars, n_times) weights, each row summing to 1 (0 = unused)
    wy: np.ndarray  # w × (y − weighted mean)
    yy: np.ndarray  # (n_stars,) weighted variance of y
    n_valid: np.ndarray


# Per-star times that differ by less than this (0.86 s; e.g. the heliocentric dates of
# stars a few arcminutes apart) are searched as one shared set: the phase error is
# below 5e-5 cycle at P ≥ 0.2 d, and the shared path is several times faster.
SHARED_TIMES_TOLERANCE_D = 1e-5


def _prepare(times_d, mags, sigma_mag) -> _Prepared:
    y = np.atleast_2d(np.asarray(mags, dtype=float))
    t = np.asarray(times_d, dtype=float)
    if t.ndim == 2 and np.all(np.isfinite(t)) and np.max(np.ptp(t, axis=0)) < SHARED_TIMES_TOLERANCE_D:
        t = t.mean(axis=0)
    dy = np.asarray(sigma_mag, dtype=float)
    dy = dy[:, np.newaxis] if dy.ndim == 1 else dy
    t2 = t if t.ndim == 2 else np.broadcast_to(t, y.shape)
    dy2 = np.broadcast_to(dy, y.shape)
    valid = np.isfinite(y) & np.isfinite(t2) & np.isfinite(dy2) & (dy2 > 0)
    w = np.where(valid, 1.0 / np.where(valid, dy2, 1.0) ** 2, 0.0)
    wsum = w.sum(axis=1, keepdims=True)
    w = w / np.where(wsum > 0, wsum, 1.0)
    y0 = np.where(valid, y, 0.0)
    yc = np.where(valid, y0 - np.sum(w * y0, axis=1, keepdims=True), 0.0)
    if t.ndim == 2:  # per-star times: centre each row on its weighted mean
        t0 = np.where(valid, t2, 0.0)
        tc = np.where(valid, t0 - np.sum(w * t0, axis=1, keepdims=True), 0.0)
    else:  # shared times: one centre keeps the trig tables shared between stars
        finite = np.isfinite(t)
        tc = np.where(finite, t - np.mean(t[finite]) if finite.any() else 0.0, 0.0)
    return _Prepared(tc, w, w * yc, np.sum(w * yc**2, axis=1), valid.sum(axis=1))


def _weighted_sums(weights: np.ndarray, table: np.ndarray) -> np.ndarray:
    """Σ_t weights[s, t] table[..., f, t] → (n_stars, n_freq)."""
    if table.ndim == 2:  # (F, T) shared by all stars: one matrix product
        return weights @ table.T
    return np.einsum("st,sft->sf", weights, table)


def _power_block(prep: _Prepared, rows: slice | np.ndarray, freq: np.ndarray, nterms: int):
    """Standard-normalised power for the stars ``rows`` at ``freq`` (F,) or (S, F)."""
    w, wy = prep.w[rows], prep.wy[rows]
    t = prep.t if prep.t.ndim == 1 else prep.t[rows]
    if freq.ndim == 1 and t.ndim == 1:
        theta = TWO_PI * freq[:, None] * t[None, :]
    elif t.ndim == 1:
        theta = TWO_PI * freq[:, :, None] * t[None, None, :]
    else:
        f3 = freq[None, :, None] if freq.ndim == 1 else freq[:, :, None]
        theta = TWO_PI * f3 * t[:, None, :]
    c1, s1 = np.cos(theta), np.sin(theta)
    ck, sk, ck_prev, sk_prev = c1, s1, np.ones_like(c1), np.zeros_like(s1)
    C, S, YC, YS = {0: 1.0}, {0: 0.0}, {}, {}
    for k in range(1, 2 * nterms + 1):
        if k > 1:  # Chebyshev recurrences: cos/sin of kθ without more trig calls
            ck, ck_prev = 2.0 * c1 * ck - ck_prev, ck
            sk, sk_prev = 2.0 * c1 * sk - sk_prev, sk
        C[k], S[k] = _weighted_sums(w, ck), _weighted_sums(w, sk)
        if k <= nterms:
            YC[k], YS[k] = _weighted_sums(wy, ck), _weighted_sums(wy, sk)
    yy = prep.yy[rows][:, None]
    if nterms == 1:  # closed form (Zechmeister & Kürster 2009, eqs. 4–14)
        cc = 0.5 * (1.0 + C[2]) - C[1] ** 2
        ss = 0.5 * (1.0 - C[2]) - S[1] ** 2
        cs = 0.5 * S[2] - C[1] * S[1]
        num = ss * YC[1] ** 2 + cc * YS[1] ** 2 - 2.0 * cs * YC[1] * YS[1]
        with np.errstate(invalid="ignore", divide="ignore"):
            return num / (yy * (cc * ss - cs**2))
    # Normal equations for the basis [1, cos θ, sin θ, ..., cos Kθ, sin Kθ] written
    # with product-to-sum identities, so only Σw cos kθ, Σw sin kθ (k ≤ 2K) are needed.
    n = 2 * nterms + 1
    shape = C[1].shape
    N = np.empty(shape + (n, n))
    b = np.zeros(shape + (n,))
    N[..., 0, 0] = 1.0

    def sgn_s(m):  # S_{-m} = −S_m
        return S[m] if m >= 0 else -S[-m]

    for a in range(1, nterms + 1):
        ia, ja = 2 * a - 1, 2 * a
        N[..., 0, ia] = N[..., ia, 0] = C[a]
        N[..., 0, ja] = N[..., ja, 0] = S[a]
        b[..., ia], b[..., ja] = YC[a], YS[a]
        for c in range(1, nterms + 1):
            ic, jc = 2 * c - 1, 2 * c
            N[..., ia, ic] = 0.5 * (C[abs(a - c)] + C[a + c])
            N[..., ja, jc] = 0.5 * (C[abs(a - c)] - C[a + c])
            N[..., ia, jc] = N[..., jc, ia] = 0.5 * (S[a + c] - sgn_s(a - c))
    # A whisper of ridge keeps stars with too few points from making the batch singular.
    N[..., np.arange(n), np.arange(n)] += 1e-12
    x = np.linalg.solve(N, b[..., None])[..., 0]
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.sum(b * x, axis=-1) / yy


def _power(prep: _Prepared, rows: np.ndarray, freq: np.ndarray, nterms: int, max_elements=2_000_000):
    """Power for ``rows`` in blocks of stars × frequencies that keep the trig tables and the
    sums near ``max_elements`` each: a ten-year baseline has 10⁵ frequencies × 10⁴ times,
    which as one table is 10⁹ values (12 GiB once the recurrences run)."""
    n_times = prep.w.shape[1]
    n_freq = freq.shape[-1]
    shared = freq.ndim == 1 and prep.t.ndim == 1
    # Frequencies per block: the (F, T) table, and with shared times the (S, F) sums, bounded.
    f_step = max(1, max_elements // max(n_times, len(rows) if shared else 1, 1))
    per_star = 1 if shared else min(f_step, n_freq) * n_times
    step = max(1, len(rows)) if shared else max(1, max_elements // per_star)
    out = np.empty((len(rows), n_freq))
    for start in range(0, len(rows), step):  # chunks of stars, not single stars
        sel = rows[start : start + step]
        for f0 in range(0, n_freq, f_step):
            f = freq[f0 : f0 + f_step] if freq.ndim == 1 else freq[start : start + step, f0 : f0 + f_step]
            out[start : start + step, f0 : f0 + f_step] = _power_block(prep, sel, f, nterms)
    too_few = prep.n_valid[rows] < 2 * nterms + 2
    out[too_few] = np.nan
    return out


def lomb_scargle_power(times_d, mags, sigma_mag, frequency, nterms: int = 1) -> np.ndarray:
    """Floating-mean Lomb–Scargle power, astropy's "standard" normalisation.

    Parameters
    ----------
    times_d : ndarray, (n_times,) shared or (n_stars, n_times)
    mags : ndarray, (n_stars, n_times); NaN marks a missing point
    sigma_mag : scalar, (n_stars,) or (n_stars, n_times)
    frequency : ndarray, (n_freq,) shared or (n_stars, n_freq), cycles per day
    nterms : int
        Number of Fourier terms of the model.

    Returns
    -------
    ndarray, (n_stars, n_freq)
        1 − χ²(model)/χ²(constant); NaN for stars with too few points.
    """
    prep = _prepare(times_d, mags, sigma_mag)
    freq = np.asarray(frequency, dtype=float)
    return _power(prep, np.arange(prep.w.shape[0]), freq, int(nterms))


# ---------------------------------------------------------------------------------
# Period search


@dataclass(frozen=True, eq=False)
class PeriodSearch:
    period_d: np.ndarray  # best period per star (NaN: too few points)
    power: np.ndarray
    coarse_step_per_d: float  # coarse grid step, cycles per day
    n_coarse: int


def coarse_frequency_step(baseline_d: float, oversample: float = 5.0) -> float:
    """Grid step 1/(oversample · baseline) cycles per day.

    A periodogram peak is about 1/baseline wide; sampling it with ``oversample``
    points per width (5–10 is VanderPlas 2018, ApJS 236, 16, §7.1) cannot step over it.
    """
    return 1.0 / (oversample * max(baseline_d, 1e-3))


def coarse_search_terms(times_d, n_stars: int, min_period_d: float = 0.2, max_period_d: float = 1.0,
                        oversample: float = 5.0) -> float:
    """Stars × coarse frequencies × times: the work of :func:`recover_periods`' first step,
    which dominates its running time (about 4·10⁻⁹ s a term on one core, measured)."""
    t = np.asarray(times_d, dtype=float)
    baseline = float(np.nanmax(t) - np.nanmin(t)) if np.isfinite(t).any() else 1.0
    n_freq = (1.0 / min_period_d - 1.0 / max_period_d) / coarse_frequency_step(baseline, oversample) + 1
    return float(n_stars) * n_freq * t.shape[-1]


def recover_periods(
    times_d,
    mags,
    sigma_mag,
    *,
    nterms: int | Sequence[int] = 2,
    min_period_d: float = 0.2,
    max_period_d: float = 1.0,
    oversample: float = 5.0,
    n_candidates: int = 5,
    precision: float = 1e-5,
) -> PeriodSearch:
    """Best period of each star between ``min_period_d`` and ``max_period_d``.

    1. Single-term power on a grid of step :func:`coarse_frequency_step` (baseline from
       the times).
    2. The ``n_candidates`` highest local peaks per star are re-scored with the
       ``nterms``-term model on ±1 coarse step around each (step/4 spacing).
    3. The best is zoomed by factors of 4 until the step is below ``precision`` × f,
       100 times finer than the 1e-3 recovery tolerance.

    ``nterms`` may be given per star (planner.recovery.nterms_for_types: 4 for RRab,
    2 for RRc); it is lowered for stars with too few points to fit that many terms.
    Candidates come from the single-term periodogram, which has no peak at half the
    true frequency, so a many-term model cannot wander to the subharmonic.
    """
    prep = _prepare(times_d, mags, sigma_mag)
    n_stars = prep.w.shape[0]
    t = np.asarray(times_d, dtype=float)
    baseline = float(np.nanmax(t) - np.nanmin(t)) if np.isfinite(t).any() else 1.0
    f_lo, f_hi = 1.0 / max_period_d, 1.0 / min_period_d
    step = coarse_frequency_step(baseline, oversample)
    coarse = np.arange(f_lo, f_hi + 0.5 * step, step)
    rows = np.arange(n_stars)
    p1 = _power(prep, rows, coarse, 1)

    # Local maxima of the coarse periodogram, the highest n_candidates per star.
    p = np.where(np.isfinite(p1), p1, -np.inf)
    padded = np.pad(p, ((0, 0), (1, 1)), constant_values=-np.inf)
    is_peak = (p >= padded[:, :-2]) & (p >= padded[:, 2:])
    score = np.where(is_peak, p, -np.inf)
    k = min(n_candidates, coarse.size)
    top = np.argpartition(-score, k - 1, axis=1)[:, :k]
    candidates = coarse[top]  # (n_stars, k)

    terms = np.broadcast_to(np.asarray(nterms, dtype=int), (n_stars,))
    # Never more terms than the points support (2K + 1 parameters, one point to spare).
    terms = np.maximum(1, np.minimum(terms, (prep.n_valid - 2) // 2))
    offsets = np.arange(-4, 5)
    best_f = np.empty(n_stars)
    best_p = np.empty(n_stars)
    def best_on(grid, sel, nt):  # the highest point of each star's row of the grid
        grid = np.clip(grid, f_lo, f_hi)
        pw = _power(prep, sel, grid, int(nt))
        pick = np.argmax(np.where(np.isfinite(pw), pw, -np.inf), axis=1)
        rows_ = np.arange(len(sel))
        return grid[rows_, pick], pw[rows_, pick]

    for nt in np.unique(terms):  # a loop over model orders (a few), not over stars
        sel = np.flatnonzero(terms == nt)
        delta = step / 4.0
        f_sel, p_sel = best_on((candidates[sel][:, :, None] + delta * offsets).reshape(len(sel), -1), sel, nt)
        while delta > precision * f_lo:
            delta /= 4.0
            f_sel, p_sel = best_on(f_sel[:, None] + delta * offsets, sel, nt)
        best_f[sel], best_p[sel] = f_sel, p_sel
    period = np.where(np.isfinite(best_p), 1.0 / best_f, np.nan)
    return PeriodSearch(period, best_p, step, int(coarse.size))
