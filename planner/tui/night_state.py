"""Where a night stands, from the plan, the logbook and the clock: the app's reading of it.

Every rule here is the core's: a visit's state is what a re-plan from now would
give it (:func:`planner.scheduling.replan.past_statuses`, with the logbook's
frames, closures and the observer's marks), phase coverage is
:func:`planner.variables.phases.phase_coverage`, an exposure is
:func:`planner.light.exposure.exposure_for_snr`.  Pure functions of their
inputs; the app calls them with what it holds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.errors import InputError


def visit_states(plan, record, now_jd: float, key) -> dict[str, str]:
    """Each visit's state: ``done``, ``partial``, ``skipped``, ``missed``, ``unknown``,
    ``under way`` or ``planned`` (not started)."""
    from planner.scheduling.replan import past_statuses

    states = {v.id: "planned" for v in plan.visits}
    if not math.isfinite(now_jd):
        return states
    skipped = record.ids_marked("skipped")
    past = past_statuses(plan, now_jd, logged_closed=record.closed, done=record.ids_marked("done"),
                         logged=record.frames, key=key, skipped=skipped, stopped=record.ids_marked("partial"))
    for v in past:
        states[v.id] = "skipped" if (v.status == "missed" and v.id in skipped) else v.status
    return states


def next_visit(plan, now_jd: float):
    """The first visit that starts after ``now_jd`` (None when none is left)."""
    if plan is None or not math.isfinite(now_jd):
        return None
    return next((v for v in plan.visits if v.start_jd > now_jd), None)


def mark_problem(visit, now_jd: float, status: str) -> str | None:
    """Why ``visit`` cannot be marked ``status`` now (None: it can)."""
    if visit is None:
        return "choose a visit first (↑ ↓ on the plan)"
    if visit.start_jd > now_jd:
        return f"{visit.id} has not started yet (starts later tonight): mark it once under way"
    return None


def frames_problem(text: str, total: int) -> tuple[int | None, str | None]:
    """The frames a partial visit took, from what was typed: (frames, None) or (None, hint)."""
    try:
        n = int(text.strip())
    except ValueError:
        return None, f"type a whole number of frames, {'1' if total == 2 else f'1 to {total - 1}'} (got {text.strip()!r})"
    if not 1 <= n < total:
        if total <= 1:
            return None, "a visit of one frame is done or not: mark it done or skip it"
        some = "1" if total == 2 else f"1 to {total - 1}"
        return None, f"a partial visit took {some} of its {total} frames (got {n})"
    return n, None


# --- phases ------------------------------------------------------------------------------

@dataclass(frozen=True)
class PhaseRow:
    star: str
    cluster: str
    period_d: float
    epochs_before: int
    n_bins: int
    bins_before: int
    bins_after: int  # with tonight's remaining visits
    gap_after: float  # widest phase gap left (cycles)


def phase_table(campaign, frames, plan, now_jd: float, key) -> list[PhaseRow]:
    """Each variable's coverage from the logbook's frames of its cluster before now, and
    what the plan's remaining variable visits tonight add (phase bins of the cadence goal)."""
    from astropy.time import Time

    from planner.variables.phases import ephemeris_dates, phase_coverage, phases

    variables = [v for v in campaign.variables]
    if not variables:
        return []
    n_bins = campaign.cadence.phase_bins if campaign.cadence is not None else 20
    rows = []
    clusters = sorted({v.cluster or "" for v in variables})
    for cluster in clusters:
        stars = [v for v in variables if (v.cluster or "") == cluster]
        ck = key(cluster) if cluster else None
        before = sorted({f.time_jd + (f.exposure_s or 0.0) / 2 / 86400.0 for f in frames
                         if f.time_jd < now_jd and ck is not None and key(f.target) == ck})
        later = [(v.start_jd + v.end_jd) / 2 for v in (plan.visits if plan is not None else ())
                 if v.start_jd >= now_jd and v.purpose == "variables" and ck is not None and key(v.target) == ck]
        times = np.array(before + later, dtype=float)
        if times.size:
            dates = ephemeris_dates(Time(times, format="jd", scale="utc"), stars)
            ph = phases(dates, [s.epoch_hjd for s in stars], [s.period_d for s in stars])
        else:
            ph = np.full((len(stars), 0), np.nan)
        types = [s.type for s in stars]
        cov_b = phase_coverage(ph[:, :len(before)] if len(before) else np.full((len(stars), 1), np.nan),
                               n_bins, types)
        cov_a = phase_coverage(ph if times.size else np.full((len(stars), 1), np.nan), n_bins, types)
        for j, s in enumerate(stars):
            rows.append(PhaseRow(s.id, cluster or "—", float(s.period_d), len(before), n_bins,
                                 int(cov_b.bins_covered[j]), int(cov_a.bins_covered[j]), float(cov_a.largest_gap[j])))
    return rows


# --- an exposure on the spot ----------------------------------------------------------------

@dataclass(frozen=True)
class ExposureAsk:
    """What the exposure check was asked: the parsed fields."""

    target: object  # Target
    filter: str
    level: str  # "tip" | "hb" | "turnoff" or "" when a magnitude is given
    magnitude: float | None
    snr: float
    seeing: float


def parse_exposure_fields(campaign, target, filter_text: str, level_text: str, snr_text: str,
                          seeing_text: str) -> tuple[ExposureAsk | None, str | None, str | None]:
    """The fields of the exposure check: (ask, None, None), or (None, field, hint) for the
    first field that makes no sense."""
    site = campaign.site
    f = filter_text.strip()
    if f not in site.filters:
        return None, "filter", f"one of this site's filters: {', '.join(site.filters)} (got {f!r})"
    lv = level_text.strip().lower()
    mag = None
    if lv not in ("tip", "hb", "turnoff"):
        try:
            mag = float(lv)
        except ValueError:
            return None, "level", f"tip, hb, turnoff or a magnitude such as 17.5 (got {level_text.strip()!r})"
        if not -5 < mag < 30:
            return None, "level", f"a magnitude between −5 and 30 (got {mag:g})"
        lv = ""
    try:
        snr = float(snr_text)
    except ValueError:
        return None, "snr", f"a signal-to-noise ratio such as 100 (got {snr_text.strip()!r})"
    if not 1 <= snr <= 10000:
        return None, "snr", f"a S/N from 1 to 10000 (got {snr:g})"
    try:
        seeing = float(seeing_text)
    except ValueError:
        return None, "seeing", f"the seeing in arcsec, such as 1.1 (got {seeing_text.strip()!r})"
    if not 0.2 <= seeing <= 10:
        return None, "seeing", f"a seeing from 0.2″ to 10″ (got {seeing:g})"
    return ExposureAsk(target, f, lv, mag, snr, seeing), None, None


def check_exposure(campaign, ask: ExposureAsk, airmass: float, moon_illumination: float,
                   moon_separation_deg: float, moon_altitude_deg: float) -> tuple[list[str], str | None]:
    """The exposure core's answer for ``ask`` under the sky now: (lines, None), or ([], why not)."""
    from planner.light.exposure import band_setup, exposure_for_level, exposure_for_snr
    from planner.light.photometry import science_level

    site = campaign.site
    if not (np.isfinite(airmass) and airmass >= 1.0):
        return [], f"{ask.target.name} is below the horizon now: no airmass to work with"
    sky = dict(airmass=float(airmass), seeing_fwhm_arcsec=ask.seeing, moon_illumination=float(moon_illumination),
               moon_separation_deg=float(moon_separation_deg), moon_altitude_deg=float(moon_altitude_deg),
               max_frame_s=campaign.max_frame_s)
    try:
        if ask.level:
            level = science_level(ask.target, ask.level, band_setup(site, ask.filter).band)
            plan = exposure_for_level(site, ask.filter, level, ask.snr, **sky)
        else:
            plan = exposure_for_snr(site, ask.filter, ask.magnitude, ask.snr, target=ask.target.name, **sky)
    except (InputError, ValueError) as exc:
        return [], str(exc)
    what = f"{ask.level} at {plan.magnitude:.2f}" if ask.level else f"{plan.magnitude:.2f} mag"
    sat = ("never saturates" if plan.saturation_s is None
           else f"brightest stars ({plan.saturation_magnitude:.1f}) saturate after {plan.saturation_s:.3g} s")
    lines = [f"{ask.target.name} {ask.filter}, {what}, S/N {ask.snr:g}: "
             f"{plan.frames} × {plan.frame_s:.3g} s (S/N {plan.snr_reached:.0f}, {plan.elapsed_s / 60:.1f} min with readout)",
             f"airmass {airmass:.2f} · seeing {ask.seeing:g}″ · sky {plan.sky_mag_arcsec2:.2f} mag/″² · {sat}"]
    lines += list(plan.warnings)
    return lines, None
