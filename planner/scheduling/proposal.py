"""A semester's time request for a campaign: when each target can be done, how long it takes.

Pure computation on the core: the observability of the campaign's targets over the
semester's nights (:func:`planner.sky.night_summary.run_of_nights`), each night's Moon
(the almanac's illuminated fraction at the middle of the night), the exposure core at the
airmass each target reaches in its recommended window, the scheduler's visit model for
the overheads (:mod:`planner.scheduling.visits`) and the recovery forecast of the RR
Lyrae periods against the number of nights (:mod:`planner.scheduling.proposal_forecast`).

How the numbers are made (each choice is stated in the report too):

* **Moon classes** by the illuminated fraction at the middle of the night: dark below
  :data:`DARK_MAX_ILLUMINATION`, grey up to :data:`GREY_MAX_ILLUMINATION`, bright above
  (common practice, no source; the bounds are ours).
* A night **serves** a target when the target is observable (the campaign's constraints)
  for at least the hours its goals need in one night: its longest single visit, or the
  variable-star cadence's visits at the minimum spacing.  Depth goals asking for dark time
  are served by dark nights only.
* The **recommended window** is the :data:`WINDOW_NIGHTS`-night stretch whose serving nights
  hold the most hours, darker nights weighing more (:data:`MOON_WEIGHT`).
* **Frames** come from the exposure core at the mean of the least airmass the target
  reaches on the window's serving nights, the campaign's seeing, the Moon down for goals
  asking for dark time and otherwise at the window's median illumination, 90° away and
  30° up (a typical geometry, our choice).
* **Time** per visit: the scheduler's visit model — slew (the mean separation between the
  campaign's targets) and settle, acquisition, the first filter change, and every frame
  with its readout.
* **Totals** sum the rows; nights are hours over the mean usable night of the semester;
  with weather, hours / (1 − loss), the time to ask for so that the clear time covers
  the request.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from dataclasses import dataclass, field

import numpy as np

from planner.errors import InputError
from planner.model.names import normalize_name

#: Moon classes by the illuminated fraction (common practice, no source; our bounds).
DARK_MAX_ILLUMINATION = 0.35
GREY_MAX_ILLUMINATION = 0.70
MOON_CLASSES = ("dark", "grey", "bright")
#: Weight of an hour in the choice of the recommended window, by Moon class (our choice).
MOON_WEIGHT = {"dark": 1.0, "grey": 0.5, "bright": 0.25}
#: Length of the recommended window, nights: half a lunation, the longest cadence forecast.
WINDOW_NIGHTS = 14
#: Used when the site profile gives no weather_loss_fraction (common practice, no source).
TYPICAL_WEATHER_LOSS = 0.3
#: The Moon's geometry for goals that do not ask for dark time (our choice).
MOON_SEPARATION_DEG = 90.0
MOON_ALTITUDE_DEG = 30.0
#: Months holding at least this share of the best month's hours are the best months
#: (the same rule as ``gcplan observability``).
BEST_MONTH_SHARE = 0.8

_SEMESTER = re.compile(r"(\d{4})([AB])", re.IGNORECASE)


class SemesterError(InputError):
    """A semester or a range of nights a time request cannot be made for."""


def semester_nights(label: str, settings) -> tuple[dt.date, dt.date]:
    """First and last night of semester ``label`` (``"2027A"``) under the site's
    :class:`~planner.model.site.ProposalSettings`: A starts on the first of
    ``semester_a_start_month`` of the year, B on the first of ``semester_b_start_month``
    (the following year's if that month comes before A's); each runs to the day before
    the next semester starts."""
    m = _SEMESTER.fullmatch(label.strip())
    if not m:
        raise SemesterError(f"must be a year and A or B, like 2027A (got {label!r})")
    year, half = int(m[1]), m[2].upper()
    a, b = settings.semester_a_start_month, settings.semester_b_start_month
    if not 1900 <= year <= 2200:
        raise SemesterError(f"year must be 1900..2200 (got {label!r})")
    a_start = dt.date(year, a, 1)
    b_start = dt.date(year if b > a else year + 1, b, 1)
    if half == "A":
        return a_start, b_start - dt.timedelta(days=1)
    next_a = dt.date(b_start.year + 1 if a <= b else b_start.year, a, 1)
    return b_start, next_a - dt.timedelta(days=1)


def semester_label(night: dt.date, settings) -> str:
    """The semester (``"2027A"``) a night falls in."""
    for year in (night.year - 1, night.year):
        for half in "AB":
            first, last = semester_nights(f"{year}{half}", settings)
            if first <= night <= last:
                return f"{year}{half}"
    raise AssertionError("every night falls in a semester")  # the two halves tile the years


def moon_class(illumination) -> np.ndarray:
    """"dark", "grey" or "bright" for each illuminated fraction."""
    lit = np.asarray(illumination, dtype=float)
    return np.where(lit < DARK_MAX_ILLUMINATION, "dark", np.where(lit <= GREY_MAX_ILLUMINATION, "grey", "bright"))


@dataclass(frozen=True)
class RequestRow:
    """One line of the request: a depth goal or the cadence of one target."""

    target: str
    purpose: str  # tip | hb | turnoff | variables
    filter: str
    snr_goal: float | None
    magnitude: float | None
    frames: int
    frame_s: float
    visits: int
    visit_s: float  # one visit, overheads included
    shutter_s: float  # all visits
    overhead_s: float  # all visits
    airmass: float
    moon: str  # "dark" (asks for dark time) or "any"
    hours_by_moon: dict  # class -> hours of this row
    conditions: dict = field(default_factory=dict)  # what the frames were sized at (exposure core keywords)

    @property
    def hours(self) -> float:
        return (self.shutter_s + self.overhead_s) / 3600.0


@dataclass(frozen=True)
class TargetRequest:
    """Everything the request says about one target (``reason`` set when it asks for no time)."""

    name: str
    need_hours_per_night: float
    nights_serving: dict  # class -> nights of the semester that serve it
    hours_available: dict  # class -> observable hours on those nights
    serving_ranges: dict  # class -> [(first, last)] runs of consecutive serving nights
    best_months: list
    hours_by_month: dict
    window: tuple | None  # (first night, last night) recommended
    rows: tuple
    snr_tip: float | None
    snr_hb: float | None
    nights_needed: int
    recovery: tuple  # ((nights, recovered fraction, alias fraction), ...)
    moon_constraint: str
    reason: str = ""
    notes: tuple = ()

    @property
    def requested_hours(self) -> float:
        return float(sum(r.hours for r in self.rows))

    @property
    def shutter_s(self) -> float:
        return float(sum(r.shutter_s for r in self.rows))

    @property
    def overhead_s(self) -> float:
        return float(sum(r.overhead_s for r in self.rows))


@dataclass(frozen=True)
class Proposal:
    campaign: object
    label: str  # "2027A" or "2027-02-01..2027-03-31"
    run: object  # planner.sky.night_summary.RunOfNights over the semester
    classes: np.ndarray  # moon class per night
    targets: tuple
    weather_loss_fraction: float
    weather_loss_source: str
    mean_night_hours: float
    representative_night: dt.date | None
    sources: tuple
    warnings: tuple = field(default_factory=tuple)

    @property
    def total_hours(self) -> float:
        return float(sum(t.requested_hours for t in self.targets))

    @property
    def hours_by_moon(self) -> dict:
        return {c: float(sum(r.hours_by_moon[c] for t in self.targets for r in t.rows)) for c in MOON_CLASSES}

    @property
    def total_nights(self) -> float:
        return self.total_hours / self.mean_night_hours if self.mean_night_hours > 0 else 0.0

    @property
    def total_hours_with_weather(self) -> float:
        return self.total_hours / (1.0 - self.weather_loss_fraction)

    @property
    def total_nights_with_weather(self) -> float:
        return self.total_nights / (1.0 - self.weather_loss_fraction)


def make_proposal(campaign, nights: list[dt.date], label: str, *, seeing_arcsec: float | None = None,
                  store=None) -> Proposal:
    """The time request of ``campaign`` over ``nights`` (a semester, or any range)."""
    from planner.scheduling.proposal_forecast import recovery_against_nights
    from planner.scheduling.proposal_sources import proposal_sources
    from planner.sky.night_summary import run_of_nights, seasons

    site = campaign.site
    run = run_of_nights(site, list(campaign.targets), nights, campaign.constraints, store=store)
    usable = run.almanac.dark_hours(campaign.constraints.twilight)
    if not (usable > 0).any():
        raise SemesterError(f"no {campaign.constraints.twilight} darkness on any night from {nights[0]} to "
                            f"{nights[-1]} at {site.name}: no night to ask for", campaign.source)
    classes = moon_class(run.almanac.moon_illumination)
    seeing = seeing_arcsec or campaign.seeing_arcsec or site.sky.typical_seeing_arcsec
    slew = _typical_slew_deg(campaign.targets)
    out, notes = [], list(run.warnings)
    for k, (t, season) in enumerate(zip(campaign.targets, seasons(run))):
        out.append(_target_request(campaign, run, classes, k, t, season, seeing, slew, recovery_against_nights))
    if all(t.reason for t in out):
        raise SemesterError(f"targets: none of {', '.join(t.name for t in out)} is observable for its goals in "
                            f"{label} at {site.name} ({out[0].reason})", campaign.source)
    loss = site.proposal.weather_loss_fraction
    loss_source = "the site profile" if loss is not None else "typical value (the site profile gives none)"
    rep = _representative_night(run, classes, out)
    return Proposal(campaign, label, run, classes, tuple(out), TYPICAL_WEATHER_LOSS if loss is None else loss,
                    loss_source, float(np.mean(usable[usable > 0])), rep, proposal_sources(campaign, out),
                    tuple(notes))


def _typical_slew_deg(targets) -> float:
    """The mean separation between the campaign's targets (one target: a 30° slew from elsewhere, our choice)."""
    from planner.sky.visibility import angular_separation_deg

    if len(targets) < 2:
        return 30.0
    ra = np.array([t.ra_deg for t in targets])
    dec = np.array([t.dec_deg for t in targets])
    sep = angular_separation_deg(ra[:, None], dec[:, None], ra[None, :], dec[None, :])
    return float(sep[~np.eye(len(targets), dtype=bool)].mean())


def _visit_s(site, exposures, slew_deg) -> float:
    """One visit's time by the scheduler's model: slew and settle, the first filter change, the body."""
    from planner.scheduling.visits import body_s, setup_s

    return float(setup_s(site, slew_deg, True)) + body_s(site, exposures)


def _runs(nights, mask) -> list:
    """Runs of consecutive nights where ``mask`` holds, as (first, last)."""
    out, start = [], None
    for i, ok in enumerate(list(mask) + [False]):
        if ok and start is None:
            start = i
        elif not ok and start is not None:
            out.append((nights[start], nights[i - 1]))
            start = None
    return out


def best_months(hours_by_month: dict, share: float = BEST_MONTH_SHARE) -> list:
    """The months holding at least ``share`` of the best month's hours."""
    top = max(hours_by_month.values(), default=0.0)
    return [m for m, h in hours_by_month.items() if top > 0 and h >= share * top and h > 0]


def _choose_window(hours, serving, classes) -> tuple[int, int] | None:
    """Start and end index of the :data:`WINDOW_NIGHTS` nights whose serving hours, weighted by
    the Moon, add up the most (the earliest of equals); None when no night serves."""
    weight = np.array([MOON_WEIGHT[c] for c in classes]) * np.where(serving, hours, 0.0)
    if not weight.any():
        return None
    n = min(WINDOW_NIGHTS, weight.size)
    sums = np.convolve(weight, np.ones(n), mode="valid")
    start = int(np.argmax(sums >= sums.max() - 1e-9))
    return start, start + n - 1


@dataclass(frozen=True)
class _Work:
    """One goal or cadence of a target, its frames at given conditions."""

    purpose: str
    filter: str
    snr_goal: float | None
    magnitude: float | None
    frames: int
    frame_s: float
    dark: bool
    conditions: dict
    visits: int = 1  # of a depth goal over the campaign (the cadence's come from its nights)


def _conditions(airmass, seeing, dark: bool, illumination: float) -> dict:
    moon = ({} if dark or illumination <= 0 else
            {"moon_illumination": float(illumination), "moon_separation_deg": MOON_SEPARATION_DEG,
             "moon_altitude_deg": MOON_ALTITUDE_DEG})
    return {"airmass": float(airmass), "seeing_fwhm_arcsec": float(seeing), **moon}


def _work(campaign, t, stars, airmass, seeing, illumination) -> tuple[list, list]:
    """Frames of every goal of target ``t`` and of its cadence; and the reasons of those that cannot be had."""
    from planner.light.exposure import exposure_for_level, exposure_for_snr
    from planner.light.photometry import science_level
    from planner.scheduling.campaign import goal_cluster_light

    site, out, notes = campaign.site, [], []
    for i, g in enumerate(campaign.goals):
        if t.name not in g.targets:
            continue
        cond = _conditions(airmass, seeing, g.dark, illumination)
        try:
            level = science_level(t, g.level, site.filters[g.filter].band)
            p = exposure_for_level(site, g.filter, level, g.snr, max_frame_s=campaign.max_frame_s,
                                   cluster_sb_mag_arcsec2=goal_cluster_light(campaign, i, t.name), **cond)
        except InputError as exc:
            notes.append(f"{g.level} S/N {g.snr:g} in {g.filter}: {exc.detail}")
            continue
        notes += [f"{g.level} in {g.filter}: {w}" for w in p.warnings if "saturates" in w]
        out.append(_Work(g.level, g.filter, g.snr, level.magnitude, int(p.frames), float(p.frame_s), g.dark, cond,
                         g.visits))
    c = campaign.cadence
    if c is not None and stars:
        cond = _conditions(airmass, seeing, False, illumination)
        mags = [v.mean_mag for v in stars if v.mean_mag is not None]
        try:
            if c.exposure_s is not None:
                faint = max(mags) if mags else None
                out.append(_Work("variables", c.filter, None, faint, 1, float(c.exposure_s), False, cond))
            else:
                if mags:  # the faintest star sets the frame, the brightest at maximum saturation (as the campaign)
                    faint = max(mags)
                    p = exposure_for_snr(site, c.filter, faint, c.snr, saturation_magnitude=min(mags) - 0.5, **cond)
                else:
                    level = science_level(t, "hb", site.filters[c.filter].band)
                    faint = level.magnitude
                    p = exposure_for_level(site, c.filter, level, c.snr, **cond)
                out.append(_Work("variables", c.filter, c.snr, faint, int(p.frames), float(p.frame_s), False, cond))
        except InputError as exc:
            notes.append(f"cadence S/N {c.snr:g} in {c.filter}: {exc.detail}")
    return out, notes


def _need_hours(campaign, work, slew) -> float:
    """Hours one night must hold for the target: its longest visit, or the cadence's visits at
    the minimum spacing."""
    from planner.scheduling.visits import Exposure

    need = 0.0
    for w in work:
        visit = _visit_s(campaign.site, (Exposure(w.filter, w.frames, w.frame_s),), slew)
        if w.purpose == "variables":
            c = campaign.cadence
            visit += (c.visits_per_night - 1) * max(c.min_spacing_min * 60.0, visit)
        need = max(need, visit / 3600.0)
    return need


def _stars_of(campaign, t) -> list:
    key = normalize_name(t.name)
    return [v for v in campaign.variables if v.cluster and normalize_name(v.cluster) == key]


def _target_request(campaign, run, classes, k, t, season, seeing, slew, forecast) -> TargetRequest:
    vis, nights = run.visibility, run.nights
    hours = vis.observable_hours[k]
    stars = _stars_of(campaign, t)
    up = hours > 0
    first_airmass = float(np.median(vis.min_airmass[k][up])) if up.any() else 1.2
    work, notes = _work(campaign, t, stars, first_airmass, seeing, 0.0)
    need = _need_hours(campaign, work, slew)
    serving = up & (hours >= need)
    moon_text = _moon_constraint(campaign, t)
    base = dict(name=t.name, need_hours_per_night=need,
                nights_serving={c: int(np.sum(serving & (classes == c))) for c in MOON_CLASSES},
                hours_available={c: float(np.sum(hours[serving & (classes == c)])) for c in MOON_CLASSES},
                serving_ranges={c: _runs(nights, serving & (classes == c)) for c in MOON_CLASSES},
                best_months=best_months(season.hours_by_month), hours_by_month=season.hours_by_month,
                moon_constraint=moon_text)
    span = _choose_window(hours, serving, classes)
    if span is None or not work:
        if not work:
            reason = "no goal of the campaign can be reached for it: " + "; ".join(notes) if notes else \
                "the campaign sets it no goal"
        elif not up.any():
            reason = "never observable within the campaign's constraints in these nights"
        else:
            reason = (f"observable at most {float(hours.max()):.1f} h a night; its goals need {need:.1f} h "
                      "in one night")
        return TargetRequest(**base, window=None, rows=(), snr_tip=None, snr_hb=None, nights_needed=0,
                             recovery=(), reason=reason, notes=tuple(notes))
    a, b = span
    in_window = np.zeros(hours.size, bool)
    in_window[a:b + 1] = True
    use = in_window & serving
    airmass = float(np.mean(vis.min_airmass[k][use]))
    illumination = float(np.median(run.almanac.moon_illumination[use]))
    work, notes = _work(campaign, t, stars, airmass, seeing, illumination)
    share = {c: float(np.sum(use & (classes == c))) / float(np.sum(use)) for c in MOON_CLASSES}
    night_hours = float(np.mean(hours[use]))
    rows, recovery, cadence_nights = [], (), 0
    # The nights the cadence would use: the window's serving nights, then those after it, then those before.
    idx = np.flatnonzero(serving)
    order = np.concatenate([idx[(idx >= a) & (idx <= b)], idx[idx > b], idx[idx < a][::-1]])
    for w in work:
        if w.purpose == "variables":
            recovery, cadence_nights, note = _cadence_nights(forecast, campaign, run, k, stars, w, order)
            if note:
                notes.append(note)
            visits = cadence_nights * campaign.cadence.visits_per_night
        else:
            visits = w.visits
        rows.append(_row(campaign, t, w, visits, slew, airmass, share))
    for r in rows:
        if r.moon == "dark" and share["dark"] == 0:
            notes.append(f"{r.purpose} in {r.filter} asks for dark time; no dark night of the window serves it")
    depth_h = sum(r.hours for r in rows if r.purpose != "variables")
    nights_needed = max(cadence_nights, math.ceil(depth_h / night_hours - 1e-9) if depth_h > 0 else 0)
    snr_tip, snr_hb = (_best_snr(campaign.site, t, work, level) for level in ("tip", "hb"))
    return TargetRequest(**base, window=(nights[a], nights[b]), rows=tuple(rows), snr_tip=snr_tip, snr_hb=snr_hb,
                         nights_needed=int(nights_needed), recovery=recovery, notes=tuple(notes))


def _row(campaign, t, w: _Work, visits: int, slew: float, airmass: float, share: dict) -> RequestRow:
    from planner.scheduling.visits import Exposure

    visit = _visit_s(campaign.site, (Exposure(w.filter, w.frames, w.frame_s),), slew)
    shutter = visits * w.frames * w.frame_s
    hours = visits * visit / 3600.0
    split = {c: (hours if c == "dark" else 0.0) for c in MOON_CLASSES} if w.dark else \
        {c: hours * share[c] for c in MOON_CLASSES}
    return RequestRow(t.name, w.purpose, w.filter, w.snr_goal, w.magnitude, w.frames, w.frame_s, visits, visit,
                      shutter, visits * visit - shutter, airmass, "dark" if w.dark else "any", split, w.conditions)


def _cadence_nights(forecast, campaign, run, k, stars, w: _Work, order) -> tuple[tuple, int, str]:
    """The forecast against nights and the fewest nights reaching the recovery goal."""
    from planner.scheduling.proposal_forecast import RECOVERY_GOAL, RECOVERY_NIGHTS

    result = forecast(campaign, run, k, stars, w, order)
    if not result:  # the cadence gets what the range holds, and says so
        return (), len(order), (f"only {len(order)} night(s) of the range serve it: the "
                                f"cadence is asked for those, with no recovery forecast (the shortest is "
                                f"for {RECOVERY_NIGHTS[0]} nights)")
    reached = [n for n, frac, _ in result if frac >= RECOVERY_GOAL]
    if reached:
        return tuple(result), reached[0], ""
    n = result[-1][0]
    return tuple(result), n, (f"the forecast stays below {RECOVERY_GOAL:.0%} recovered even in {n} nights; "
                              f"{n} are asked for")


def _best_snr(site, t, work, level_name: str) -> float | None:
    """The best S/N any of the target's frames reach at ``level_name`` (in each frame's band),
    counting only frames that keep the level's brightest stars below saturation."""
    from planner.light.exposure import saturation_time_s, snr_of_exposure
    from planner.light.photometry import LevelError, science_level

    best = None
    for w in work:
        try:
            level = science_level(t, level_name, site.filters[w.filter].band)
        except LevelError:
            continue
        if w.frame_s > saturation_time_s(site, w.filter, level.brightest_mag, **w.conditions):
            continue
        snr = float(snr_of_exposure(site, w.filter, level.magnitude, w.frame_s, **w.conditions)) * math.sqrt(w.frames)
        best = snr if best is None else max(best, snr)
    return best


def _moon_constraint(campaign, t) -> str:
    c = campaign.constraints
    dark = [f"{g.level} {g.filter}" for g in campaign.goals if t.name in g.targets and g.dark]
    text = f"Moon ≥ {c.min_moon_separation_deg:g}° away"
    if dark:
        text += f"; dark time (illumination < {DARK_MAX_ILLUMINATION:.0%}) for " + ", ".join(dark)
    return text


def _representative_night(run, classes, targets) -> dt.date | None:
    """The night most targets are up longest on, among the dark ones if any serve."""
    hours = run.visibility.observable_hours
    rows = [k for k, t in enumerate(targets) if not t.reason]
    if not rows:
        return None
    total = hours[rows].sum(axis=0)
    dark = classes == "dark"
    if (total[dark] > 0).any():
        total = np.where(dark, total, -1.0)
    return run.nights[int(np.argmax(total))]
