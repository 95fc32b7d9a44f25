"""The CCD kernels: the CCD equation, the PSF's aperture and peak pixel, frame rounding.

Pure array functions of counts and sizes (no site, no filter); the model and its
sources are in :mod:`planner.light.exposure`, which builds rates from a site
profile and plans frames with these.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from planner.model.site import DEFAULT_MOFFAT_BETA, DEFAULT_PSF

OPTIMAL_RADIUS_FWHM = 0.673  # maximises f(r)/r for a Gaussian: r = 1.585 σ
DIGITISATION_NOISE_ADU = 0.289  # 1/√12
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))


@dataclass(frozen=True)
class Psf:
    """A circular point-spread function's shape: ``"gaussian"`` or ``"moffat"`` with β > 1."""

    kind: str = DEFAULT_PSF
    beta: float = DEFAULT_MOFFAT_BETA  # Moffat only

    def describe(self) -> str:
        return f"Moffat, beta = {self.beta:g}" if self.kind == "moffat" else "Gaussian"


GAUSSIAN = Psf("gaussian")


def moffat_alpha(fwhm, beta):
    """Moffat core width α for a FWHM: FWHM = 2 α √(2^(1/β) − 1) (Moffat 1969)."""
    return np.asarray(fwhm, dtype=float) / (2.0 * np.sqrt(2.0 ** (1.0 / beta) - 1.0))


def enclosed_fraction(radius, fwhm, psf: Psf = GAUSSIAN):
    """Fraction of a circular PSF's light within ``radius``.

    Gaussian: 1 − 2^(−4 (r/FWHM)²).  Moffat, I ∝ [1 + (r/α)²]^(−β):
    1 − [1 + (r/α)²]^(1−β) (its integral in closed form).
    """
    r = np.asarray(radius, dtype=float)
    if psf.kind == "moffat":
        return 1.0 - (1.0 + (r / moffat_alpha(fwhm, psf.beta)) ** 2) ** (1.0 - psf.beta)
    return 1.0 - 2.0 ** (-4.0 * (r / fwhm) ** 2)


def optimal_radius_fwhm(psf: Psf = GAUSSIAN) -> float:
    """The background-limited best aperture radius in FWHM: the r maximising f(r)/r.

    For the Moffat profile, with u = (r/α)², the optimum solves
    1 − (1 + u)^(1−β) = 2 (β − 1) u (1 + u)^(−β) (d/dr [f(r)/r] = 0).
    """
    if psf.kind != "moffat":
        return OPTIMAL_RADIUS_FWHM
    if psf.beta == DEFAULT_MOFFAT_BETA:
        return _DEFAULT_MOFFAT_OPTIMUM  # the same root, found once (every S/N asks for it)
    return _moffat_optimum(psf.beta)


def _moffat_optimum(b: float) -> float:
    u = _bisect_root(lambda u: 1.0 - (1.0 + u) ** (1.0 - b) - 2.0 * (b - 1.0) * u * (1.0 + u) ** (-b), 1e-9, 1e6)
    return float(math.sqrt(u) * moffat_alpha(1.0, b))


def _bisect_root(f, lo: float, hi: float) -> float:
    """The root of ``f`` in [lo, hi] (signs differ at the ends), bisected to the last bit
    (about 75 halvings here): as exact as scipy's brentq at xtol 1e-14, without scipy's
    import (0.7 s) in every exposure calculation."""
    f_lo = f(lo)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if mid in (lo, hi):
            break
        f_mid = f(mid)
        if f_mid == 0.0:
            return mid
        if (f_mid < 0.0) == (f_lo < 0.0):
            lo, f_lo = mid, f_mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


_DEFAULT_MOFFAT_OPTIMUM = _moffat_optimum(DEFAULT_MOFFAT_BETA)


@functools.cache
def _pixel_nodes() -> tuple[np.ndarray, np.ndarray]:
    """Squared radii and weights of the quadrature over one pixel (made on first use:
    numpy.polynomial's import and the nodes cost 3 ms, a tenth of a night plan's start).

    Gauss-Legendre nodes: 40 per axis integrate the Moffat peak pixel to better than
    1e-6 for FWHM ≥ 0.5 px (checked against scipy's dblquad in the tests).  The
    integrand depends on x² + y² only: the nodes with x ≥ y > 0 (one eighth of the grid,
    the diagonal once) carry it, each weighted by how many of the 40 × 40 it stands for.
    """
    nodes, weights = np.polynomial.legendre.leggauss(40)
    half = nodes > 0
    i, j = np.triu_indices(int(np.sum(half)))
    r2 = (0.5 * nodes[half][i]) ** 2 + (0.5 * nodes[half][j]) ** 2  # the pixel spans -½..½
    return r2, 0.25 * weights[half][i] * weights[half][j] * np.where(i == j, 4.0, 8.0)


def peak_pixel_fraction(fwhm_pixels, psf: Psf = GAUSSIAN):
    """Fraction of a star's light in the pixel it is centred on (the worst case for saturation).

    Gaussian: [erf(1 / (2√2 σ))]².  Moffat: its normalised profile
    (β − 1) / (π α²) [1 + (r/α)²]^(−β) integrated over the pixel by Gauss-Legendre.
    """
    fwhm = np.asarray(fwhm_pixels, dtype=float)
    if psf.kind == "moffat":
        alpha2 = moffat_alpha(fwhm, psf.beta)[..., None] ** 2
        r2, w = _pixel_nodes()
        # (fwhm…, nodes) worked in place: the same operations on the same numbers, without the
        # four temporaries of that size (a slot table asks for hundreds of FWHM at once)
        profile = r2 / alpha2
        profile += 1.0
        np.power(profile, -psf.beta, out=profile)
        profile *= (psf.beta - 1.0) / (np.pi * alpha2)
        profile *= w
        return np.sum(profile, axis=-1)
    from scipy.special import erf

    sigma = fwhm / FWHM_PER_SIGMA
    return erf(1.0 / (2.0 * math.sqrt(2.0) * sigma)) ** 2


def ccd_snr(source_e, sky_e_per_pixel, dark_e_per_pixel, read_noise_e, n_pix,
            gain_e_per_adu=1.0, sky_annulus_pixels=None):
    """The CCD equation for one frame (all counts in electrons over the frame)."""
    n_pix = np.asarray(n_pix, dtype=float)
    weight = n_pix if sky_annulus_pixels is None else n_pix * (1.0 + n_pix / sky_annulus_pixels)
    noise2 = (source_e + weight * (sky_e_per_pixel + dark_e_per_pixel + read_noise_e**2
                                   + (gain_e_per_adu * DIGITISATION_NOISE_ADU) ** 2))
    return source_e / np.sqrt(noise2)


def time_for_snr(snr, source, background, per_frame):
    """Exposure t with S t / sqrt(S t + B t + R) = snr: the positive root of a quadratic.

    ``background`` (B) and ``per_frame`` (R) already carry the aperture's pixel weight.
    """
    q = snr * snr
    b = q * (source + background)
    return (b + np.sqrt(b * b + 4.0 * source * source * q * per_frame)) / (2.0 * source * source)


_STEP_EDGES_S = np.array([1.0, 10.0, 100.0, 1000.0])
_STEPS_S = np.array([0.01, 0.1, 1.0, 5.0, 10.0])


def _step(t):
    return _STEPS_S[np.searchsorted(_STEP_EDGES_S, t, side="right")]


def round_up_frame(t):
    """Round a frame time up to the steps observers use (see :mod:`planner.light.exposure`)."""
    t = np.asarray(t, dtype=float)
    s = _step(t)
    return np.round(np.ceil(t / s - 1e-9) * s, 2)


def round_down_frame(t):
    """Round a frame time down to the same steps."""
    t = np.asarray(t, dtype=float)
    s = _step(t)
    return np.round(np.floor(t / s + 1e-9) * s, 2)
