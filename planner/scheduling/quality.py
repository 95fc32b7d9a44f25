"""What the sky gives a visit at each slot: an S/N-equivalent efficiency, and frames sized there.

Efficiency
----------
For background-limited photometry of a point source, S/N² per unit time is
proportional to (flux)² / (sky × seeing²).  Relative to the best the target
reaches tonight, a visit with its middle at airmass X therefore earns

* ``10**(-0.8 k X)`` from extinction (the flux, squared; ``k`` the site's
  extinction for the filter, mag per airmass),
* ``X**(-1.2)`` from seeing growing as X**0.6 (common practice, no source; its
  square),
* ``B_dark / B`` from the sky: B from the Krisciunas & Schaefer (1991) model of
  :func:`planner.light.photometry.sky_brightness_mag_arcsec2` (the dark sky
  brightening off the zenith, and moonlight while the Moon is up),

shutter-weighted over the visit's filters, then divided by its largest value
over the request's usable slots tonight, so the best slot scores 1.  The
efficiency times the time it takes is the time an equally deep visit would
take at the best moment: the planner's value (:mod:`planner.scheduling.night`)
weighs it against the time the visit leaves for the others.

Frames sized where planned
--------------------------
A request with an S/N goal (:attr:`~planner.scheduling.visits.VisitRequest.sized`)
gets its frames from :func:`planner.light.exposure.exposure_grid` at every slot
at once: the slot's airmass, the Moon's illumination, altitude and distance, and
the planned seeing × X**0.6.
"""

from __future__ import annotations

import numpy as np

from planner.light.exposure import band_setup, exposure_grid, snr_of_exposure
from planner.light.photometry import sky_brightness_mag_arcsec2

#: Seeing grows with airmass as X**0.6 (common practice, no source).
SEEING_AIRMASS_POWER = 0.6
#: Airmass used where the target is below the horizon (the slot is never usable there;
#: the value only keeps the photometry's range checks quiet).
_FAR_AIRMASS = 40.0


def _usable_airmass(airmass):
    x = np.asarray(airmass, dtype=float)
    return np.where(np.isfinite(x), np.clip(x, 1.0, _FAR_AIRMASS), _FAR_AIRMASS)


def raw_efficiency(site, filter_name, airmass, moon_illum, moon_sep, moon_alt):
    """S/N²-per-second relative to the zenith on a dark sky, for one filter (broadcasts)."""
    s = band_setup(site, filter_name)
    x = _usable_airmass(airmass)
    sky = sky_brightness_mag_arcsec2(s.dark_sky_mag_arcsec2, s.extinction_mag_per_airmass, x, moon_illum,
                                     np.clip(moon_sep, 0.0, 180.0), moon_alt, s.sun_minus_v_mag)
    dark_over_sky = 10.0 ** (0.4 * (sky - s.dark_sky_mag_arcsec2))
    eff = 10.0 ** (-0.8 * s.extinction_mag_per_airmass * x) * x ** (-2 * SEEING_AIRMASS_POWER) * dark_over_sky
    return np.where(np.isfinite(np.asarray(airmass, dtype=float)), eff, 0.0)


def efficiency_table(site, requests, airmass, moon_sep, moon_alt, moon_illum, ok):
    """(R, T) efficiency of each request at each slot, 1 at its best usable slot tonight, 0 where unusable."""
    filters = list(dict.fromkeys(e.filter for q in requests for e in q.exposures))
    per_filter = {f: raw_efficiency(site, f, airmass, moon_illum, moon_sep, moon_alt[None, :]) for f in filters}
    out = np.zeros(airmass.shape)
    for r, q in enumerate(requests):
        shutter = np.array([e.frames * e.exposure_s for e in q.exposures], dtype=float)
        weights = shutter / shutter.sum() if shutter.sum() > 0 else np.full(len(shutter), 1.0 / len(shutter))
        row = sum(w * per_filter[e.filter][r] for e, w in zip(q.exposures, weights))
        row = np.where(ok[r], row, 0.0)
        best = row.max() if row.size else 0.0
        out[r] = row / best if best > 0 else 0.0
    return out


def planned_seeing(seeing_arcsec, airmass):
    return seeing_arcsec * _usable_airmass(airmass) ** SEEING_AIRMASS_POWER


def sized_frames(site, q, airmass, moon_sep, moon_alt, moon_illum, seeing_arcsec):
    """Frames and frame time meeting ``q``'s S/N goal at every slot (frames 0 where out of reach)."""
    e = q.exposures[0]
    x = _usable_airmass(airmass)
    g = exposure_grid(site, e.filter, q.magnitude, q.snr_goal, airmass=x,
                      seeing_fwhm_arcsec=planned_seeing(seeing_arcsec, x), moon_illumination=moon_illum,
                      moon_separation_deg=np.clip(moon_sep, 0.0, 180.0), moon_altitude_deg=moon_alt,
                      saturation_magnitude=q.saturation_magnitude, max_frame_s=q.max_frame_s,
                      cluster_sb_mag_arcsec2=q.cluster_sb_mag_arcsec2)
    return np.asarray(g.frames), np.asarray(g.frame_s, dtype=float)


def snr_planned(site, q, exposures, airmass, moon_sep, moon_alt, moon_illum, seeing_arcsec):
    """S/N the visit's frames reach on ``q.magnitude`` at the given conditions (first exposure
    line's filter, its frames combined); None when the request gives no magnitude."""
    if q.magnitude is None or not np.isfinite(airmass):
        return None
    e = exposures[0]
    x = float(_usable_airmass(airmass))
    one = snr_of_exposure(site, e.filter, q.magnitude, e.exposure_s, airmass=x,
                          seeing_fwhm_arcsec=float(planned_seeing(seeing_arcsec, x)),
                          moon_illumination=moon_illum, moon_separation_deg=float(np.clip(moon_sep, 0, 180)),
                          moon_altitude_deg=float(moon_alt), cluster_sb_mag_arcsec2=q.cluster_sb_mag_arcsec2)
    return float(np.sqrt(e.frames) * one)
