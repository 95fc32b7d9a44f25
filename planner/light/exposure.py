"""Exposure times: the CCD equation, the aperture, saturation and frames.

Pure computation (no files, no printing, no clock), vectorised: magnitude, airmass,
seeing and the Moon's geometry broadcast against each other, so a scheduler can
evaluate whole grids in one call (:func:`exposure_grid`).

The model
---------
* CCD equation (Howell, *Handbook of CCD Astronomy*, ch. 4; Merline & Howell 1995)::

      S/N = N* / sqrt(N* + n_pix (1 + n_pix/n_B) (N_S + N_D + N_R² + G² σ_f²))

  with σ_f = 0.289 ADU (1/√12, the digitisation noise) and n_B the sky-annulus pixels
  (``None``: the sky level is taken as known exactly, the n_pix/n_B term dropped).
* PSF of the given FWHM (the seeing on the frame; not scaled with airmass), of the
  site's shape (``[sky] psf``): a Moffat profile [1 + (r/α)²]^(−β) by default, with
  β = 4.765 (Trujillo et al. 2001, the turbulence value) unless the site gives its own,
  or a Gaussian.  Aperture radius by default the background-limited optimum for that
  profile (the r maximising f(r)/r): 0.709 FWHM enclosing 64 % for the default Moffat,
  0.673 FWHM enclosing 71.5 % for a Gaussian; never less than one pixel.  (For bright,
  source-limited stars a larger aperture does better, by at most 1/√f in S/N.)
* Saturation: the peak pixel of the level's brightest star, centred on a pixel (the
  worst case), holds the same profile's light over that pixel ([erf(p / (2√2 σ))]² for
  a Gaussian, a quadrature for the Moffat), on top of sky and dark; the frame must stay
  below the camera's linearity limit.  When the S/N needs longer,
  the exposure is split into frames, each below the limit (and never shorter than the
  camera's shortest exposure); n frames reach √n times the S/N of one.
* Frame times are rounded up to 0.01 s below 1 s, 0.1 s below 10 s, 1 s below 100 s,
  5 s below 1000 s and 10 s above (rounded down instead when that would pass the
  saturation limit).  ``round_frames=False`` gives the exact values.
* Sky and photon rates: :mod:`planner.light.photometry` (twilight is not modelled).

The kernels (CCD equation, aperture, peak pixel, rounding) are in
:mod:`planner.light.ccd`; the campaign's exposure table in
:mod:`planner.light.exposure_table`.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field, replace

import numpy as np

from planner.errors import InputError
from planner.light.ccd import (
    DIGITISATION_NOISE_ADU,
    Psf,
    enclosed_fraction,
    optimal_radius_fwhm,
    peak_pixel_fraction,
    round_down_frame,
    round_up_frame,
    time_for_snr,
)
from planner.light.photometry import (
    LevelError,
    ScienceLevel,
    UnknownFilterError,
    band_info,
    check_conditions,
    electron_rate,
    moon_phase_angle_deg,
    sky_brightness_mag_arcsec2,
    zero_mag_electron_rate,
)


class SnrGoalError(InputError):
    """An S/N goal or exposure time that is not a positive number."""


DEFAULT_AIRMASS = 1.2
DEFAULT_PHASE_SMEAR_FRACTION = 0.01  # frames above 1 % of the shortest period are flagged
# Krisciunas & Schaefer 1991 (PASP 103, 1033) leave out the Moon's opposition surge
# within about 7 deg of full phase (up to about 0.3 mag, from memory): stated, not modelled.
OPPOSITION_PHASE_ANGLE_DEG = 7.0
MAX_FRAMES = 10**6  # beyond this the goal counts as out of reach (sky or Moon too bright)


@dataclass(frozen=True)
class BandSetup:
    """What the CCD equation needs about one filter at one site."""

    filter_name: str
    band: str
    zero_mag_rate_e_per_s: float  # above the atmosphere, whole telescope
    rate_from: str  # "zero point" or "throughput"
    throughput: float | None
    zero_point_mag: float | None
    collecting_area_m2: float
    extinction_mag_per_airmass: float
    dark_sky_mag_arcsec2: float
    sun_minus_v_mag: float
    pixel_scale_arcsec: float
    read_noise_e: float
    gain_e_per_adu: float
    dark_e_per_s: float
    linearity_limit_e: float
    min_exposure_s: float
    readout_s: float
    typical_seeing_arcsec: float
    max_airmass: float
    min_moon_separation_deg: float
    psf: Psf = Psf()


def band_setup(site, filter_name: str) -> BandSetup:
    """Collect the numbers for ``filter_name`` from a :class:`planner.sites.SiteProfile`."""
    if filter_name not in site.filters:
        close = difflib.get_close_matches(filter_name, list(site.filters), n=1, cutoff=0.5)
        raise UnknownFilterError(
            f"unknown filter {filter_name!r}" + (f"; did you mean {close[0]}?" if close else "")
            + f" (this site's filters: {', '.join(site.filters)})", site.source)
    f = site.filters[filter_name]
    band = band_info(f.band)
    area = site.telescope.collecting_area_m2
    rate = zero_mag_electron_rate(f.band, collecting_area_m2=area, throughput=f.throughput,
                                  bandwidth_angstrom=f.bandwidth_angstrom, zero_point_mag=f.zero_point_mag)
    cam = site.camera
    return BandSetup(
        filter_name, f.band, rate, "zero point" if f.zero_point_mag is not None else "throughput",
        f.throughput, f.zero_point_mag, area, site.sky.extinction_mag_per_airmass[filter_name],
        site.sky.dark_mag_arcsec2[filter_name], band.sun_minus_v_mag, cam.pixel_scale_arcsec,
        cam.read_noise_e, cam.gain_e_per_adu, cam.dark_e_per_s, cam.linearity_limit_e,
        cam.min_exposure_s, cam.readout_s, site.sky.typical_seeing_arcsec,
        site.limits.max_airmass, site.limits.min_moon_separation_deg,
        Psf(site.sky.psf, site.sky.moffat_beta))


@dataclass(frozen=True)
class _Rates:
    sky_mag_arcsec2: np.ndarray
    source_e_per_s: np.ndarray  # whole star, after the atmosphere
    in_aperture_e_per_s: np.ndarray
    sky_e_per_s_per_pixel: np.ndarray
    cluster_e_per_s_per_pixel: np.ndarray  # the cluster's unresolved light, 0 if not asked for
    radius_arcsec: np.ndarray
    n_pix: np.ndarray
    enclosed: np.ndarray
    weight: np.ndarray  # n_pix (1 + n_pix/n_B)
    background_e_per_s: np.ndarray  # weight × (sky + dark)
    per_frame_e2: np.ndarray  # weight × (RN² + (G σ_f)²)


def _rates(s: BandSetup, magnitude, airmass, seeing, illumination, separation, moon_alt,
           radius_fwhm, sky_annulus_pixels, cluster_sb=None) -> _Rates:
    seeing = s.typical_seeing_arcsec if seeing is None else seeing
    check_conditions(airmass, seeing, illumination, separation, moon_alt)
    m = np.asarray(magnitude, dtype=float)
    if not (math.isfinite(m) if m.ndim == 0 else np.all(np.isfinite(m))):
        raise LevelError("magnitudes must be finite numbers")
    sky_mag = sky_brightness_mag_arcsec2(s.dark_sky_mag_arcsec2, s.extinction_mag_per_airmass, airmass,
                                         illumination, separation, moon_alt, s.sun_minus_v_mag)
    p = s.pixel_scale_arcsec
    sky_pix = s.zero_mag_rate_e_per_s * 10.0 ** (-0.4 * sky_mag) * p * p
    source = electron_rate(m, s.zero_mag_rate_e_per_s, s.extinction_mag_per_airmass, airmass)
    # the cluster's light is above the atmosphere, dimmed like the stars' (infinite: none)
    cluster_pix = (0.0 * sky_pix if cluster_sb is None else
                   electron_rate(cluster_sb, s.zero_mag_rate_e_per_s, s.extinction_mag_per_airmass, airmass) * p * p)
    seeing = np.asarray(seeing, dtype=float)
    radius_fwhm = optimal_radius_fwhm(s.psf) if radius_fwhm is None else radius_fwhm
    radius = np.maximum(radius_fwhm * seeing, p)
    enclosed = enclosed_fraction(radius, seeing, s.psf)
    n_pix = np.pi * (radius / p) ** 2
    weight = n_pix if sky_annulus_pixels is None else n_pix * (1.0 + n_pix / sky_annulus_pixels)
    per_frame = weight * (s.read_noise_e**2 + (s.gain_e_per_adu * DIGITISATION_NOISE_ADU) ** 2)
    return _Rates(sky_mag, source, source * enclosed, sky_pix, cluster_pix, radius, n_pix, enclosed, weight,
                  weight * (sky_pix + cluster_pix + s.dark_e_per_s), per_frame)


def _snr_frame(r: _Rates, t):
    signal = r.in_aperture_e_per_s * t
    return signal / np.sqrt(signal + r.background_e_per_s * t + r.per_frame_e2)


def _check_positive(value, label):
    if isinstance(value, (int, float)):  # a plain number: the same test without arrays
        if not (math.isfinite(value) and value > 0):
            raise SnrGoalError(f"{label} must be a positive number (got {float(value):g})")
        return
    v = np.asarray(value, dtype=float)
    good = np.isfinite(v) & (v > 0)
    if not np.all(good):
        bad = v[~good].flat[0] if v.ndim else float(v)
        raise SnrGoalError(f"{label} must be a positive number (got {bad:g})")


def _scalar_or_array(x):
    x = np.asarray(x)
    return x.item() if x.ndim == 0 else x


def snr_of_exposure(site, filter_name, magnitude, exposure_s, *, airmass=DEFAULT_AIRMASS,
                    seeing_fwhm_arcsec=None, moon_illumination=0.0, moon_separation_deg=90.0,
                    moon_altitude_deg=-90.0, aperture_radius_fwhm=None,
                    sky_annulus_pixels=None, cluster_sb_mag_arcsec2=None):
    """S/N of one frame of ``exposure_s`` on a star of ``magnitude`` (saturation ignored).

    All of magnitude, exposure, airmass, seeing and the Moon's geometry broadcast;
    a float comes back for scalar input, else an array.  Seeing defaults to the site's
    typical seeing; the Moon defaults to below the horizon.  ``aperture_radius_fwhm``
    defaults to the site PSF's background-limited optimum; ``cluster_sb_mag_arcsec2``
    is unresolved cluster light (above the atmosphere) added to the sky.
    """
    _check_positive(exposure_s, "exposure time (s)")
    r = _rates(band_setup(site, filter_name), magnitude, airmass, seeing_fwhm_arcsec, moon_illumination,
               moon_separation_deg, moon_altitude_deg, aperture_radius_fwhm, sky_annulus_pixels,
               cluster_sb_mag_arcsec2)
    return _scalar_or_array(_snr_frame(r, np.asarray(exposure_s, dtype=float)))


@dataclass(frozen=True)
class ExposureGrid:
    """Exposure plans over broadcast arrays (every field has the broadcast shape)."""

    exposure_s: np.ndarray  # total on the star: frames × frame_s
    frames: np.ndarray
    frame_s: np.ndarray
    snr_reached: np.ndarray
    saturation_s: np.ndarray  # the brightest star's peak pixel reaches the linearity limit
    single_frame_s: np.ndarray  # one unsplit frame for the goal (exact)
    sky_mag_arcsec2: np.ndarray
    source_e_per_s: np.ndarray
    sky_e_per_s_per_pixel: np.ndarray
    cluster_e_per_s_per_pixel: np.ndarray
    aperture_radius_arcsec: np.ndarray
    aperture_pixels: np.ndarray
    enclosed_fraction: np.ndarray
    peak_fraction: np.ndarray
    reachable: np.ndarray  # False: more than MAX_FRAMES frames needed (frames 0, exposure inf)
    split: np.ndarray  # more than one frame because of saturation
    saturated_at_shortest: np.ndarray  # saturates even in the camera's shortest exposure
    lengthened_to_shortest: np.ndarray  # frames raised to the camera's shortest exposure


def _grid(s: BandSetup, magnitude, snr, airmass, seeing, illumination, separation, moon_alt,
          saturation_magnitude, max_frame_s, radius_fwhm, sky_annulus_pixels, round_frames,
          cluster_sb=None) -> ExposureGrid:
    _check_positive(snr, "S/N goal")
    if max_frame_s is not None:
        _check_positive(max_frame_s, "longest frame (s)")
    snr = np.asarray(snr, dtype=float)
    r = _rates(s, magnitude, airmass, seeing, illumination, separation, moon_alt, radius_fwhm, sky_annulus_pixels,
               cluster_sb)
    seeing = s.typical_seeing_arcsec if seeing is None else seeing
    peak = peak_pixel_fraction(np.asarray(seeing, dtype=float) / s.pixel_scale_arcsec, s.psf)
    bright = np.asarray(magnitude if saturation_magnitude is None else saturation_magnitude, dtype=float)
    bright_rate = electron_rate(bright, s.zero_mag_rate_e_per_s, s.extinction_mag_per_airmass, airmass)
    saturation = s.linearity_limit_e / (bright_rate * peak + r.sky_e_per_s_per_pixel + r.cluster_e_per_s_per_pixel
                                        + s.dark_e_per_s)
    limit = saturation if max_frame_s is None else np.minimum(saturation, max_frame_s)
    t_min = s.min_exposure_s
    too_bright = limit < t_min
    limit = np.where(too_bright, t_min, limit)

    def time_for(goal):
        return time_for_snr(goal, r.in_aperture_e_per_s, r.background_e_per_s, r.per_frame_e2)

    def frames_needed(frame):  # smallest n with √n · S/N(frame) ≥ goal
        return np.maximum(np.ceil((snr / _snr_frame(r, frame)) ** 2 - 1e-9), 1.0)

    n = frames_needed(limit)  # 1 wherever one frame below the limit reaches the goal
    exact = time_for(snr / np.sqrt(n))
    frame = np.maximum(exact, t_min)
    if round_frames:
        up = round_up_frame(frame)
        down = round_down_frame(limit)
        frame = np.where(up <= limit, up, np.where(down >= t_min, down, limit))
        # Rounding up only raises the S/N; rounding down to the limit may need a frame more.
        n = np.maximum(n, frames_needed(frame))
    single = time_for(snr)
    shape = np.broadcast_shapes(np.shape(frame), np.shape(n))
    frame, n = np.broadcast_to(frame, shape), np.broadcast_to(n, shape)
    reachable = n <= MAX_FRAMES
    n = np.where(reachable, n, 0.0)
    return ExposureGrid(
        exposure_s=np.where(reachable, n * frame, np.inf), frames=n.astype(np.int64), frame_s=frame,
        snr_reached=np.where(reachable, np.sqrt(n) * _snr_frame(r, frame), np.nan), reachable=reachable,
        saturation_s=np.broadcast_to(saturation, shape),
        single_frame_s=np.broadcast_to(single, shape), sky_mag_arcsec2=np.broadcast_to(r.sky_mag_arcsec2, shape),
        source_e_per_s=np.broadcast_to(r.source_e_per_s, shape),
        sky_e_per_s_per_pixel=np.broadcast_to(r.sky_e_per_s_per_pixel, shape),
        cluster_e_per_s_per_pixel=np.broadcast_to(r.cluster_e_per_s_per_pixel, shape),
        aperture_radius_arcsec=np.broadcast_to(r.radius_arcsec, shape),
        aperture_pixels=np.broadcast_to(r.n_pix, shape), enclosed_fraction=np.broadcast_to(r.enclosed, shape),
        peak_fraction=np.broadcast_to(peak, shape), split=np.broadcast_to(n > 1, shape),
        saturated_at_shortest=np.broadcast_to(too_bright, shape),
        lengthened_to_shortest=np.broadcast_to(exact < t_min, shape))


def exposure_grid(site, filter_name, magnitude, snr, *, airmass=DEFAULT_AIRMASS, seeing_fwhm_arcsec=None,
                  moon_illumination=0.0, moon_separation_deg=90.0, moon_altitude_deg=-90.0,
                  saturation_magnitude=None, max_frame_s=None, aperture_radius_fwhm=None,
                  sky_annulus_pixels=None, round_frames=True, cluster_sb_mag_arcsec2=None) -> ExposureGrid:
    """Frames and frame times reaching ``snr`` on arrays of conditions (all broadcast).

    ``saturation_magnitude`` is the brightest star that must stay below the linearity
    limit (default: the star itself); ``max_frame_s`` caps frames further; the aperture
    and cluster light as in :func:`snr_of_exposure`.
    """
    return _grid(band_setup(site, filter_name), magnitude, snr, airmass, seeing_fwhm_arcsec,
                 moon_illumination, moon_separation_deg, moon_altitude_deg, saturation_magnitude,
                 max_frame_s, aperture_radius_fwhm, sky_annulus_pixels, round_frames, cluster_sb_mag_arcsec2)


def saturation_time_s(site, filter_name, magnitude, **conditions) -> float | np.ndarray:
    """Seconds until the peak pixel of a star of ``magnitude`` reaches the linearity limit."""
    grid = exposure_grid(site, filter_name, magnitude, 1.0, **conditions)
    return _scalar_or_array(grid.saturation_s)


# ------------------------------------------------------------------ one plan

@dataclass(frozen=True)
class ExposureInputs:
    airmass: float
    seeing_fwhm_arcsec: float
    moon_illumination: float
    moon_separation_deg: float
    moon_altitude_deg: float
    extinction_mag_per_airmass: float
    dark_sky_mag_arcsec2: float
    read_noise_e: float
    dark_e_per_s: float
    gain_e_per_adu: float
    pixel_scale_arcsec: float
    collecting_area_m2: float
    throughput: float | None
    zero_point_mag: float | None
    rate_from: str
    linearity_limit_e: float
    min_exposure_s: float
    readout_s: float


@dataclass(frozen=True)
class ExposurePlan:
    """How long to expose, in how many frames, for one star in one filter."""

    filter: str
    band: str
    magnitude: float
    level: str
    target: str | None
    snr_goal: float
    exposure_s: float  # total on the star
    frames: int
    frame_s: float
    snr_reached: float
    saturation_s: float | None  # None if the star never saturates
    saturation_magnitude: float
    single_frame_s: float
    elapsed_s: float  # with readout after every frame
    sky_mag_arcsec2: float
    source_e_per_s: float  # whole star, after the atmosphere
    sky_e_per_s_per_pixel: float
    aperture_radius_arcsec: float
    aperture_pixels: float
    enclosed_fraction: float
    peak_fraction: float
    inputs: ExposureInputs
    warnings: tuple[str, ...] = field(default_factory=tuple)
    psf: str = "Gaussian"  # the profile the aperture and peak pixel assume
    cluster_surface_brightness_mag_arcsec2: float | None = None  # unresolved cluster light, if counted
    cluster_e_per_s_per_pixel: float = 0.0


def exposure_for_snr(site, filter_name: str, magnitude: float, snr: float, *, airmass=DEFAULT_AIRMASS,
                     seeing_fwhm_arcsec=None, moon_illumination=0.0, moon_separation_deg=90.0,
                     moon_altitude_deg=-90.0, saturation_magnitude=None, shortest_period_d=None,
                     phase_smear_fraction=DEFAULT_PHASE_SMEAR_FRACTION, max_frame_s=None,
                     level: str = "user", target: str | None = None, round_frames=True,
                     aperture_radius_fwhm=None, sky_annulus_pixels=None,
                     cluster_sb_mag_arcsec2=None) -> ExposurePlan:
    """The exposure plan for one star (scalar inputs), with warnings an observer should read.

    ``shortest_period_d``: for variables, frames longer than ``phase_smear_fraction``
    of it are flagged (phase smearing).  ``cluster_sb_mag_arcsec2``: the cluster's own
    light at the star's place, added to the sky (see :mod:`planner.light.cluster_light`).
    """
    s = band_setup(site, filter_name)
    seeing = s.typical_seeing_arcsec if seeing_fwhm_arcsec is None else float(seeing_fwhm_arcsec)
    g = _grid(s, float(magnitude), snr, airmass, seeing, moon_illumination, moon_separation_deg,
              moon_altitude_deg, saturation_magnitude, max_frame_s, aperture_radius_fwhm,
              sky_annulus_pixels, round_frames, cluster_sb_mag_arcsec2)
    v = {name: np.asarray(getattr(g, name)).item() for name in g.__dataclass_fields__}
    return _plan(s, v, magnitude, snr, airmass, seeing, moon_illumination, moon_separation_deg, moon_altitude_deg,
                 saturation_magnitude, shortest_period_d, phase_smear_fraction, max_frame_s, level, target,
                 cluster_sb_mag_arcsec2)


def exposure_plans(site, filter_name: str, magnitude, snr, *, airmass, seeing_fwhm_arcsec, moon_illumination,
                   moon_separation_deg, moon_altitude_deg, saturation_magnitude, shortest_period_d,
                   cluster_sb_mag_arcsec2, level, target,
                   phase_smear_fraction=DEFAULT_PHASE_SMEAR_FRACTION, max_frame_s=None) -> list[ExposurePlan]:
    """:func:`exposure_for_snr` for many stars in one filter: every argument a sequence with one
    value per star (None where :func:`exposure_for_snr` takes None), the grid computed once over
    all of them and each plan then put together as :func:`exposure_for_snr` does; ``max_frame_s``
    (one number for all, or None) caps every frame."""
    s = band_setup(site, filter_name)
    seeing = [s.typical_seeing_arcsec if x is None else float(x) for x in seeing_fwhm_arcsec]
    bright = [m if b is None else b for m, b in zip(magnitude, saturation_magnitude)]
    # no cluster light: an infinitely faint surface, 0 e-/s, as exposure_for_snr's None gives
    cluster = [math.inf if c is None else c for c in cluster_sb_mag_arcsec2]
    arrays = [np.asarray(x, dtype=float) for x in (magnitude, snr, airmass, seeing, moon_illumination,
                                                    moon_separation_deg, moon_altitude_deg, bright, cluster)]
    g = _grid(s, arrays[0], arrays[1], *arrays[2:7], arrays[7], max_frame_s, None, None, True, arrays[8])
    columns = {name: np.asarray(getattr(g, name)).tolist() for name in g.__dataclass_fields__}
    plans = []
    for i in range(len(magnitude)):
        v = {name: column[i] for name, column in columns.items()}
        try:
            plans.append(_plan(s, v, magnitude[i], snr[i], airmass[i], seeing[i], moon_illumination[i],
                               moon_separation_deg[i], moon_altitude_deg[i], saturation_magnitude[i],
                               shortest_period_d[i], phase_smear_fraction, max_frame_s, level[i], target[i],
                               cluster_sb_mag_arcsec2[i]))
        except SnrGoalError as exc:
            exc.index = i  # which star: a caller reading them from a file names the row
            raise
    return plans


def _plan(s: BandSetup, v: dict, magnitude, snr, airmass, seeing, moon_illumination, moon_separation_deg,
          moon_altitude_deg, saturation_magnitude, shortest_period_d, phase_smear_fraction, max_frame_s,
          level, target, cluster_sb_mag_arcsec2) -> ExposurePlan:
    """One plan from its grid values ``v`` (plain numbers), with the warnings an observer should read."""
    filter_name = s.filter_name
    if not v["reachable"]:
        raise SnrGoalError(
            f"S/N {snr:g} on {filter_name} = {float(magnitude):.2f} is out of reach here: frames must stay "
            f"below {v['frame_s']:.3g} s (saturation) and would number over {MAX_FRAMES:,}; "
            "a darker sky, the Moon further away or a lower goal would do")
    n, frame = int(v["frames"]), float(v["frame_s"])
    bright = float(magnitude if saturation_magnitude is None else saturation_magnitude)
    warnings: list[str] = []
    if v["saturated_at_shortest"]:
        warnings.append(f"saturates even in the camera's shortest exposure ({s.min_exposure_s:g} s): the peak "
                        f"pixel passes {s.linearity_limit_e:.0f} e- after {v['saturation_s']:.2g} s")
    elif v["split"] and max_frame_s is not None and max_frame_s < v["saturation_s"]:
        warnings.append(f"split into {n} frames of at most {max_frame_s:g} s (the longest frame asked for)")
    elif v["split"]:
        warnings.append(f"split into {n} frames: one {v['single_frame_s']:.3g} s frame would pass the "
                        f"linearity limit ({s.linearity_limit_e:.0f} e-) after {v['saturation_s']:.3g} s")
    if v["lengthened_to_shortest"]:
        warnings.append(f"frames lengthened to the camera's shortest exposure ({s.min_exposure_s:g} s): "
                        f"S/N {v['snr_reached']:.0f} is above the goal")
    if shortest_period_d is not None:
        _check_positive(shortest_period_d, "shortest period (d)")
        smear = phase_smear_fraction * float(shortest_period_d) * 86400.0
        if frame > smear:
            warnings.append(f"phase smearing: {frame:g} s frames are longer than {phase_smear_fraction:.0%} "
                            f"of the shortest period ({shortest_period_d:g} d, {smear:.0f} s)")
    if airmass > s.max_airmass:
        warnings.append(f"airmass {airmass:g} is beyond the site's limit {s.max_airmass:g}")
    if moon_altitude_deg > 0 and float(moon_phase_angle_deg(moon_illumination)) < OPPOSITION_PHASE_ANGLE_DEG:
        warnings.append(f"the Moon is within {OPPOSITION_PHASE_ANGLE_DEG:g} deg of full phase: its opposition "
                        "brightening (up to about 0.3 mag, Krisciunas & Schaefer 1991) is not in the sky model, "
                        "so the sky may be brighter and the times longer")
    if moon_altitude_deg > 0 and moon_illumination > 0 and moon_separation_deg < s.min_moon_separation_deg:
        warnings.append(f"the Moon is {moon_separation_deg:g} deg away, closer than the site's "
                        f"{s.min_moon_separation_deg:g} deg limit")
    inputs = ExposureInputs(float(airmass), seeing, float(moon_illumination), float(moon_separation_deg),
                            float(moon_altitude_deg), s.extinction_mag_per_airmass, s.dark_sky_mag_arcsec2,
                            s.read_noise_e, s.dark_e_per_s, s.gain_e_per_adu, s.pixel_scale_arcsec,
                            s.collecting_area_m2, s.throughput, s.zero_point_mag, s.rate_from,
                            s.linearity_limit_e, s.min_exposure_s, s.readout_s)
    saturation = v["saturation_s"] if math.isfinite(v["saturation_s"]) else None
    return ExposurePlan(
        filter_name, s.band, float(magnitude), level, target, float(snr), v["exposure_s"], n, frame,
        v["snr_reached"], saturation, bright, v["single_frame_s"], n * (frame + s.readout_s),
        v["sky_mag_arcsec2"], v["source_e_per_s"], v["sky_e_per_s_per_pixel"], v["aperture_radius_arcsec"],
        v["aperture_pixels"], v["enclosed_fraction"], v["peak_fraction"], inputs, tuple(warnings),
        s.psf.describe(), None if cluster_sb_mag_arcsec2 is None else float(cluster_sb_mag_arcsec2),
        v["cluster_e_per_s_per_pixel"])


def exposure_for_level(site, filter_name: str, level: ScienceLevel, snr: float, **options) -> ExposurePlan:
    """:func:`exposure_for_snr` for a :class:`~planner.photometry.ScienceLevel`: its
    brightest stars set the saturation limit and its notes join the warnings."""
    plan = exposure_for_snr(site, filter_name, level.magnitude, snr, saturation_magnitude=level.brightest_mag,
                            level=level.level, target=level.target, **options)
    return _with_level_notes(plan, level)


def exposure_plans_for_levels(site, filter_name: str, levels, snr, *, shortest_period_d, **conditions):
    """:func:`exposure_for_level` for many levels in one filter at once (see :func:`exposure_plans`):
    ``levels``, ``snr``, ``shortest_period_d`` and each of ``conditions`` one value per level."""
    plans = exposure_plans(site, filter_name, [lv.magnitude for lv in levels], snr,
                           saturation_magnitude=[lv.brightest_mag for lv in levels],
                           shortest_period_d=shortest_period_d, level=[lv.level for lv in levels],
                           target=[lv.target for lv in levels], **conditions)
    return [_with_level_notes(plan, lv) for plan, lv in zip(plans, levels)]


def _with_level_notes(plan: ExposurePlan, level: ScienceLevel) -> ExposurePlan:
    extra = tuple(level.notes) + (("the level's magnitude is a rule of thumb",) if level.rule_of_thumb else ())
    return replace(plan, warnings=plan.warnings + extra) if extra else plan


__all__ = [
    "BandSetup", "ExposureGrid", "ExposureInputs", "ExposurePlan", "SnrGoalError",
    "band_setup", "exposure_for_level", "exposure_for_snr", "exposure_grid", "exposure_plans",
    "exposure_plans_for_levels",
    "saturation_time_s", "snr_of_exposure",
]
