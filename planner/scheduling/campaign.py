"""A campaign over its nights: which clusters each night, when the deep frames go, the cadence.

Each night is planned by :func:`planner.scheduling.night.plan_night` from
requests made for that night:

* **depth goals** (S/N at a science level in a filter, ``visits`` times over
  the campaign): frames from the exposure core (:func:`planner.exposure.exposure_for_level`
  at the planned seeing, the Moon down, airmass :data:`EXPOSURE_AIRMASS`);
  tip frames ask for dark time, low airmass and typical-or-better seeing when
  the goal says so.  A goal still open gets more weight as the nights where it
  could be met run out (``1 + visits left / dark nights left``), so goals are
  spread over the nights that suit them rather than crammed into the first;
* **the variable-star cadence**: per cluster with variables, ``visits_per_night``
  visits at least ``min_spacing_min`` apart, each valued by the phase bins it
  adds to what earlier nights covered (carried from night to night).

The forecast then puts every planned variable visit through
:func:`planner.variables.phase_coverage` and :func:`planner.recovery.simulate_recovery`
(light curves simulated at the planned times, noise from the exposure core through
:func:`planner.variables.recovery.visit_noise_mag`, as ``gcplan recover``).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from planner.errors import CampaignError, InputError
from planner.model.campaign import Campaign
from planner.model.names import normalize_name
from planner.scheduling.night_sky import night_sky
from planner.scheduling.night import plan_night
from planner.scheduling.night_plan import NightPlan
from planner.scheduling.visits import Exposure, VisitRequest, body_s

#: Airmass at which goal exposures are computed: the middle of a typical visit (from memory).
EXPOSURE_AIRMASS = 1.2
#: Seed of the recovery forecast's simulation (the forecast must be reproducible).
FORECAST_SEED = 1


@dataclass(frozen=True)
class CampaignPlan:
    campaign: Campaign
    nights: tuple[NightPlan, ...]
    requests: tuple[tuple[VisitRequest, ...], ...]  # per night, as planned
    coverage: dict
    recovery: dict
    warnings: tuple[str, ...] = field(default_factory=tuple)


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
                                       seeing_fwhm_arcsec=seeing, max_frame_s=campaign.max_frame_s)
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


def night_requests(campaign: Campaign, exposures: dict, done: dict, urgency: dict):
    """The requests of one night: open depth goals and the variable cadence."""
    by_name = {t.name: t for t in campaign.targets}
    out = []
    for i, g in enumerate(campaign.goals):
        for name in g.targets:
            left = g.visits - done.get((i, name), 0)
            if left <= 0:
                continue
            t = by_name[name]
            out.append(VisitRequest(
                key=f"{name}/{g.level}-{g.filter}", target=name, ra_deg=t.ra_deg, dec_deg=t.dec_deg,
                purpose=g.level, exposures=exposures[(i, name)], priority=t.priority * g.priority * urgency.get(
                    (i, name), 1.0), count=1, max_airmass=g.max_airmass, dark=g.dark,
                max_seeing_arcsec=g.max_seeing_arcsec, patient=True,
                notes=(f"S/N {g.snr:g} at the {g.level} level",) + (("dark time",) if g.dark else ())))
    c = campaign.cadence
    if c is not None:
        by_norm = {normalize_name(t.name): t for t in campaign.targets}
        groups: dict[str, list] = {}
        for v in campaign.variables:
            t = _cluster_of(v, by_norm)
            if t is not None:
                groups.setdefault(t.name, []).append(v)
        for name, stars in groups.items():
            t = by_name[name]
            out.append(VisitRequest(
                key=f"{name}/variables", target=name, ra_deg=t.ra_deg, dec_deg=t.dec_deg, purpose="variables",
                exposures=exposures[("variables", name)], priority=t.priority * c.priority,
                count=c.visits_per_night, min_spacing_min=c.min_spacing_min,
                phase_periods_d=tuple(v.period_d for v in stars), phase_epochs_jd=tuple(v.epoch_hjd for v in stars),
                phase_bins=c.phase_bins, notes=(f"{len(stars)} RR Lyrae",)))
    return out


def check_fits_the_night(campaign: Campaign, exposures: dict, sky) -> None:
    """A visit longer than the campaign's longest usable window (of the :class:`NightSky`
    ``sky``) is an error."""
    longest = float(np.nanmax(np.where(np.isfinite(sky.window_start_jd),
                                       sky.window_end_jd - sky.window_start_jd, 0.0))) * 86400.0
    for key, exps in exposures.items():
        need = body_s(campaign.site, exps)
        if need > longest:
            what = (f"[cadence] visits of {key[1]}" if key[0] == "variables"
                    else f"[[goals]] #{key[0] + 1} ({campaign.goals[key[0]].level}) for {key[1]}")
            raise CampaignError(f"{what} take {need / 3600:.1f} h, longer than the longest usable night of the "
                                f"campaign ({longest / 3600:.1f} h): lower the S/N goal or split it over visits",
                                campaign.source)


def night_index(campaign: Campaign, night: dt.date) -> int:
    """Where ``night`` falls among the campaign's nights; a :class:`CampaignError` if it is not one."""
    if night not in campaign.nights:
        raise CampaignError(f"{night} is not a night of the campaign ({campaign.nights[0]} to "
                            f"{campaign.nights[-1]})", campaign.source)
    return campaign.nights.index(night)


def plan_campaign_night(campaign: Campaign, night: dt.date, seeing_arcsec: float | None = None):
    """The plan of one campaign night, the campaign planned up to it (earlier nights'
    progress counts), and the requests it was planned from."""
    plan, requests, _covered = plan_through_night(campaign, night, seeing_arcsec)
    return plan, requests


def plan_through_night(campaign: Campaign, night: dt.date, seeing_arcsec: float | None = None):
    """The campaign planned from its first night up to ``night`` (earlier nights' progress
    counts).  Returns that night's plan, its requests, and the phase bins covered before it."""
    from dataclasses import replace

    k = night_index(campaign, night)
    # The whole campaign's nights (the goals' urgency counts the nights left), stopping after ``night``:
    # the night is planned exactly as ``plan_campaign`` plans it.
    state: dict = {"stop_after": k}
    plan = plan_campaign(campaign, seeing_arcsec=seeing_arcsec, forecast=False, _state=state)
    return plan.nights[k], list(plan.requests[k]), state["covered_before_last"]


def plan_campaign(campaign: Campaign, *, seeing_arcsec: float | None = None, forecast: bool = True,
                  _state: dict | None = None) -> CampaignPlan:
    """Plan every night of the campaign, then forecast the coverage and period recovery."""
    site, constraints = campaign.site, campaign.constraints
    seeing = seeing_arcsec or campaign.seeing_arcsec or site.sky.typical_seeing_arcsec
    frame = night_sky(site, campaign.nights, constraints)  # the Sun and Moon once for the campaign
    exposures = goal_exposures(campaign, seeing)
    check_fits_the_night(campaign, exposures, frame)
    done: dict = {}
    covered: dict[str, np.ndarray] = {}
    plans, reqs = [], []
    # Dark nights left (Moon ≤ 25 % lit or below the horizon much of the night): the
    # goals' urgency counts them down.  Illumination at the middle of each night.
    lit = np.asarray(frame.moon_illumination, dtype=float)
    n = len(campaign.nights)
    for k, night in enumerate(campaign.nights):
        urgency = {}
        for i, g in enumerate(campaign.goals):
            nights_left = np.sum(lit[k:] <= 0.25) if g.dark else n - k
            for name in g.targets:
                left = g.visits - done.get((i, name), 0)
                urgency[(i, name)] = 1.0 + left / max(float(nights_left), 1.0)
        requests = night_requests(campaign, exposures, done, urgency)
        if _state is not None:
            _state["covered_before_last"] = {key: cov.copy() for key, cov in covered.items()}
        plan = plan_night(site, constraints, requests, night, float(frame.window_start_jd[k]),
                          float(frame.window_end_jd[k]), frame.ephemeris, seeing_arcsec=seeing,
                          covered_bins=covered)
        plan = _prefix_ids(plan, night)
        for v in plan.visits:
            for i, g in enumerate(campaign.goals):
                if v.request_key == f"{v.target}/{g.level}-{g.filter}":
                    done[(i, v.target)] = done.get((i, v.target), 0) + 1
        _update_coverage(covered, requests, plan)
        plans.append(plan)
        reqs.append(tuple(requests))
        if _state is not None and k == _state.get("stop_after"):
            break
    warnings = []
    for i, g in enumerate(campaign.goals):
        for name in g.targets:
            got = done.get((i, name), 0)
            if got < g.visits:
                warnings.append(f"goal {g.level} S/N {g.snr:g} in {g.filter} for {name}: {got} of {g.visits} "
                                f"visit(s) planned — unreachable in these nights under its constraints")
    coverage, recovery = ({}, {})
    if forecast and campaign.variables and campaign.cadence is not None:
        coverage, recovery = forecast_variables(campaign, plans, exposures)
    return CampaignPlan(campaign, tuple(plans), tuple(reqs), coverage, recovery, tuple(warnings))


def _prefix_ids(plan: NightPlan, night: dt.date) -> NightPlan:
    """Ids that say what each visit is (:mod:`planner.scheduling.visit_ids`)."""
    from dataclasses import replace

    from planner.scheduling.visit_ids import assign_ids

    return replace(plan, visits=tuple(assign_ids(plan.visits, night)))


def _update_coverage(covered, requests, plan):
    for q in requests:
        if not q.phase_periods_d:
            continue
        p, e = np.array(q.phase_periods_d), np.array(q.phase_epochs_jd)
        cov = covered.setdefault(q.key, np.zeros((len(p), q.phase_bins), bool))
        for v in plan.visits:
            if v.request_key == q.key:
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
        jd = np.array([0.5 * (v.science_start_jd + v.end_jd) for p in plans for v in p.visits
                       if v.request_key == f"{name}/variables"])
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
