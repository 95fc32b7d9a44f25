"""Visit ids say what a visit is and stay the same in every command: campaign,
schedule --campaign, --record, replan and the logbook."""

from __future__ import annotations

import datetime as dt
import json
import shutil

import pytest

from planner.cli import main
from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.logbook.store import Logbook
from planner.scheduling.campaign import plan_campaign, plan_through_night
from planner.scheduling.replan import replan_night
from planner.scheduling.visit_ids import assign_ids, same_visit_id, target_code
from planner.scheduling.visits import Exposure, Visit

DEMO = targets_dir() / "demo" / "campaign.toml"
NIGHT = dt.date(2027, 1, 5)


def _v(target, purpose, filt, start, vid=""):
    return Visit(vid, f"{target}/{purpose}", target, 0.0, 0.0, purpose, (Exposure(filt, 1, 60.0),), start,
                 start, start + 0.01, 1.0, 0.0, 1.0, 1.0, 1.0, 90.0)


def test_ids_from_what_the_visit_is():
    assert [target_code(n) for n in ("NGC 1851", "IC 4499", "47 Tuc", "M 3", "Pal 5")] == [
        "N1851", "I4499", "47Tuc", "M3", "Pal5"]
    visits = [_v("NGC 1851", "variables", "V", 0.2), _v("NGC 104", "tip", "I", 0.1),
              _v("NGC 1851", "variables", "V", 0.3), _v("NGC 104", "turnoff", "g2", 0.4)]
    assert [v.id for v in assign_ids(visits, NIGHT)] == [
        "0105-N1851-var1", "0105-N104-tipI1", "0105-N1851-var2", "0105-N104-tog2-1"]
    # after ordinals already used that night, never again the same id
    used = {"0105-N1851-var1", "0105-N1851-var7", "0105-N1851-var12x"}
    assert [v.id for v in assign_ids(visits[:1], NIGHT, used)] == ["0105-N1851-var8"]
    assert same_visit_id("n1851-VAR3", "0105-N1851-var3") and same_visit_id("0105-N1851-var3", "0105-N1851-var3")
    assert not same_visit_id("var3", "0105-N1851-var3")


@pytest.fixture(scope="module")
def campaign():
    return read_campaign_file(DEMO)


def _ids(plan):
    return [(v.id, v.target, v.purpose, round(v.start_jd, 8)) for v in plan.visits]


def test_campaign_and_schedule_campaign_give_the_first_night_the_same_visits_and_ids(campaign):
    full = plan_campaign(campaign, forecast=False)
    for k in (0, 4):
        alone, _, _ = plan_through_night(campaign, campaign.nights[k])
        assert _ids(alone) == _ids(full.nights[k])
        ids = [v.id for v in alone.visits]
        assert len(set(ids)) == len(ids) and all(i.startswith(f"{campaign.nights[k]:%m%d}-") for i in ids)


def test_record_is_idempotent_and_replan_never_reuses_an_id(tmp_path, capsys):
    camp = tmp_path / "camp"
    shutil.copytree(DEMO.parent, camp)
    c = str(camp / "campaign.toml")
    for _ in range(2):
        assert main(["schedule", "--campaign", c, "--date", str(NIGHT), "--record", "--json"]) == 0
        plan = json.loads(capsys.readouterr().out)
    with Logbook(camp / "logbook.sqlite") as book:
        stored = book.planned_visits(str(NIGHT))
        recorded = book.planned_ids(str(NIGHT))
    assert len(stored) == sum(len(v["exposures"]) for v in plan["visits"])
    assert recorded == {v["id"] for v in plan["visits"]}
    # a closure makes the re-plan place new visits: their ids are new to the night
    assert main(["replan", "--campaign", c, "--date", str(NIGHT), "--now", "00:30", "--closed", "00:30-01:30",
                 "--json"]) == 0
    after = json.loads(capsys.readouterr().out)
    new = after["replan"]["new_visits"]
    assert new and not set(new) & recorded
    ids = [v["id"] for v in after["visits"]]
    assert len(ids) == len(set(ids))


def test_partial_visit_owes_its_frames_to_the_replan(campaign):
    original, _, _ = plan_through_night(campaign, NIGHT)
    v = next(v for v in original.visits if v.exposures[0].frames >= 2)
    now = v.end_jd + 1e-4
    e = v.exposures[0]

    class Entry:  # one frame of the visit's first line, logged under another name of the cluster
        id, target, filter, exposure_s, frames, time_jd = 1, v.target.replace("NGC ", "NGC0"), e.filter, \
            e.exposure_s, 1, v.science_start_jd

    result = replan_night(campaign, NIGHT, now, logged=(Entry,))
    got = {x.id: x for x in result.plan.visits}
    assert (got[v.id].status, got[v.id].status_source) == ("partial", "logbook")
    assert any("partly done" in r for r in result.reasons)
    owed = [x for x in result.plan.visits if x.status == "planned" and x.request_key.endswith(f"owed by {v.id}")]
    assert len(owed) == 1  # the owed frames are exactly what is missing, under a new id
    assert owed[0].exposures == (Exposure(e.filter, e.frames - 1, e.exposure_s),) + v.exposures[1:]
    assert owed[0].id not in {o.id for o in original.visits} and owed[0].target == v.target
