"""Benchmark: the vectorised exposure core against a plain per-element Python baseline.

Run:  python tests/benchmarks/bench_exposure.py [N]

Evaluates N (default 10⁶) combinations of magnitude × airmass × seeing × Moon
(illumination, separation, altitude) with :func:`planner.exposure.exposure_grid`, then a
plain per-element loop (the ``math`` module, written independently below) on a sample of
them, checks the two agree, and prints the per-element speed ratio on the LAST line.
The target is 10⁶ combinations in under 1 s.
"""

from __future__ import annotations

import math
import sys
import time

import numpy as np

from planner.inputs.sites import resolve_site
from planner.light.exposure import exposure_grid

BASELINE_SAMPLE = 20_000


def plain_exposure(site, band_photons, magnitude, snr, airmass, seeing, illum, sep, moon_alt):
    """One exposure plan, element by element: K&S sky, CCD equation, saturation, frames (unrounded)."""
    f = site.filters["V"]
    k = site.sky.extinction_mag_per_airmass["V"]
    cam = site.camera
    e0 = band_photons * 890.0 * site.telescope.collecting_area_m2 * 1e4 * f.throughput
    # sky: K&S 1991 dark sky off the zenith plus moonlight (V)
    x = 1.0 / math.sqrt(1.0 - 0.96 * (1.0 - 1.0 / airmass**2))
    dark = 10 ** (-0.4 * (site.sky.dark_mag_arcsec2["V"] + k * (x - 1.0))) * x
    moon = 0.0
    if moon_alt > 0.0:
        alpha = math.degrees(math.acos(min(1.0, max(-1.0, 2.0 * illum - 1.0))))
        istar = 10 ** (-0.4 * (3.84 + 0.026 * alpha + 4e-9 * alpha**4))
        mie = 10 ** (6.15 - sep / 40.0) if sep >= 10.0 else 6.2e7 / max(sep, 1e-6) ** 2
        fr = 10**5.36 * (1.06 + math.cos(math.radians(sep)) ** 2) + mie
        xm = 1.0 / math.sqrt(1.0 - 0.96 * math.cos(math.radians(moon_alt)) ** 2)
        moon = fr * istar * 10 ** (-0.4 * k * xm) * (1.0 - 10 ** (-0.4 * k * x)) / (34.08 * math.exp(20.7233))
    mu = -2.5 * math.log10(dark + moon)
    p = cam.pixel_scale_arcsec
    sky = e0 * 10 ** (-0.4 * mu) * p * p
    star = e0 * 10 ** (-0.4 * (magnitude + k * airmass))
    r = max(0.673 * seeing, p)
    n_pix = math.pi * (r / p) ** 2
    s = star * (1.0 - 2.0 ** (-4.0 * (r / seeing) ** 2))
    b = n_pix * (sky + cam.dark_e_per_s)
    rn = n_pix * (cam.read_noise_e**2 + (cam.gain_e_per_adu * 0.289) ** 2)
    sigma = seeing / p / (2.0 * math.sqrt(2.0 * math.log(2.0)))
    peak = math.erf(1.0 / (2.0 * math.sqrt(2.0) * sigma)) ** 2
    limit = max(cam.linearity_limit_e / (star * peak + sky + cam.dark_e_per_s), cam.min_exposure_s)

    def snr1(t):
        return s * t / math.sqrt(s * t + b * t + rn)

    def time_for(goal):
        q = goal * goal
        c = q * (s + b)
        return (c + math.sqrt(c * c + 4.0 * s * s * q * rn)) / (2.0 * s * s)

    n = max(math.ceil((snr / snr1(limit)) ** 2 - 1e-9), 1)
    frame = max(time_for(snr / math.sqrt(n)), cam.min_exposure_s)
    return n * frame if n <= 10**6 else math.inf


def main(n_total: int = 10**6) -> float:
    site = resolve_site("demo")
    rng = np.random.default_rng(2024)
    mag = rng.uniform(8.0, 22.0, n_total)
    airmass = rng.uniform(1.0, 2.5, n_total)
    seeing = rng.uniform(0.5, 3.0, n_total)
    illum = rng.uniform(0.0, 1.0, n_total)
    sep = rng.uniform(5.0, 180.0, n_total)
    alt = rng.uniform(-30.0, 80.0, n_total)
    snr = 100.0
    kw = dict(airmass=airmass, seeing_fwhm_arcsec=seeing, moon_illumination=illum, moon_separation_deg=sep,
              moon_altitude_deg=alt, round_frames=False)

    exposure_grid(site, "V", mag[:100], snr, **{k: v[:100] if isinstance(v, np.ndarray) else v for k, v in kw.items()})
    best = math.inf
    for _ in range(3):
        start = time.perf_counter()
        grid = exposure_grid(site, "V", mag, snr, **kw)
        best = min(best, time.perf_counter() - start)
    print(f"vectorised core: {n_total:,} combinations in {best:.3f} s ({best / n_total * 1e9:.0f} ns each)")
    start = time.perf_counter()
    exposure_grid(site, "V", mag, snr, **{**kw, "round_frames": True})
    print(f"  with frame times rounded for observers: {time.perf_counter() - start:.3f} s")

    photons = 363.1e-11 * 0.545e-4 / (6.62607015e-27 * 2.99792458e10)  # Bessell et al. 1998, V
    m = min(BASELINE_SAMPLE, n_total)
    start = time.perf_counter()
    plain = [plain_exposure(site, photons, mag[i], snr, airmass[i], seeing[i], illum[i], sep[i], alt[i])
             for i in range(m)]
    loop = time.perf_counter() - start
    print(f"plain Python loop: {m:,} combinations in {loop:.3f} s ({loop / m * 1e9:.0f} ns each)")
    if not np.allclose(grid.exposure_s[:m], plain, rtol=1e-9):
        bad = int(np.argmax(~np.isclose(grid.exposure_s[:m], plain, rtol=1e-9)))
        raise SystemExit(f"disagreement at element {bad}: {grid.exposure_s[bad]} vs {plain[bad]}")
    print("results agree (rtol 1e-9)" + ("; target met: under 1 s" if best < 1.0 and n_total >= 10**6 else ""))
    ratio = (loop / m) / (best / n_total)
    print(f"speed ratio (per element, baseline / vectorised): {ratio:.0f}")
    return ratio


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 10**6)
