"""Re-planning the rest of a night from a given moment.

Rules:

* **Nothing before ``now`` changes.**  The night's plan is made exactly as
  ``gcplan schedule`` makes it; its visits that started before ``now`` are kept
  with their times, marked *done*, *under way* (started, not finished) or
  *missed* (not done: not among the visits said to be done nor in the logbook
  when either says what was done, or — when neither does — inside a closed period).
* **What changed:** closed periods after ``now``, a new seeing (every goal's
  frames recomputed by the exposure core; goals whose seeing limit is now
  exceeded wait for another night), a missed visit (its request wants time
  again).  If nothing changed, the original plan is returned as it was: the
  same inputs always give the same plan.
* Otherwise the rest of the night is planned again from ``now`` by the same
  planner, with the done and under-way visits fixed and the telescope starting
  where the last of them leaves it.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, replace

from planner.scheduling.night import plan_night
from planner.scheduling.night_plan import NightPlan
from planner.sky.nights import iso_utc

#: A logbook entry counts for a planned visit when it starts this close to the visit (days).
LOG_MATCH_D = 10.0 / 1440.0


@dataclass(frozen=True)
class ReplanResult:
    plan: NightPlan
    original: NightPlan
    now_jd: float
    reasons: tuple[str, ...]  # what changed; empty: the original plan stands

    def summary(self) -> dict:
        by = {s: [v.id for v in self.plan.visits if v.status == s] for s in ("done", "under way", "missed")}
        return {"now": iso_utc(self.now_jd), "changed": list(self.reasons), "replanned": bool(self.reasons),
                "done": by["done"], "under_way": by["under way"], "missed": by["missed"],
                "new_visits": [v.id for v in self.plan.visits if v.status == "planned"]}

    def summary_lines(self) -> list[str]:
        s = self.summary()
        head = (f"re-planned from {s['now']}: " + "; ".join(self.reasons)) if self.reasons else (
            f"nothing changed at {s['now']}: the plan stands as it was")
        return [head, f"done {len(s['done'])}, under way {len(s['under_way'])}, missed {len(s['missed'])}, "
                      f"planned from now {len(s['new_visits'])}"]


def _norm(name: str) -> str:
    from planner.model.names import normalize_name

    return normalize_name(name)


def replan_night(campaign, night: dt.date, now_jd: float, *, closed=(), done=(), logged=(),
                 seeing_arcsec: float | None = None) -> ReplanResult:
    """The night's plan, with everything from ``now_jd`` on planned again (see the module docstring)."""
    from planner.scheduling.campaign import goal_exposures, plan_through_night

    planned_seeing = campaign.seeing_arcsec or campaign.site.sky.typical_seeing_arcsec
    original, requests, covered = plan_through_night(campaign, night)
    closed = tuple(sorted(closed))
    done_ids = {d for d in done}
    done_targets = {_norm(d) for d in done}
    told = bool(done) or bool(logged)
    logged_at = [(_norm(t), jd) for t, jd in logged]

    def overlaps_closed(v):
        return any(v.start_jd < b and v.end_jd > a for a, b in closed)

    past, reasons = [], []
    for v in original.visits:
        if v.start_jd >= now_jd:
            continue
        if told:
            hit = (v.id in done_ids or v.id.split("-")[-1] in done_ids or _norm(v.target) in done_targets
                   or any(t == _norm(v.target) and v.start_jd - LOG_MATCH_D <= jd <= v.end_jd + LOG_MATCH_D
                          for t, jd in logged_at))
        else:
            hit = not overlaps_closed(v)
        if v.end_jd > now_jd and not overlaps_closed(v):
            status = "done" if (told and hit) else "under way"
        else:
            status = "done" if hit else "missed"
        past.append(replace(v, status=status))
    missed = [v for v in past if v.status == "missed"]
    if missed:
        reasons.append(f"{len(missed)} visit(s) before now not done ({', '.join(v.id for v in missed)})")
    w1 = original.window_end_jd
    if any(b > now_jd and a < w1 for a, b in closed):
        reasons.append("closed " + ", ".join(f"{iso_utc(a)}–{iso_utc(b)}" for a, b in closed if b > now_jd))
    seeing = planned_seeing if seeing_arcsec is None else float(seeing_arcsec)
    if abs(seeing - planned_seeing) > 1e-9:
        reasons.append(f"seeing {seeing:g}″ instead of {planned_seeing:g}″: exposures recomputed")
    if not reasons:
        keep = {v.id: v for v in past}
        visits = tuple(keep.get(v.id, v) for v in original.visits)
        return ReplanResult(replace(original, visits=visits, closed=closed), original, now_jd, ())
    if seeing != planned_seeing:
        exposures = goal_exposures(campaign, seeing)
        requests = [replace(q, exposures=_new_exposures(q, exposures, campaign)) for q in requests]
    fixed = tuple(v for v in past if v.status in ("done", "under way"))
    start = max([now_jd] + [v.end_jd for v in fixed])
    plan = plan_night(campaign.site, campaign.constraints, requests, night, original.window_start_jd,
                      original.window_end_jd, _ephemeris(campaign, night), closed=closed, seeing_arcsec=seeing,
                      fixed=fixed, not_before_jd=start, covered_bins=covered, id_offset=len(past))
    prefix = f"{night:%m%d}-"
    new = [v if v.id.startswith(prefix) else replace(v, id=prefix + v.id) for v in plan.visits]
    visits = tuple(sorted(new + missed, key=lambda v: v.start_jd))
    return ReplanResult(replace(plan, visits=visits), original, now_jd, tuple(reasons))


def _new_exposures(q, exposures, campaign):
    if q.purpose == "variables":
        return exposures.get(("variables", q.target), q.exposures)
    for i, g in enumerate(campaign.goals):
        if q.key == f"{q.target}/{g.level}-{g.filter}":
            return exposures.get((i, q.target), q.exposures)
    return q.exposures


def _ephemeris(campaign, night):
    from planner.sky.ephemeris import build_ephemeris
    from planner.sky.nights import night_spans_jd

    s, e = night_spans_jd([night], campaign.site.location.timezone)
    return build_ephemeris(float(s[0]), float(e[0]))
