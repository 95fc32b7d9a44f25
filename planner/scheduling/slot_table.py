"""Every constraint of every request on the night's one-minute slots, as arrays.

One :func:`~planner.sky.visibility.sky_at` call covers the night's distinct
targets × slots, with the Sun, the Moon and the sidereal time computed once;
``next_bad[r, i]`` — the first failing slot at or after ``i`` — then makes
"does request r hold over [t, t + d]?" one array lookup for the dispatch
(:mod:`planner.scheduling.dispatch`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.light.photometry import sky_brightness_mag_arcsec2
from planner.scheduling.quality import efficiency_table, sized_frames
from planner.scheduling.visits import body_s
from planner.sky.airmass import altitude_for_airmass
from planner.sky.almanac import MOONRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG
from planner.sky.ephemeris import site_geometry
from planner.sky.visibility import apparent_places, constraint_margin_deg, sky_at, sun_cannot_bind, time_track

#: Slot length, minutes (the planner's time resolution).
SLOT_MIN = 1.0
#: Every constraint must hold by this much on the slot grid (degrees): altitude
#: changes by at most 0.25° a minute, nearly linearly, so between samples a
#: margin of 0.02° cannot be lost except at a grazing moonrise.
MARGIN_DEG = 0.02


@dataclass
class SlotTable:
    """Per-request arrays over the night's slots (mutable working state of one planning run)."""

    jd: np.ndarray  # (T,) slot times
    ok: np.ndarray  # (R, T) every constraint holds at the slot
    next_bad: np.ndarray  # (R, T+1) first failing slot at or after i (T: none)
    airmass: np.ndarray  # (R, T)
    moon_sep: np.ndarray  # (R, T)
    best_airmass: np.ndarray  # (R,)
    left: np.ndarray  # (R, T+1) feasible start slots from i on
    best_after: np.ndarray  # (R, T+1) lowest airmass at a good slot from i on
    moon_alt: np.ndarray  # (T,)
    eff: np.ndarray  # (R, T) S/N-equivalent efficiency, 1 at the request's best usable slot
    body_s: np.ndarray  # (R, T) visit time after the slew with its middle at the slot (sized there)
    frames: np.ndarray  # (R, T) frames of a sized request's visit centred there (else its own)
    frame_s: np.ndarray  # (R, T)


def next_bad_slot(ok: np.ndarray) -> np.ndarray:
    r, t = ok.shape
    idx = np.where(ok, t, np.arange(t)[None, :])
    nb = np.minimum.accumulate(idx[:, ::-1], axis=1)[:, ::-1]
    return np.concatenate([nb, np.full((r, 1), t)], axis=1)


def build_slot_table(site, constraints, requests, eph, jd, closed, moon_illum, seeing_arcsec=None) -> SlotTable:
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    coords = list(dict.fromkeys((q.ra_deg, q.dec_deg) for q in requests))
    index = {c: i for i, c in enumerate(coords)}
    rows = np.array([index[(q.ra_deg, q.dec_deg)] for q in requests], dtype=int)
    places = apparent_places([c[0] for c in coords], [c[1] for c in coords], float(jd[0]), float(jd[-1]))
    ra, dec = places.at([0.5 * (jd[0] + jd[-1])])  # (N, 1): fixed for the night
    track = time_track(eph, geo, jd)  # the Sun, the Moon and sidereal time, once for the night
    grid = sky_at(track, geo.latitude_deg, ra, dec,  # all targets × slots in one call
                  sun_separation=not sun_cannot_bind(constraints, track.sun_altitude_deg))
    margin = constraint_margin_deg(grid, constraints)[rows]
    alt, sep = grid.altitude_deg[rows], grid.moon_separation_deg[rows]
    airmass = np.nan_to_num(grid.airmass[rows], nan=np.inf)
    moon_alt = grid.moon_altitude_deg[None, :]
    ok = margin >= MARGIN_DEG
    # The Sun below the twilight's altitude (the window says so; this guards its edges).
    ok &= (grid.sun_altitude_deg <= TWILIGHT_ALTITUDE_DEG[constraints.twilight] + 1e-6)[None, :]
    for a, b in closed:
        ok &= ~((jd >= a - SLOT_MIN / 1440.0) & (jd <= b + SLOT_MIN / 1440.0))[None, :]
    # Per-request tightenings, as array operations over the requests that set them.
    max_x = np.array([q.max_airmass if q.max_airmass else np.inf for q in requests])
    if np.isfinite(max_x).any():
        lim = np.where(np.isfinite(max_x), altitude_for_airmass(np.where(np.isfinite(max_x), max_x, 2.0)), -90.0)
        ok &= alt - lim[:, None] >= MARGIN_DEG
    min_sep = np.array([q.min_moon_separation_deg or 0.0 for q in requests])
    moon_down = moon_alt < MOONRISE_ALTITUDE_DEG - MARGIN_DEG
    ok &= (sep - min_sep[:, None] >= MARGIN_DEG) | moon_down
    dark = np.array([q.dark for q in requests])
    lit_ok = np.array([moon_illum <= q.max_moon_illumination for q in requests])
    ok &= ~(dark & ~lit_ok)[:, None] | moon_down
    sky_min = np.array([q.min_sky_mag_arcsec2 or -np.inf for q in requests])
    if np.isfinite(sky_min).any() and "V" in site.filters:
        sky = sky_brightness_mag_arcsec2(site.sky.dark_mag_arcsec2["V"], site.sky.extinction_mag_per_airmass["V"],
                                         np.where(np.isfinite(airmass), np.maximum(airmass, 1.0), 40.0),
                                         moon_illum, sep, moon_alt)
        ok &= sky >= sky_min[:, None]
    t_ok = np.ones_like(ok)
    for r, q in enumerate(requests):  # time windows: a comparison per request that has one
        if q.earliest_jd is not None:
            t_ok[r] &= jd >= q.earliest_jd
        if q.latest_jd is not None:
            t_ok[r] &= jd <= q.latest_jd
    ok &= t_ok
    nb = next_bad_slot(ok)
    dur = np.array([body_s(site, q.exposures) for q in requests]) / 60.0 / SLOT_MIN
    need = np.ceil(dur).astype(int) + 1
    starts = nb[:, :-1] > np.arange(len(jd))[None, :] + need[:, None]
    left = np.concatenate([np.cumsum(starts[:, ::-1], axis=1)[:, ::-1], np.zeros((len(requests), 1))], axis=1)
    good_x = np.where(ok, airmass, np.inf)
    best = np.min(good_x, axis=1)
    best_after = np.concatenate([np.minimum.accumulate(good_x[:, ::-1], axis=1)[:, ::-1],
                                 np.full((len(requests), 1), np.inf)], axis=1)
    moon_alt = grid.moon_altitude_deg
    eff = efficiency_table(site, requests, airmass, sep, moon_alt, moon_illum, ok)
    seeing = site.sky.typical_seeing_arcsec if seeing_arcsec is None else seeing_arcsec
    body, frames, frame_s = _sizes(site, requests, airmass, sep, moon_alt, moon_illum, seeing)
    return SlotTable(jd, ok, nb, airmass, sep, best, left, best_after, moon_alt, eff, body, frames, frame_s)


def _sizes(site, requests, airmass, sep, moon_alt, moon_illum, seeing):
    """Per slot: the body time, frames and frame time of each request's visit centred there."""
    shape = airmass.shape
    body = np.zeros(shape)
    frames = np.zeros(shape, dtype=np.int64)
    frame_s = np.zeros(shape)
    cam, tel = site.camera, site.telescope
    for r, q in enumerate(requests):
        if q.sized:
            n, f = sized_frames(site, q, airmass[r], sep[r], moon_alt, moon_illum, seeing)
            frames[r], frame_s[r] = n, f
            # out of reach (no frames): the visit can never be placed there
            body[r] = np.where(n > 0, tel.acquisition_s + n * (f + cam.readout_s), np.inf)
        else:
            frames[r], frame_s[r] = q.exposures[0].frames, q.exposures[0].exposure_s
            body[r] = body_s(site, q.exposures)
    return body, frames, frame_s
