"""The CCD kernels: the CCD equation, a Gaussian PSF's aperture and peak pixel, frame rounding.

Pure array functions of counts and sizes (no site, no filter); the model and its
sources are in :mod:`planner.light.exposure`, which builds rates from a site
profile and plans frames with these.
"""

from __future__ import annotations

import math

import numpy as np

OPTIMAL_RADIUS_FWHM = 0.673  # maximises f(r)/r for a Gaussian: r = 1.585 σ
DIGITISATION_NOISE_ADU = 0.289  # 1/√12
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))


def enclosed_fraction(radius, fwhm):
    """Fraction of a circular Gaussian's light within ``radius``: 1 − 2^(−4 (r/FWHM)²)."""
    return 1.0 - 2.0 ** (-4.0 * (np.asarray(radius, dtype=float) / fwhm) ** 2)


def peak_pixel_fraction(fwhm_pixels):
    """Fraction of a Gaussian star in the pixel it is centred on: [erf(1 / (2√2 σ))]²."""
    from scipy.special import erf

    sigma = np.asarray(fwhm_pixels, dtype=float) / FWHM_PER_SIGMA
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
