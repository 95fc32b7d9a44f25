"""An accepted re-plan kept in the logbook, so the app follows it again after a restart.

When the observer accepts a re-plan, its visits and gaps are stored in the logbook's
``meta`` table under ``accepted_plan/<night>`` (JSON of the plan's own fields, times as
JD), in the same kind of committed transaction as every other record.  Opening the
night again, the app reads it back over the campaign's plan of that night (the window,
constraints and bound stay the campaign's).  A record that cannot be read is reported
and ignored: the campaign's plan is shown.
"""

from __future__ import annotations

import json
from dataclasses import asdict, replace

META_PREFIX = "accepted_plan/"


def meta_key(night) -> str:
    return f"{META_PREFIX}{night}"


def plan_to_json(plan, now_jd: float) -> str:
    """The accepted plan's visits, gaps, closed periods and seeing, as JSON."""
    return json.dumps({"now_jd": now_jd, "seeing_arcsec": plan.seeing_arcsec,
                       "closed": [list(c) for c in plan.closed],
                       "visits": [asdict(v) for v in plan.visits],
                       "gaps": [asdict(g) for g in plan.gaps]},
                      default=lambda o: o.item() if hasattr(o, "item") else str(o))  # numpy scalars


def plan_from_json(text: str, campaign_plan):
    """The accepted plan over ``campaign_plan`` (the campaign's plan of the same night)."""
    from planner.scheduling.night_plan import Gap
    from planner.scheduling.visits import Exposure, Visit

    data = json.loads(text)
    visits = []
    for d in data["visits"]:
        d = dict(d)
        d["exposures"] = tuple(Exposure(**e) for e in d["exposures"])
        d["notes"] = tuple(d.get("notes", ()))
        visits.append(Visit(**d))
    gaps = tuple(Gap(**g) for g in data["gaps"])
    return replace(campaign_plan, visits=tuple(visits), gaps=gaps, seeing_arcsec=float(data["seeing_arcsec"]),
                   closed=tuple(tuple(c) for c in data["closed"]))


def read_accepted_plan(path, night, campaign_plan):
    """(plan, None), or (None, why) when the logbook has a record it cannot read; (None, None)
    when there is none."""
    from pathlib import Path

    from planner.logbook.store import Logbook

    if campaign_plan is None or not Path(path).is_file():
        return None, None
    with Logbook(path, readonly=True) as book:
        text = book.get_meta(meta_key(night))
    if text is None:
        return None, None
    try:
        return plan_from_json(text, campaign_plan), None
    except (ValueError, TypeError, KeyError) as exc:
        return None, f"the re-plan accepted earlier could not be read back ({exc}): the campaign's plan is shown"
