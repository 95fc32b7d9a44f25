"""Re-planning the rest of a night from a given moment.

Rules:

* **Nothing before ``now`` changes.**  The night's plan is made exactly as
  ``gcplan schedule`` makes it; each of its visits that started before ``now``
  keeps its times and gets a status, and says who says so (``status_source``):

  - ``done`` — the logbook holds its frames (:func:`planner.model.evidence.match_visits`:
    same cluster, filter, exposure within 10 %, inside the visit's span), source
    ``logbook``; or the observer said so (``--done``), source ``observer``;
  - ``partial`` — the logbook holds some of its frames (source ``logbook``), or the
    observer says it stopped part-way (``stopped``, source ``observer``, even while its
    time runs): it keeps its place and the frames still owed are planned again;
  - ``under way`` — started, not finished, and not done;
  - ``missed`` — inside a closed period, skipped by the observer (``skipped``), or
    not among what the logbook or the observer gives as taken when either gives an
    account of the night: its request wants time again;
  - ``unknown`` — nothing says (no frame of the night in the logbook, no ``--done``):
    it keeps its place, nothing is claimed; ``assume_done`` makes these ``done``
    with source ``assumed``.
* **What changed:** closed periods after ``now``, a new seeing (every goal's
  frames recomputed by the exposure core; goals whose seeing limit is now
  exceeded wait for another night), a missed or partial visit (its request
  wants time again).  If nothing changed, the original plan is returned as it
  was: the same inputs always give the same plan.
* Otherwise the rest of the night is planned again from ``now`` by the same
  planner, with the done, partial, unknown and under-way visits fixed and the telescope
  starting where the last of them leaves it.  New visits get ids never used that
  night (:mod:`planner.scheduling.visit_ids`; ``used_ids`` holds those of the
  recorded plan).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, replace

from planner.model.evidence import match_visits
from planner.model.names import normalize_name
from planner.scheduling.campaign_nights import CADENCE_SPREAD
from planner.scheduling.night import plan_night
from planner.scheduling.night_plan import NightPlan
from planner.scheduling.visit_ids import assign_ids, same_visit_id
from planner.scheduling.visits import Exposure
from planner.sky.nights import iso_utc

#: How each source of a status reads in the texts.
STATUS_SOURCE_WORDS = {"logbook": "logbook", "observer": "--done", "assumed": "assumed"}
#: Joins a request's key and a partial visit's id in the key of the request for its owed frames.
OWED = " owed by "
#: The statuses a past visit can have, in the order the texts list them.
PAST_STATUSES = ("done", "partial", "under way", "missed", "unknown")


@dataclass(frozen=True)
class ReplanResult:
    plan: NightPlan
    original: NightPlan
    now_jd: float
    reasons: tuple[str, ...]  # what changed; empty: the original plan stands

    def summary(self) -> dict:
        past = [v for v in self.plan.visits if v.status in PAST_STATUSES]
        by = {s: [v.id for v in past if v.status == s] for s in PAST_STATUSES}
        sources = {src: [v.id for v in past if v.status_source == src] for src in STATUS_SOURCE_WORDS}
        return {"now": iso_utc(self.now_jd), "changed": list(self.reasons), "replanned": bool(self.reasons),
                "done": by["done"], "partial": by["partial"], "under_way": by["under way"],
                "missed": by["missed"], "unknown": by["unknown"], "status_sources": sources,
                "new_visits": [v.id for v in self.plan.visits if v.status == "planned"]}

    def summary_lines(self) -> list[str]:
        s = self.summary()
        head = (f"re-planned from {s['now']}: " + "; ".join(self.reasons)) if self.reasons else (
            f"nothing changed at {s['now']}: the plan stands as it was")
        past = [v for v in self.plan.visits if v.status in PAST_STATUSES]
        counts = []
        for status in PAST_STATUSES:
            here = [v for v in past if v.status == status]
            if not here:
                continue
            src = {STATUS_SOURCE_WORDS[k]: sum(v.status_source == k for v in here) for k in STATUS_SOURCE_WORDS}
            said = ", ".join(f"{n} {w}" for w, n in src.items() if n)
            counts.append(f"{status} {len(here)}" + (f" ({said})" if said else ""))
        lines = [head, "before now: " + ("; ".join(counts) if counts else "no visit"),
                 f"planned from now: {len(s['new_visits'])}"]
        if s["unknown"]:
            lines.append("unknown: no frames of them in the logbook and not given with --done; "
                         "they keep their place (--done ID, or --assume-done, counts them done)")
        return lines


def replan_night(campaign, night: dt.date, now_jd: float, *, closed=(), done=(), logged=(),
                 seeing_arcsec: float | None = None, key=normalize_name, logged_closed=(),
                 assume_done: bool = False, used_ids=(), skipped=(), base=None, stopped=(),
                 cache=None, store=None) -> ReplanResult:
    """The night's plan, with everything from ``now_jd`` on planned again (see the module docstring).

    ``done``: visit ids (or target names) the observer gives as taken; ``logged``: the
    night's log entries (``id``, ``target``, ``filter``, ``exposure_s``, ``frames``,
    ``time_jd``), target names compared by ``key``; ``closed`` and ``logged_closed``:
    closed periods given by the observer and read from the logbook; ``skipped``: visit
    ids the observer gives as not taken; ``stopped``: visit ids the observer gives as stopped
    part-way (the frames the logbook holds of them count, the rest are owed); ``base``: the
    plan followed so far when it is not the campaign's (an earlier re-plan the observer
    accepted), else the campaign's plan; ``cache``: the campaign's nights kept for re-use
    (:mod:`planner.scheduling.plan_cache`); ``store``: the Sun and Moon samples kept between
    runs (the same values either way).
    """
    from planner.scheduling.campaign import add_spare_work, covered_before, goal_exposures, is_fill, night_entry
    from planner.scheduling.campaign_nights import gaps_with_reasons
    from planner.scheduling.night_sky import night_ephemeris

    planned_seeing = campaign.seeing_arcsec or campaign.site.sky.typical_seeing_arcsec
    entry = night_entry(campaign, night, cache=cache, store=store)
    original, requests, covered = entry.plan, list(entry.requests), covered_before(entry)
    if base is not None:
        original = base
    closed = tuple(sorted(tuple(closed) + tuple(logged_closed)))
    past, evidence = _past_statuses(original, now_jd, closed, logged_closed, done, logged, key, assume_done,
                                    skipped, stopped)
    reasons = []
    unmatched = [d for d in done if not any(same_visit_id(d, v.id) or key(v.target) == key(d) for v in past)]
    notes = tuple(f"--done {d!r} names no visit of this plan before now (ids as the night sheet shows them, "
                  "e.g. N1851-var3, or a target name)" for d in unmatched)
    missed = [v for v in past if v.status == "missed"]
    partial = [v for v in past if v.status == "partial"]
    if missed:
        reasons.append(f"{len(missed)} visit(s) before now not done ({', '.join(v.id for v in missed)})")
    if partial:
        reasons.append(f"{len(partial)} visit(s) partly done ({', '.join(v.id for v in partial)}): "
                       "the frames still owed planned again")
    w1 = original.window_end_jd
    if any(b > now_jd and a < w1 for a, b in closed):
        reasons.append("closed " + ", ".join(f"{iso_utc(a)}–{iso_utc(b)}" for a, b in closed if b > now_jd))
    seeing = planned_seeing if seeing_arcsec is None else float(seeing_arcsec)
    if abs(seeing - planned_seeing) > 1e-9:
        reasons.append(f"seeing {seeing:g}″ instead of {planned_seeing:g}″: exposures recomputed")
    if not reasons:
        keep = {v.id: v for v in past}
        visits = tuple(keep.get(v.id, v) for v in original.visits)
        return ReplanResult(replace(original, visits=visits, closed=closed, warnings=original.warnings + notes),
                            original, now_jd, ())
    requests = requests + _owed_requests(partial, requests, evidence)
    if seeing != planned_seeing:
        exposures = goal_exposures(campaign, seeing)
        requests = [replace(q, exposures=_new_exposures(q, exposures, campaign)) for q in requests]
    fixed = tuple(v for v in past if v.status != "missed")
    start = max([now_jd] + [v.end_jd for v in fixed])
    # The goals (and the frames partial visits owe) first, spare-time work around them after,
    # as the campaign plans a night.
    goals = [_respaced(q, fixed, start, original.window_end_jd, campaign) for q in requests if not is_fill(q)]
    spare = [q for q in requests if is_fill(q)]
    # The night's own Sun and Moon: kept with its entry, else made (the same values).
    eph = entry.ephemeris if entry.ephemeris is not None else night_ephemeris(campaign.site, night, store)
    w0, w1 = original.window_start_jd, original.window_end_jd
    plan = plan_night(campaign.site, campaign.constraints, goals, night, w0, w1, eph, closed=closed,
                      seeing_arcsec=seeing, fixed=fixed, not_before_jd=start, covered_bins=covered,
                      id_offset=len(past))
    if spare:
        visits, value = add_spare_work(campaign, night, w0, w1, eph, plan.visits, spare, covered, seeing,
                                       closed=closed, not_before_jd=start, goal_requests=goals)
        plan = replace(plan, visits=tuple(sorted(visits, key=lambda v: v.start_jd)), spare_value=value)
    used = set(used_ids) | {v.id for v in original.visits}
    kept = {v.id for v in fixed}
    new = assign_ids([v for v in plan.visits if v.id not in kept], night, used)
    visits = tuple(sorted(list(fixed) + new + missed, key=lambda v: v.start_jd))
    # The gaps of the night as it now stands (both passes' visits), each with its reason.
    gaps = gaps_with_reasons(campaign.site, campaign.constraints, campaign.targets, eph, w0, w1,
                             [v for v in visits if v.status != "missed"], closed)
    return ReplanResult(replace(plan, visits=visits, gaps=gaps, warnings=plan.warnings + notes), original, now_jd,
                        tuple(reasons))


def past_statuses(plan, now_jd: float, *, closed=(), logged_closed=(), done=(), logged=(),
                  key=normalize_name, assume_done: bool = False, skipped=(), stopped=()) -> list:
    """The visits of ``plan`` that started before ``now_jd``, each with the status and source
    a re-plan from ``now_jd`` gives it (the rules of the module docstring), without re-planning:
    what the app shows of the night so far."""
    closed = tuple(sorted(tuple(closed) + tuple(logged_closed)))
    return _past_statuses(plan, now_jd, closed, logged_closed, done, logged, key, assume_done, skipped,
                          stopped)[0]


def _past_statuses(original, now_jd, closed, logged_closed, done, logged, key, assume_done, skipped=(),
                   stopped=()):
    """The original plan's visits that started before ``now_jd``, each with its status and source."""
    before = [v for v in original.visits if v.start_jd < now_jd]
    evidence = match_visits(before, logged, key)
    done_keys = {key(d) for d in done}
    told = bool(done) or bool(logged)
    out = []
    for v in before:
        said = any(same_visit_id(d, v.id) for d in done) or key(v.target) in done_keys
        shut = [c for c in closed if v.start_jd < c[1] and v.end_jd > c[0]]
        found = evidence[v.id].status
        if found == "done":
            status, source = "done", "logbook"
        elif any(same_visit_id(s, v.id) for s in skipped):
            status, source = "missed", "observer"
        elif any(same_visit_id(s, v.id) for s in stopped):
            status, source = "partial", "observer"
        elif said:
            status, source = "done", "observer"
        elif v.end_jd > now_jd and not shut:
            status, source = "under way", None
        elif found == "partial":
            status, source = "partial", "logbook"
        elif shut:
            status, source = "missed", ("logbook" if all(c in logged_closed for c in shut) else "observer")
        elif told:
            status, source = "missed", ("logbook" if logged else "observer")
        elif assume_done:
            status, source = "done", "assumed"
        else:
            status, source = "unknown", None
        if status == "partial" and source == "observer" and v.end_jd > now_jd:
            v = replace(v, end_jd=now_jd)  # stopped now: the rest of its time is free again
        out.append(replace(v, status=status, status_source=source))
    return out, evidence


def _respaced(q, fixed, start_jd, end_jd, campaign):
    """A cadence request with its spacing fitted to what is left of the night: the campaign
    spread a night's visits over the cluster's hours, and after a closure or late in the
    night the visits still wanted keep that spread over the time that remains (never
    closer than the campaign's minimum spacing)."""
    c = campaign.cadence
    if c is None or q.min_spacing_min <= 0:
        return q
    left = q.count - sum(1 for v in fixed if v.request_key == q.key)
    if left <= 1:
        return q
    fit = CADENCE_SPREAD * (end_jd - start_jd) * 1440.0 / (left - 1)
    return replace(q, min_spacing_min=max(c.min_spacing_min, min(q.min_spacing_min, fit)))


def _owed_requests(partial, requests, evidence):
    """A request per partial visit for the frames it still owes (its other wishes kept)."""
    by_key = {q.key: q for q in requests}
    out = []
    for v in partial:
        q = by_key.get(v.request_key)
        owed = tuple(Exposure(o.filter, o.frames, o.exposure_s) for o in evidence[v.id].owed)
        if q is None or not owed:
            continue
        # The owed frames are exactly those still missing: not sized again where they land.
        out.append(replace(q, key=f"{q.key}{OWED}{v.id}", exposures=owed, count=1, min_spacing_min=0.0,
                           snr_goal=None,
                           notes=(f"the frames {v.id} still owes",) + tuple(q.notes)))
    return out


def _new_exposures(q, exposures, campaign):
    if OWED in q.key:  # the frames a partial visit owes match those it already has
        return q.exposures
    if q.purpose == "variables":
        return exposures.get(("variables", q.target), q.exposures)
    for i, g in enumerate(campaign.goals):
        if q.key == f"{q.target}/{g.level}-{g.filter}":
            return exposures.get((i, q.target), q.exposures)
    return q.exposures
