"""A campaign over its nights: which clusters each night, when the deep frames go, the cadence,
and what the time the goals leave is used for.

Each night is planned by :func:`planner.scheduling.night.plan_night` in two passes:

1. **the goals.**  *Depth goals* (S/N at a science level in a filter, ``visits`` times
   over the campaign; frames from :func:`planner.exposure.exposure_for_level` at the
   planned seeing, the Moon down, airmass :data:`EXPOSURE_AIRMASS`) are shared out
   over the nights before each night is planned
   (:func:`~planner.scheduling.campaign_nights.assign_depth`): every visit still owed
   goes to the night that suits it best — the lowest airmass its target reaches
   inside the goal's limits, the darkest sky — so goals wanting dark time land on dark
   nights and the work is spread rather than crammed into the first night.  The
   *variable-star cadence*: per cluster with variables, ``visits_per_night`` visits
   spread over the cluster's usable hours (the spacing is widened from
   ``min_spacing_min`` to cover most of them), each valued by the phase bins it adds
   to what earlier nights covered (carried from night to night);
2. **spare time** (the campaign's ``fill``): more cadence epochs at the minimum
   spacing and more visits of the depth goals whose limits hold tonight, placed
   around the goals' visits, which stay where pass 1 put them.  Their request keys
   end in :data:`FILL_SUFFIX` and their visits say so in a note, so the observer
   knows what is required and what is extra.

Every idle stretch then gets its reason (``nothing observable``, ``goals met``,
``closed``: :func:`~planner.scheduling.campaign_nights.gaps_with_reasons`).  A goal
no night of the campaign can hold is an error naming the goal.

The forecast then puts every planned variable visit (extra ones too) through
:func:`planner.variables.phase_coverage` and :func:`planner.recovery.simulate_recovery`
(light curves simulated at the planned times, noise from the exposure core through
:func:`planner.variables.recovery.visit_noise_mag`, as ``gcplan recover``).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field, replace

import numpy as np

from planner.errors import CampaignError, InputError
from planner.model.campaign import Campaign
from planner.model.names import normalize_name
from planner.scheduling.campaign_nights import (
    DARK_ILLUMINATION,
    STEP_MIN,
    assign_depth,
    cadence_spacing,
    merge_spare_runs,
    stretch_spare_frames,
    fits,
    gaps_with_reasons,
    goal_runs,
    longest_run,
    earliest_starts,
    reconcile,
    targets_tonight,
    visit_minutes,
)
from planner.scheduling.night import plan_night
from planner.scheduling.night_plan import FILL_SUFFIX, NightPlan
from planner.scheduling.visits import Exposure, VisitRequest, body_s, setup_s, shutter_s
from planner.sky.ephemeris import moon_phase
from planner.sky.visibility import angular_separation_deg

#: Airmass at which goal exposures are computed: the middle of a typical visit (from memory).
EXPOSURE_AIRMASS = 1.2
#: Seed of the recovery forecast's simulation (the forecast must be reproducible).
FORECAST_SEED = 1
#: Request keys of spare-time work end in FILL_SUFFIX (planner.scheduling.night_plan; the
#: goals' own keys are ``TARGET/LEVEL-FILTER`` and ``TARGET/variables``); its visits carry
#: :data:`FILL_NOTE`.
FILL_NOTE = "extra (beyond the goals)"
#: A campaign whose goals take less than this share of its usable time is told so (our choice).
LOW_DEMAND = 0.25


@dataclass(frozen=True)
class CampaignPlan:
    campaign: Campaign
    nights: tuple[NightPlan, ...]
    requests: tuple[tuple[VisitRequest, ...], ...]  # per night, as planned
    coverage: dict
    recovery: dict
    warnings: tuple[str, ...] = field(default_factory=tuple)
    usable_hours: float = 0.0  # the nights' usable windows
    required_hours: float = 0.0  # the goals' visits, overheads included
    fill_hours: float = 0.0  # spare-time work

    @property
    def spare_hours(self) -> float:
        """Usable hours the goals leave (before spare-time work)."""
        return self.usable_hours - self.required_hours


def _cluster_of(variable, by_norm):
    return by_norm.get(normalize_name(variable.cluster)) if variable.cluster else None


def goal_exposures(campaign: Campaign, seeing_arcsec: float | None = None) -> dict:
    """Frames for every goal × target and for each cluster's variable visits.

    Returns ``{(goal index, target name): (Exposure, ...)}`` with the cadence under
    ``("variables", cluster name)``.  A goal no site filter can reach raises
    :class:`~planner.errors.CampaignError`.
    """
    from planner.light.exposure import exposure_for_level, exposure_for_snr
    from planner.light.photometry import science_level

    site = campaign.site
    seeing = seeing_arcsec or campaign.seeing_arcsec or site.sky.typical_seeing_arcsec
    by_name = {t.name: t for t in campaign.targets}
    out = {}
    for i, g in enumerate(campaign.goals):
        band = site.filters[g.filter].band
        for name in g.targets:
            t = by_name[name]
            try:
                level = science_level(t, g.level, band)
                p = exposure_for_level(site, g.filter, level, g.snr, airmass=EXPOSURE_AIRMASS,
                                       seeing_fwhm_arcsec=seeing, max_frame_s=campaign.max_frame_s,
                                       cluster_sb_mag_arcsec2=goal_cluster_light(campaign, i, name))
            except CampaignError:
                raise
            except InputError as exc:  # from the exposure core: no way to meet the goal
                raise CampaignError(f"[[goals]] #{i + 1} ({g.level} S/N {g.snr:g} in {g.filter}) for {name}: "
                                    f"{exc}", campaign.source) from None
            out[(i, name)] = (Exposure(g.filter, int(p.frames), float(p.frame_s)),)
    c = campaign.cadence
    if c is not None:
        band = site.filters[c.filter].band
        clusters = dict.fromkeys(v.cluster for v in campaign.variables if v.cluster)
        by_norm = {normalize_name(t.name): t for t in campaign.targets}
        for cl in clusters:
            t = by_norm.get(normalize_name(cl))
            if t is None:
                continue
            if c.exposure_s is not None:
                out[("variables", t.name)] = (Exposure(c.filter, 1, float(c.exposure_s)),)
                continue
            try:
                mags = [v.mean_mag for v in campaign.variables if v.cluster == cl and v.mean_mag is not None]
                if mags:  # the faintest star sets the frame; saturation by the brightest at maximum
                    p = exposure_for_snr(site, c.filter, max(mags), c.snr, airmass=EXPOSURE_AIRMASS,
                                         seeing_fwhm_arcsec=seeing, saturation_magnitude=min(mags) - 0.5)
                else:
                    p = exposure_for_level(site, c.filter, science_level(t, "hb", band), c.snr,
                                           airmass=EXPOSURE_AIRMASS, seeing_fwhm_arcsec=seeing)
            except InputError as exc:  # from the exposure core, as for the goals
                raise CampaignError(f"[cadence] S/N {c.snr:g} in {c.filter} for {t.name}: {exc}",
                                    campaign.source) from None
            out[("variables", t.name)] = (Exposure(c.filter, int(p.frames), float(p.frame_s)),)
    return out


def _cadence_groups(campaign: Campaign) -> dict:
    """Each campaign target with variables, and its stars."""
    by_norm = {normalize_name(t.name): t for t in campaign.targets}
    groups: dict[str, list] = {}
    for v in campaign.variables:
        t = _cluster_of(v, by_norm)
        if t is not None:
            groups.setdefault(t.name, []).append(v)
    return groups


def is_fill(visit) -> bool:
    """A visit (or request) of spare-time work rather than of the campaign's goals."""
    return getattr(visit, "request_key", getattr(visit, "key", "")).endswith(FILL_SUFFIX)


def goal_cluster_light(campaign, i, name) -> float | None:
    """The cluster's surface brightness (mag/arcsec², in the goal's band) at the goal's
    ``field_radius_arcmin`` (None without one, or beyond the tidal radius)."""
    import math

    from planner.light.cluster_light import cluster_surface_brightness

    g = campaign.goals[i]
    if g.field_radius_arcmin is None:
        return None
    t = next(t for t in campaign.targets if t.name == name)
    mu, _ = cluster_surface_brightness(t, campaign.site.filters[g.filter].band, g.field_radius_arcmin)
    return mu if math.isfinite(mu) else None


def _depth_sizing(campaign, i, name) -> dict:
    """What lets the night planner size a depth visit's frames where it places it: the
    goal's S/N at the level's magnitude, its brightest stars kept linear, the longest frame."""
    from planner.light.photometry import science_level

    g = campaign.goals[i]
    t = next(t for t in campaign.targets if t.name == name)
    level = science_level(t, g.level, campaign.site.filters[g.filter].band)
    return {"snr_goal": g.snr, "magnitude": level.magnitude, "saturation_magnitude": level.brightest_mag,
            "max_frame_s": campaign.max_frame_s, "cluster_sb_mag_arcsec2": goal_cluster_light(campaign, i, name)}


def _cadence_sizing(campaign, name, stars) -> dict:
    """As :func:`_depth_sizing` for a cluster's variable-star visits: the faintest star's mean
    magnitude sets the frame, the brightest at maximum the saturation limit (as
    :func:`goal_exposures`); with a fixed ``exposure_s`` only the magnitude, for the S/N report."""
    from planner.light.photometry import science_level

    c = campaign.cadence
    mags = [v.mean_mag for v in stars if v.mean_mag is not None]
    if mags:
        faint, bright = max(mags), min(mags) - 0.5
    else:
        t = next(t for t in campaign.targets if t.name == name)
        level = science_level(t, "hb", campaign.site.filters[c.filter].band)
        faint, bright = level.magnitude, level.brightest_mag
    if c.exposure_s is not None:
        return {"magnitude": faint}
    return {"snr_goal": c.snr, "magnitude": faint, "saturation_magnitude": bright}


def _depth_request(campaign, i, name, exposures, count: int, *, fill=False):
    """``count`` visits of a depth goal; as spare-time work (``fill``) one frame of the goal's
    length a visit: single frames fit between the cadence visits, and each deepens the
    stack as much as a frame of the goal's own visit."""
    g = campaign.goals[i]
    t = next(t for t in campaign.targets if t.name == name)
    exps = exposures[(i, name)]
    if fill:
        exps = (replace(exps[0], frames=1),)
    return VisitRequest(
        key=f"{name}/{g.level}-{g.filter}" + (FILL_SUFFIX if fill else ""), target=name, ra_deg=t.ra_deg,
        dec_deg=t.dec_deg, purpose=g.level, exposures=exps, priority=t.priority * g.priority,
        count=count, max_airmass=g.max_airmass, dark=g.dark, max_seeing_arcsec=g.max_seeing_arcsec, patient=True,
        notes=(f"S/N {g.snr:g} at the {g.level} level" if not fill else f"one more {g.level} frame",)
        + (("dark time",) if g.dark else ()) + ((FILL_NOTE,) if fill else ()),
        # A goal's visit is sized where it is planned; a spare-time frame keeps the goal's
        # frame length (its S/N is still reported where it lands).
        **(_depth_sizing(campaign, i, name) if not fill else
           {k: v for k, v in _depth_sizing(campaign, i, name).items()
            if k in ("magnitude", "cluster_sb_mag_arcsec2")}))


def _cadence_request(campaign, name, stars, exposures, count, spacing_min, *, fill=False):
    c = campaign.cadence
    t = next(t for t in campaign.targets if t.name == name)
    prio = t.priority * c.priority
    if fill:  # valued per minute of telescope time like a deep frame of the same priority
        exps = exposures[("variables", name)]
        prio *= body_s(campaign.site, exps) / max(shutter_s(exps), 1e-3)
    return VisitRequest(
        key=f"{name}/variables" + (FILL_SUFFIX if fill else ""), target=name, ra_deg=t.ra_deg, dec_deg=t.dec_deg,
        purpose="variables", exposures=exposures[("variables", name)], priority=prio, count=count,
        min_spacing_min=spacing_min, phase_periods_d=tuple(v.period_d for v in stars),
        phase_epochs_jd=tuple(v.epoch_hjd for v in stars), phase_bins=c.phase_bins,
        notes=(f"{len(stars)} RR Lyrae",) + ((FILL_NOTE,) if fill else ()),
        **_cadence_sizing(campaign, name, stars))


def night_requests(campaign: Campaign, exposures: dict, depth_tonight: dict, tonight=None) -> list:
    """The requests of the campaign's goals for one night: the depth visits given to it
    (``depth_tonight``: (goal, target) → visits) and the cadence, spread over each
    cluster's usable hours of ``tonight`` (a :class:`~planner.scheduling.campaign_nights.Tonight`)."""
    out = [_depth_request(campaign, i, name, exposures, n) for (i, name), n in sorted(depth_tonight.items())]
    c = campaign.cadence
    if c is not None:
        row = {t.name: k for k, t in enumerate(campaign.targets)}
        for name, stars in _cadence_groups(campaign).items():
            need = visit_minutes(campaign.site, exposures[("variables", name)])
            spacing = cadence_spacing(tonight, row[name], c.visits_per_night, need, c.min_spacing_min)
            out.append(_cadence_request(campaign, name, stars, exposures, c.visits_per_night, spacing))
    return out


def fill_requests(campaign: Campaign, exposures: dict, k: int, goal_nights: dict, tonight) -> list:
    """Spare-time work for night ``k`` (as the campaign's ``fill`` says): more cadence
    epochs of each cluster, at the campaign's minimum spacing, as many as its usable
    hours hold; more visits of every depth goal whose limits hold long enough tonight,
    as many as its stretch holds, one frame each.  The night planner takes them by value: priority ×
    light collected for deep frames, and cadence epochs valued per minute of
    telescope time as a deep frame of the same priority."""
    out = []
    if campaign.fill in ("cadence-and-depth", "depth"):
        for (i, name), g in goal_nights.items():
            if fits(g)[k]:
                q = _depth_request(campaign, i, name, exposures, 1, fill=True)
                out.append(replace(q, count=int(g.run_min[k] // visit_minutes(campaign.site, q.exposures))))
    c = campaign.cadence
    if c is not None and tonight is not None and campaign.fill in ("cadence-and-depth", "cadence"):
        row = {t.name: r for r, t in enumerate(campaign.targets)}
        for name, stars in _cadence_groups(campaign).items():
            _, length = longest_run(tonight.ok[row[name]])
            step = max(c.min_spacing_min, visit_minutes(campaign.site, exposures[("variables", name)]))
            count = int(length * STEP_MIN // step)
            if count > 0:
                out.append(_cadence_request(campaign, name, stars, exposures, count, c.min_spacing_min, fill=True))
    return out


def check_fits_the_night(campaign: Campaign, exposures: dict, sky) -> None:
    """A visit longer than the campaign's longest usable window (of the :class:`NightSky`
    ``sky``) is an error."""
    longest = float(np.nanmax(np.where(np.isfinite(sky.window_start_jd),
                                       sky.window_end_jd - sky.window_start_jd, 0.0))) * 86400.0
    if not longest > 0:  # no S/N goal is the cause: there is no dark time to put any visit in
        twilight = campaign.constraints.twilight
        raise CampaignError(f"no night of the campaign ({campaign.nights[0]} to {campaign.nights[-1]}) has any "
                            f"usable time at {campaign.site.name}: the Sun never goes below {twilight} twilight "
                            "(or the constraints close every night); choose other dates or a lighter twilight",
                            campaign.source)
    for key, exps in exposures.items():
        need = body_s(campaign.site, exps)
        if need > longest:
            what = (f"[cadence] visits of {key[1]}" if key[0] == "variables"
                    else f"[[goals]] #{key[0] + 1} ({campaign.goals[key[0]].level}) for {key[1]}")
            raise CampaignError(f"{what} take {need / 3600:.1f} h, longer than the longest usable night of the "
                                f"campaign ({longest / 3600:.1f} h): lower the S/N goal or split it over visits",
                                campaign.source)


def check_goals_can_fit(campaign: Campaign, goal_nights: dict, seeing: float, seeing_is_the_files: bool) -> None:
    """A depth goal that no night of the campaign can hold is an error: its target is
    never inside the goal's limits (the campaign's constraints, its airmass, dark time)
    for a whole visit, or the campaign's planned seeing is worse than its limit.
    (A seeing given on the command line only leaves the goal out, with a warning.)"""
    for (i, name), g in goal_nights.items():
        goal = campaign.goals[i]
        what = f"[[goals]] #{i + 1} ({goal.level} S/N {goal.snr:g} in {goal.filter}) for {name}"
        if goal.max_seeing_arcsec is not None and seeing > goal.max_seeing_arcsec and seeing_is_the_files:
            raise CampaignError(f"{what}: max_seeing_arcsec {goal.max_seeing_arcsec:g} is below the seeing the "
                                f"campaign plans for ({seeing:g}″): it can never be met", campaign.source)
        if not fits(g).any():
            limits = ["the campaign's constraints"]
            if goal.max_airmass is not None:
                limits.append(f"airmass ≤ {goal.max_airmass:g}")
            if goal.dark:
                limits.append(f"dark time (the Moon down or ≤ {DARK_ILLUMINATION:.0%} lit)")
            raise CampaignError(f"{what}: never observable for a whole visit ({g.need_min:.0f} min) on any night "
                                f"of the campaign within {' and '.join(limits)} (longest stretch "
                                f"{float(np.max(g.run_min)):.0f} min)", campaign.source)


def night_index(campaign: Campaign, night: dt.date) -> int:
    """Where ``night`` falls among the campaign's nights; a :class:`CampaignError` if it is not one."""
    if night not in campaign.nights:
        raise CampaignError(f"{night} is not a night of the campaign ({campaign.nights[0]} to "
                            f"{campaign.nights[-1]})", campaign.source)
    return campaign.nights.index(night)


def plan_campaign_night(campaign: Campaign, night: dt.date, seeing_arcsec: float | None = None, *, cache=None,
                        store=None):
    """The plan of one campaign night, the campaign planned up to it (earlier nights'
    progress counts), and the requests it was planned from."""
    plan, requests, _covered = plan_through_night(campaign, night, seeing_arcsec, cache=cache, store=store)
    return plan, requests


def plan_through_night(campaign: Campaign, night: dt.date, seeing_arcsec: float | None = None, *, cache=None,
                       store=None):
    """The campaign planned from its first night up to ``night`` (earlier nights' progress
    counts; the nights after it still share out the goals, so the night is the one the whole
    campaign's plan gives).  Returns that night's plan, its requests, and the phase bins
    covered before it.

    ``cache`` (:mod:`planner.scheduling.plan_cache`): nights planned before under the same
    inputs are taken from it, and the nights planned here are put in it; the result is the
    same with or without it.  ``store``: the Sun and Moon samples kept between runs
    (:func:`~planner.scheduling.night_sky.night_sky`); the same values either way.
    """
    entry = night_entry(campaign, night, seeing_arcsec, cache=cache, store=store)
    return entry.plan, list(entry.requests), covered_before(entry)


def night_entry(campaign: Campaign, night: dt.date, seeing_arcsec: float | None = None, *, cache=None,
                store=None):
    """What :func:`plan_through_night` gives, as the night's whole
    :class:`~planner.scheduling.plan_cache.NightEntry` (with the night's own Sun and Moon
    samples when it keeps them)."""
    return _campaign_nights(campaign, seeing_arcsec, night_index(campaign, night), cache, every=False,
                            store=store)[-1]


def covered_before(entry) -> dict:
    """The phase bins covered before the entry's night, under each cadence key and its
    spare-time key (what the night's planning values new phases against)."""
    return {key + end: cov.copy() for key, cov in entry.covered_before.items() for end in ("", FILL_SUFFIX)}


def plan_campaign(campaign: Campaign, *, seeing_arcsec: float | None = None, forecast: bool = True,
                  cache=None, store=None) -> CampaignPlan:
    """Plan every night of the campaign, then forecast the coverage and period recovery
    (``cache`` and ``store`` as for :func:`plan_through_night`)."""
    site = campaign.site
    seeing = seeing_arcsec or campaign.seeing_arcsec or site.sky.typical_seeing_arcsec
    entries = _campaign_nights(campaign, seeing_arcsec, len(campaign.nights) - 1, cache, every=True, store=store)
    plans = [e.plan for e in entries]
    reqs = [e.requests for e in entries]
    done = entries[-1].done_after
    usable = sum(p.window_minutes for p in plans) / 60.0
    required = sum(v.duration_s for p in plans for v in p.visits if not is_fill(v)) / 3600.0
    extra = sum(v.duration_s for p in plans for v in p.visits if is_fill(v)) / 3600.0
    warnings = _shortfalls(campaign, done)
    if usable > 0 and required < LOW_DEMAND * usable:
        rest = {"none": 'left idle (fill = "none")', "cadence": "filled with extra cadence epochs",
                "depth": "filled with extra depth frames"}.get(campaign.fill, "filled with extra epochs and depth")
        warnings.append(f"the goals take {required:.1f} h of {usable:.0f} h usable; the rest is {rest}")
    coverage, recovery = ({}, {})
    if forecast and campaign.variables and campaign.cadence is not None:
        coverage, recovery = forecast_variables(campaign, plans, goal_exposures(campaign, seeing))
    return CampaignPlan(campaign, tuple(plans), tuple(reqs), coverage, recovery, tuple(warnings),
                        usable, required, extra)


def _campaign_nights(campaign: Campaign, seeing_arcsec, last: int, cache, *, every: bool, store=None) -> list:
    """Nights 0…``last`` as :class:`~planner.scheduling.plan_cache.NightEntry` (``every``: all
    of them; else only the last), planned from the latest night the cache keeps."""
    from planner.scheduling.night_sky import held_night_ephemeris, night_sky
    from planner.scheduling.plan_cache import NightEntry, campaign_key, decode, encode
    from planner.sky.earth_rotation import load_ut1_table

    key = campaign_key(campaign, seeing_arcsec) if cache is not None else ""
    kept: list = []

    def take(k):
        return decode(cache.get(key, k)) if cache is not None else None

    if every:  # the kept nights from the first on
        while len(kept) <= last and (e := take(len(kept))) is not None:
            kept.append(e)
        first = len(kept)
    else:  # the latest kept night at or before ``last``
        first = 0
        for k in range(last, -1, -1) if cache is not None else ():
            if (e := take(k)) is not None:
                kept, first = [e], k + 1
                break
    if first > last:
        return kept
    site = campaign.site
    seeing = seeing_arcsec or campaign.seeing_arcsec or site.sky.typical_seeing_arcsec
    ut1 = load_ut1_table()  # read once for the campaign's span and each kept night's own samples
    frame = night_sky(site, campaign.nights, campaign.constraints, ut1_table=ut1, store=store)  # the Sun and Moon once
    exposures = goal_exposures(campaign, seeing)
    check_fits_the_night(campaign, exposures, frame)
    tonights = [targets_tonight(site, campaign.constraints, campaign.targets, frame.ephemeris, a, b)
                for a, b in zip(frame.window_start_jd, frame.window_end_jd)]
    lit = np.asarray(frame.moon_illumination, dtype=float)
    row = {t.name: r for r, t in enumerate(campaign.targets)}
    goal_nights = {(i, name): goal_runs(tonights, lit, row[name], g, visit_minutes(site, exposures[(i, name)]))
                   for i, g in enumerate(campaign.goals) for name in g.targets}
    check_goals_can_fit(campaign, goal_nights, seeing, seeing_arcsec is None)
    window_min = np.nan_to_num((frame.window_end_jd - frame.window_start_jd) * 1440.0, nan=0.0)
    by_name = {t.name: t for t in campaign.targets}
    done = dict(kept[-1].done_after) if kept else {}
    covered = {k: v.copy() for k, v in kept[-1].covered_after.items()} if kept else {}
    for k in range(first, last + 1):
        owed = {(i, name): (g.visits - done.get((i, name), 0), by_name[name].priority * g.priority)
                for i, g in enumerate(campaign.goals) for name in g.targets if g.visits > done.get((i, name), 0)}
        depth = assign_depth(owed, goal_nights, lit, window_min, k)
        before = {key_: cov.copy() for key_, cov in covered.items()}
        plan, requests = _plan_one_night(campaign, k, frame, tonights[k], exposures, depth, goal_nights, covered,
                                         seeing)
        for v in plan.visits:
            for i, g in enumerate(campaign.goals):
                if v.request_key == f"{v.target}/{g.level}-{g.filter}":
                    done[(i, v.target)] = done.get((i, v.target), 0) + 1
        # The night's own samples are kept for its re-plans when the Sun and Moon store holds
        # them (read, not made; otherwise a re-plan makes them as before).
        eph = held_night_ephemeris(site, campaign.nights[k], store, ut1) if store is not None else None
        entry = NightEntry(plan, tuple(requests), before, {key_: cov.copy() for key_, cov in covered.items()},
                           dict(done), eph)
        if cache is not None:
            cache.put(key, k, encode(entry))
        kept = kept + [entry] if every else [entry]
    return kept


def _shortfalls(campaign: Campaign, done: dict) -> list[str]:
    out = []
    for i, g in enumerate(campaign.goals):
        for name in g.targets:
            got = done.get((i, name), 0)
            if got < g.visits:
                out.append(f"goal {g.level} S/N {g.snr:g} in {g.filter} for {name}: {got} of {g.visits} "
                           f"visit(s) planned — no room left for it in these nights under its constraints")
    return out


def _plan_one_night(campaign, k, frame, tonight, exposures, depth, goal_nights, covered, seeing):
    """Night ``k``: the goals' visits first, then (unless ``fill = "none"``) spare-time work
    in what they leave, the goals' visits staying where they are; the gaps' reasons last."""
    site, constraints = campaign.site, campaign.constraints
    night, eph = campaign.nights[k], frame.ephemeris
    w0, w1 = float(frame.window_start_jd[k]), float(frame.window_end_jd[k])
    requests = night_requests(campaign, exposures, depth, tonight)
    plan = plan_night(site, constraints, requests, night, w0, w1, eph, seeing_arcsec=seeing, covered_bins=covered)
    _update_coverage(covered, requests, plan.visits)
    visits, spare_value = list(plan.visits), 0.0
    extra = fill_requests(campaign, exposures, k, goal_nights, tonight) if campaign.fill != "none" else []
    if extra and tonight is not None:
        visits, spare_value = add_spare_work(campaign, night, w0, w1, eph, plan.visits, extra, covered, seeing,
                                             goal_requests=requests)
        _update_coverage(covered, requests, [v for v in visits if is_fill(v)])
    plan = _prefix_ids(replace(plan, visits=tuple(sorted(visits, key=lambda v: v.start_jd))), night)
    visits = list(plan.visits)
    gaps = plan.gaps
    if tonight is not None:
        gaps = gaps_with_reasons(site, constraints, campaign.targets, eph, w0, w1, visits, plan.closed)
    return replace(plan, visits=tuple(visits), gaps=gaps, spare_value=spare_value), requests + extra


def add_spare_work(campaign, night, w0, w1, eph, goal_visits, extra, covered, seeing, *, closed=(),
                   not_before_jd=None, goal_requests=()) -> tuple[list, float]:
    """The night's visits with spare-time work (``extra`` requests) placed around the goals'
    visits, which stay where they are; and the value the spare work adds.

    Shared by the campaign's nights and by a re-plan, so both put the goals first.
    ``goal_requests``: the goals' requests, whose limits a goal visit's slew keeps to when a
    spare-time visit before it makes that slew longer.
    """
    site, constraints = campaign.site, campaign.constraints
    bins = {q.key: covered[q.key[:-len(FILL_SUFFIX)]].copy() for q in extra
            if q.key[:-len(FILL_SUFFIX)] in covered}
    # The goals' visits, held fixed, reserve the longest slew between campaign targets
    # before their science start: whatever spare-time visit comes to precede one, its
    # real slew (set by reconcile) fits.
    pad = float(setup_s(site, _widest_slew_deg(campaign.targets), True)) / 86400.0
    # A goal's cadence visit is held under its cluster's spare-time key, so the planner
    # counts it among that key's epochs: an extra epoch keeps the campaign's minimum
    # spacing from the goal's epochs too (two epochs minutes apart add no phase).
    fill_keys = {q.key for q in extra}
    earliest = earliest_starts(site, constraints, eph, goal_visits, {q.key: q for q in goal_requests}, pad,
                               float(moon_phase(eph, 0.5 * (w0 + w1))[0]))
    held = tuple(replace(v, start_jd=min(v.start_jd, max(v.science_start_jd - pad, earliest.get(v.id, -np.inf))),
                         request_key=(v.request_key + FILL_SUFFIX
                                      if v.request_key + FILL_SUFFIX in fill_keys and v.purpose == "variables"
                                      else v.request_key))
                 for v in goal_visits)
    more = plan_night(site, constraints, extra, night, w0, w1, eph, seeing_arcsec=seeing, fixed=held,
                      covered_bins=bins, id_offset=len(goal_visits), closed=closed, not_before_jd=not_before_jd)
    own = {v.id: v for v in goal_visits}
    placed = merge_spare_runs(site, reconcile(site, [own.get(v.id, v) for v in more.visits], is_fill, earliest),
                              is_fill)
    return stretch_spare_frames(site, constraints, eph, placed, {q.key: q for q in extra}, w1, closed), more.value


def _prefix_ids(plan: NightPlan, night: dt.date) -> NightPlan:
    """Ids that say what each visit is (:mod:`planner.scheduling.visit_ids`)."""

    from planner.scheduling.visit_ids import assign_ids

    return replace(plan, visits=tuple(assign_ids(plan.visits, night)))


def _widest_slew_deg(targets) -> float:
    """The largest separation between two of the targets, degrees."""
    ra = np.array([t.ra_deg for t in targets])
    dec = np.array([t.dec_deg for t in targets])
    return float(np.max(angular_separation_deg(ra[:, None], dec[:, None], ra[None, :], dec[None, :]), initial=0.0))


def _update_coverage(covered, requests, visits):
    """Phase bins the visits cover, by the cadence request of their cluster (spare-time
    epochs count for it too)."""
    for q in requests:
        if not q.phase_periods_d or is_fill(q):
            continue
        p, e = np.array(q.phase_periods_d), np.array(q.phase_epochs_jd)
        cov = covered.setdefault(q.key, np.zeros((len(p), q.phase_bins), bool))
        for v in visits:
            if v.purpose == "variables" and v.target == q.target:
                mid = 0.5 * (v.science_start_jd + v.end_jd)
                b = np.floor(np.mod((mid - e) / p, 1.0) * q.phase_bins).astype(int) % q.phase_bins
                cov[np.arange(len(p)), b] = True


def forecast_variables(campaign: Campaign, plans, exposures) -> tuple[dict, dict]:
    """Phase coverage and period recovery of each cluster's variables at the planned visit times."""
    from astropy.time import Time

    from planner.light.exposure import snr_of_exposure
    from planner.variables.phases import (
        cluster_coverage_summary,
        ephemeris_dates,
        phase_coverage,
        phases,
    )
    from planner.variables.recovery import (
        NOISE_FLOOR_MAG,
        OOSTERHOFF_I,
        RECOVERY_TOLERANCE,
        StarSample,
        bailey_amplitude_mag,
        simulate_recovery,
        visit_noise_mag,
    )

    c = campaign.cadence
    by_norm = {normalize_name(t.name): t for t in campaign.targets}
    rng = np.random.default_rng(FORECAST_SEED)
    coverage = {"phase_bins": c.phase_bins, "clusters": []}
    recovery = {"clusters": [], "tolerance": RECOVERY_TOLERANCE}
    total_rec, total_n = 0.0, 0
    for name in dict.fromkeys(_cluster_of(v, by_norm).name for v in campaign.variables
                              if _cluster_of(v, by_norm) is not None):
        stars = [v for v in campaign.variables if _cluster_of(v, by_norm) is not None
                 and _cluster_of(v, by_norm).name == name]
        jd = np.array(sorted(0.5 * (v.science_start_jd + v.end_jd) for p in plans for v in p.visits
                             if v.purpose == "variables" and v.target == name))
        ids = [s.id for s in stars]
        types = [s.type for s in stars]
        entry = {"cluster": name, "stars": len(stars), "visits": int(jd.size)}
        if jd.size == 0:
            coverage["clusters"].append({**entry, "median_bins_covered": 0, "min_bins_covered": 0})
            recovery["clusters"].append({**entry, "recovered_fraction": 0.0, "note": "no visits planned"})
            continue
        hjd = ephemeris_dates(Time(jd, format="jd", scale="utc"), stars)  # each star's epoch's system
        ph = phases(hjd, np.array([s.epoch_hjd for s in stars])[:, None], np.array([s.period_d for s in stars])[:, None])
        cov = phase_coverage(ph, c.phase_bins, types)
        summary = cluster_coverage_summary(ids, [name] * len(stars), cov)[0]
        coverage["clusters"].append({
            **entry, "median_bins_covered": summary.median_bins_covered,
            "min_bins_covered": summary.min_bins_covered, "worst_star": summary.worst_star,
            "max_largest_gap": round(summary.max_largest_gap, 4),
            "rising_branch_sampled": summary.n_rising_branch_sampled,
            "rising_branch_applies": summary.n_rising_branch_applies,
            "goal_bins_met": int(np.sum(cov.bins_covered >= c.phase_bins))})
        if jd.size < 4:
            recovery["clusters"].append({**entry, "recovered_fraction": 0.0, "note": "fewer than 4 visits"})
            continue
        period = np.array([s.period_d for s in stars])
        sim_types = tuple("RRc" if s.type in ("RRc", "RRd") else "RRab" for s in stars)
        guess = np.where([t == "RRc" for t in sim_types], 0.45,
                         np.clip(bailey_amplitude_mag(period), *OOSTERHOFF_I.rrab_amplitude_range_mag))
        amp = np.array([s.amplitude_mag if s.amplitude_mag is not None else g for s, g in zip(stars, guess)])
        mean = np.array([s.mean_mag if s.mean_mag is not None else 16.0 for s in stars])
        exp = exposures[("variables", name)][0]
        snr = np.asarray(snr_of_exposure(campaign.site, exp.filter, mean, exp.exposure_s), dtype=float)
        sigma = visit_noise_mag(snr * np.sqrt(exp.frames))
        sample = StarSample(tuple(ids), period, amp, sim_types, np.array([s.epoch_hjd for s in stars]))
        result, _ = simulate_recovery(hjd, sample, mean, sigma, rng)
        recovery["clusters"].append({**entry, "recovered_fraction": round(result.recovered_fraction, 4),
                                     "alias_fraction": round(result.alias_fraction, 4),
                                     "failures": [f.star_id for f in result.failures]})
        total_rec += result.recovered_fraction * len(stars)
        total_n += len(stars)
    recovery["recovered_fraction"] = round(total_rec / total_n, 4) if total_n else 0.0
    recovery["method"] = ("light curves simulated at the planned visit times (HJD), noise from the exposure "
                          f"core with a {NOISE_FLOOR_MAG:g} mag floor, multi-term Lomb–Scargle search; "
                          f"seed {FORECAST_SEED}")
    return coverage, recovery
