"""Visits: a target, a sequence of exposures, the overheads, the constraints, a priority.

Pure computation.  A :class:`VisitRequest` says what is wanted (and how many
times tonight); a :class:`Visit` is one placed in time by the night planner.

Durations (seconds) follow the order of events at the telescope:

1. slew from the previous pointing at the site's ``slew_rate_deg_s`` along the
   great circle (a simplification: real mounts move both axes at once, so the
   great-circle time is close to the larger axis move for most slews), then
   ``settle_s`` — both only when the telescope moves;
2. ``acquisition_s`` (pointing check, guide star) at every new target;
3. a ``filter_change_s`` whenever the filter differs from the one in the beam
   (so the first filter of a visit costs one only if the previous visit ended
   in another);
4. each frame: its exposure, then ``readout_s``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from planner.errors import InputError


class VisitError(InputError):
    """A visit specification that cannot be used (a command-line visit, a campaign goal)."""


@dataclass(frozen=True)
class Exposure:
    """One line of a visit's sequence: ``frames`` frames of ``exposure_s`` seconds in ``filter``."""

    filter: str
    frames: int
    exposure_s: float  # per frame


@dataclass(frozen=True)
class VisitRequest:
    """A visit wanted tonight, ``count`` times at least ``min_spacing_min`` apart.

    ``max_airmass``/``min_moon_separation_deg`` tighten the night's constraints for
    this visit only; ``dark`` asks for the Moon below the horizon or at most
    ``max_moon_illumination`` lit; ``min_sky_mag_arcsec2`` is a limit on the V sky
    brightness towards the target (Krisciunas & Schaefer 1991 via
    :func:`planner.photometry.sky_brightness_mag_arcsec2`); ``max_seeing_arcsec``
    leaves the visit out when the night's seeing is worse.  A ``patient`` visit
    waits for its best airmass later in the night unless its window is closing.
    ``phase_periods_d``/``phase_epochs_jd`` hold
    (period_d, epoch_jd) of the variables the visit measures, so the planner can
    value the phase coverage it gains.

    ``snr_goal`` with ``magnitude`` (and optionally ``saturation_magnitude``, the
    brightest star that must stay linear, and ``max_frame_s``) asks for "S/N
    ``snr_goal`` at ``magnitude`` in the filter of its one exposure line": the
    night planner then sizes the frames at the airmass, Moon and seeing of the
    time it gives the visit, and ``exposures`` is only the starting guess.
    Without ``snr_goal`` the frames are kept as given; ``magnitude`` alone lets
    the plan report the S/N they reach where they are placed.
    """

    key: str  # unique within a night's requests
    target: str
    ra_deg: float  # ICRS
    dec_deg: float
    purpose: str  # e.g. "tip", "hb", "variables", "visit"
    exposures: tuple[Exposure, ...]
    priority: float = 1.0
    count: int = 1
    min_spacing_min: float = 0.0
    earliest_jd: float | None = None
    latest_jd: float | None = None  # the visit must end by then
    max_airmass: float | None = None
    min_moon_separation_deg: float | None = None
    dark: bool = False
    max_moon_illumination: float = 0.25
    min_sky_mag_arcsec2: float | None = None
    max_seeing_arcsec: float | None = None
    phase_periods_d: tuple[float, ...] = ()
    phase_epochs_jd: tuple[float, ...] = ()
    phase_bins: int = 20
    notes: tuple[str, ...] = ()
    patient: bool = False  # wait for the night's best airmass (deep frames) rather than go now
    snr_goal: float | None = None
    magnitude: float | None = None  # of the star the S/N is for, in the filter of the first exposure line
    saturation_magnitude: float | None = None
    max_frame_s: float | None = None
    cluster_sb_mag_arcsec2: float | None = None  # the cluster's own light at the stars, added to the sky

    @property
    def sized(self) -> bool:
        """Frames sized by the night planner where it places the visit."""
        return self.snr_goal is not None and self.magnitude is not None and len(self.exposures) == 1


@dataclass(frozen=True)
class Visit:
    """A visit placed in time (JD UTC).  ``start_jd`` is when the slew begins;
    ``science_start_jd`` when the first shutter opens."""

    id: str
    request_key: str
    target: str
    ra_deg: float
    dec_deg: float
    purpose: str
    exposures: tuple[Exposure, ...]
    start_jd: float
    science_start_jd: float
    end_jd: float
    priority: float
    slew_deg: float
    airmass_start: float
    airmass_end: float
    airmass_mid: float
    moon_separation_deg: float
    notes: tuple[str, ...] = field(default_factory=tuple)
    status: str = "planned"  # planned | done | partial | missed | unknown | under way (re-planning)
    status_source: str | None = None  # "logbook" | "observer" | "assumed" | None: who says so
    best_airmass: float = float("nan")  # the least the target reaches in its usable window tonight
    snr_planned: float | None = None  # S/N of its frames where planned (None: no magnitude known)

    @property
    def duration_s(self) -> float:
        return (self.end_jd - self.start_jd) * 86400.0

    @property
    def shutter_s(self) -> float:
        return shutter_s(self.exposures)


def shutter_s(exposures) -> float:
    """Shutter-open time of a sequence, seconds."""
    return float(sum(e.frames * e.exposure_s for e in exposures))


def body_s(site, exposures) -> float:
    """A visit's time after the slew and settle, seconds: acquisition, the filter
    changes inside the sequence, and every frame with its readout (the first
    filter change, which depends on the previous visit, is not included)."""
    cam, tel = site.camera, site.telescope
    changes = sum(1 for a, b in zip(exposures, exposures[1:]) if a.filter != b.filter)
    frames = sum(e.frames * (e.exposure_s + cam.readout_s) for e in exposures)
    return float(tel.acquisition_s + changes * tel.filter_change_s + frames)


def setup_s(site, slew_deg, first_filter_changes):
    """Slew + settle (when the telescope moves) + the first filter change; broadcasts."""
    tel = site.telescope
    slew = np.asarray(slew_deg, dtype=float)
    moving = slew > 1e-3
    return (np.where(moving, slew / tel.slew_rate_deg_s + tel.settle_s, 0.0)
            + np.where(first_filter_changes, tel.filter_change_s, 0.0))


def parse_visit_spec(text: str, site, option: str = "visit") -> tuple[Exposure, ...]:
    """``"filter=V,frames=2,exposure=300"``; several sequences joined with ``;``
    (``"filter=V,frames=2,exposure=300;filter=I,frames=3,exposure=120"``).

    ``option`` names where the text came from in the messages (a command passes its option)."""
    out = []
    for part in [p for p in text.split(";") if p.strip()]:
        fields = {}
        for item in part.split(","):
            key, sep, value = item.partition("=")
            key = key.strip().lower()
            if not sep or key not in ("filter", "frames", "exposure"):
                raise VisitError(f"{option} {text!r}: {item.strip()!r} is not one of filter=NAME, frames=N, "
                                 "exposure=SECONDS")
            if key in fields:
                raise VisitError(f"{option} {text!r}: {key} is given twice in one sequence")
            fields[key] = value.strip()
        if "filter" not in fields or "exposure" not in fields:
            raise VisitError(f"{option} {text!r}: needs filter=NAME and exposure=SECONDS (frames=N optional)")
        if fields["filter"] not in site.filters:
            raise VisitError(f"{option} {text!r}: filter {fields['filter']!r} is not a filter of site "
                             f"{site.name!r} (filters: {', '.join(site.filters)})")
        try:
            frames = int(fields.get("frames", "1"))
            exposure = float(fields["exposure"])
        except ValueError:
            raise VisitError(f"{option} {text!r}: frames must be a whole number and exposure a number of "
                             "seconds") from None
        if not 1 <= frames <= 10_000 or not (0 < exposure <= 36_000):
            raise VisitError(f"{option} {text!r}: frames must be 1..10000 and exposure 0..36000 s "
                             f"(got frames={frames}, exposure={exposure:g})")
        if exposure < site.camera.min_exposure_s:
            raise VisitError(f"{option} {text!r}: exposure {exposure:g} s is below the camera's shortest "
                             f"({site.camera.min_exposure_s:g} s)")
        out.append(Exposure(fields["filter"], frames, exposure))
    if not out:
        raise VisitError(f"{option} {text!r}: give at least one filter=NAME,frames=N,exposure=SECONDS")
    return tuple(out)


def exposures_text(exposures) -> str:
    """``V 2×300s, I 3×120s``"""
    return ", ".join(f"{e.filter} {e.frames}×{e.exposure_s:g}s" for e in exposures)
