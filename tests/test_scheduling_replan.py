"""Re-planning from a moment: the past never changes, the same inputs give the same plan,
weather and seeing are honoured, and bad --now/--closed are one-line errors."""

from __future__ import annotations

import datetime as dt

import pytest

from planner.cli import main
from planner.commands.replan import parse_closed, parse_now
from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.scheduling.campaign import plan_through_night
from planner.scheduling.replan import replan_night
from planner.sky.nights import iso_utc

from helpers.validate import validate_plan

DEMO = targets_dir() / "demo" / "campaign.toml"
NIGHT = dt.date(2027, 1, 8)


@pytest.fixture(scope="module")
def setup():
    campaign = read_campaign_file(DEMO)
    original, requests, _ = plan_through_night(campaign, NIGHT)
    return campaign, original, requests


def _key(v):
    return (v.id, v.target, v.purpose, round(v.start_jd, 9), round(v.end_jd, 9), v.exposures)


def test_nothing_changed_gives_the_same_plan(setup):
    campaign, original, _ = setup
    now = original.visits[len(original.visits) // 2].start_jd + 1e-4
    result = replan_night(campaign, NIGHT, now)
    assert not result.reasons
    assert [_key(v) for v in result.plan.visits] == [_key(v) for v in original.visits]
    # nothing logged and nothing said: the past is unknown, not claimed done
    past = [v for v in result.plan.visits if v.start_jd < now and v.end_jd <= now]
    assert past and {(v.status, v.status_source) for v in past} == {("unknown", None)}
    assumed = replan_night(campaign, NIGHT, now, assume_done=True)
    assert {(v.status, v.status_source) for v in assumed.plan.visits if v.end_jd <= now} == {("done", "assumed")}
    again = replan_night(campaign, NIGHT, now)
    assert [_key(v) for v in again.plan.visits] == [_key(v) for v in result.plan.visits]


def test_weather_loss_never_touches_the_past(setup):
    campaign, original, requests = setup
    zone = campaign.site.location.timezone
    now = original.visits[8].end_jd + 2e-4
    closed = (now, now + 1.5 / 24)
    result = replan_night(campaign, NIGHT, now, closed=(closed,))
    assert result.reasons
    before = [_key(v) for v in original.visits if v.start_jd < now]
    after = [_key(v) for v in result.plan.visits if v.start_jd < now]
    assert after == before
    new = [v for v in result.plan.visits if v.status == "planned"]
    assert new and all(v.start_jd >= now for v in new)
    assert all(v.end_jd <= closed[0] or v.start_jd >= closed[1] for v in new)
    assert validate_plan(campaign.site, result.plan, requests) == []
    assert any(g.reason == "closed" for g in result.plan.gaps)
    # the same inputs again: the same re-plan
    again = replan_night(campaign, NIGHT, now, closed=(closed,))
    assert [_key(v) for v in again.plan.visits] == [_key(v) for v in result.plan.visits]
    assert parse_now(iso_utc(now), NIGHT, zone) == pytest.approx(now, abs=1.0 / 86400)


def test_done_list_and_missed_visits(setup):
    campaign, original, requests = setup
    now = original.visits[5].end_jd + 1e-4
    done = [v.id for v in original.visits[:2]] + [original.visits[2].id.split("-", 1)[1].upper()]
    result = replan_night(campaign, NIGHT, now, done=tuple(done))
    status = {v.id: v.status for v in result.plan.visits if v.start_jd < now}
    assert [status[v.id] for v in original.visits[:3]] == ["done"] * 3  # the night sheet's form, any case
    assert {v.status_source for v in result.plan.visits[:3]} == {"observer"}
    assert {status[v.id] for v in original.visits[3:6]} == {"missed"}
    assert validate_plan(campaign.site, result.plan, requests) == []


def test_worse_seeing_recomputes_exposures_and_defers_tip(setup):
    campaign, original, _ = setup
    now = original.window_start_jd + 1e-3
    result = replan_night(campaign, NIGHT, now, seeing_arcsec=2.0)
    assert any("seeing" in r for r in result.reasons)
    # the tip goal asks for seeing ≤ 1.2″ (campaign file): none after now
    assert not [v for v in result.plan.visits if v.purpose == "tip" and v.status == "planned"]
    old = {v.request_key: v.exposures for v in original.visits}
    new = {v.request_key: v.exposures for v in result.plan.visits if v.status == "planned"}
    common = [k for k in new if k in old]
    assert common
    # the CCD equation: a wider seeing disc gathers more sky, so never less exposure for the same
    # S/N: a goal's visit in all, a spare-time frame each (their runs are as long as the time
    # they fill, so their frame counts differ)
    from planner.scheduling.night_plan import FILL_SUFFIX

    def shutter(k, exposures):
        return max(e.exposure_s for e in exposures) if k.endswith(FILL_SUFFIX) else sum(e.frames * e.exposure_s
                                                                           for e in exposures)

    assert all(shutter(k, new[k]) >= shutter(k, old[k]) for k in common), [
        (k, old[k], new[k]) for k in common if shutter(k, new[k]) < shutter(k, old[k])]


def test_clock_times_and_iso_parse():
    zone = "America/Santiago"
    a, b = parse_closed("23:30-00:45", NIGHT, zone)
    assert (b - a) * 1440 == pytest.approx(75, abs=1e-3)
    assert iso_utc(a) == "2027-01-09T02:30:00Z"  # January: Chile on UTC−3 (summer time)
    a2, b2 = parse_closed("2027-01-09T02:30Z/2027-01-09T03:45Z", NIGHT, zone)
    assert (a2, b2) == pytest.approx((a, b), abs=1e-6)


@pytest.mark.parametrize("opts, word", [
    (["--now", "tonight"], "--now"),
    (["--now", "2027-01-20T03:00Z"], "not in the night"),
    (["--now", "01:00", "--closed", "3am-4am"], "--closed"),
    (["--now", "01:00", "--closed", "02:00-01:00"], "not after"),
    (["--now", "25:10"], "clock time"),
    (["--now", "01:00", "--seeing", "25"], "--seeing must be a FWHM between 0.1 and 10 arcsec"),
])
def test_bad_now_and_closed_are_one_line_errors(capsys, opts, word):
    code = main(["replan", "--campaign", str(DEMO), "--date", str(NIGHT)] + opts)
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and err.startswith("gcplan: error:") and err.count("\n") == 1
    assert word in err


def test_night_outside_the_campaign_names_the_date_option(capsys):
    code = main(["replan", "--campaign", str(DEMO), "--date", "2027-03-01", "--now", "01:00"])
    _, err = capsys.readouterr()
    assert code == 2 and err.count("\n") == 1
    assert "--date 2027-03-01 is not a night of the campaign" in err and "campaign.toml" in err


def test_replan_command_json(capsys):
    import json

    code = main(["replan", "--campaign", str(DEMO), "--date", str(NIGHT), "--now", "01:30",
                 "--closed", "01:30-02:30", "--json"])
    out, _ = capsys.readouterr()
    assert code == 0
    data = json.loads(out)
    assert data["replan"]["replanned"] and set(data) >= {"night", "visits", "idle_minutes", "efficiency"}


def test_done_visits_and_weather_from_the_logbook(setup, tmp_path, capsys):
    import json

    from planner.logbook.store import Logbook, NewEntry

    campaign, original, _ = setup
    folder = tmp_path / "camp"
    folder.mkdir()
    src = DEMO.read_text().replace('"clusters.ecsv"', f'"{(DEMO.parent / "clusters.ecsv").as_posix()}"').replace(
        '"variables.ecsv"', f'"{(DEMO.parent / "variables.ecsv").as_posix()}"')
    (folder / "campaign.toml").write_text(src)
    now = original.visits[6].end_jd + 1e-4
    aliases = {"NGC 104": "47 Tuc", "NGC 362": "ngc0362"}  # as an observer might type them
    with Logbook(folder / "logbook.sqlite") as book:
        for v in original.visits[:2]:  # two of the first seven logged, every frame as planned
            for e in v.exposures:
                book.add_entry(NewEntry(time_jd=v.science_start_jd, target=aliases.get(v.target, v.target),
                                        filter=e.filter, exposure_s=e.exposure_s, frames=e.frames))
        third = original.visits[2]  # the wrong filter: no evidence
        other = next(f for f in campaign.site.filters if f != third.exposures[0].filter)
        book.add_entry(NewEntry(time_jd=third.science_start_jd, target=third.target, filter=other,
                                exposure_s=third.exposures[0].exposure_s, frames=third.exposures[0].frames))
        book.add_weather(now, "closed")
        book.add_weather(now + 0.04, "open")
    code = main(["replan", "--campaign", str(folder / "campaign.toml"), "--date", str(NIGHT),
                 "--now", iso_utc(now), "--json"])
    assert code == 0
    data = json.loads(capsys.readouterr().out)
    status = {v["id"]: (v["status"], v["status_source"]) for v in data["visits"]}
    assert [status[v.id] for v in original.visits[:2]] == [("done", "logbook")] * 2
    assert status[third.id] == ("missed", "logbook")
    assert all(status[v.id][0] == "missed" for v in original.visits[3:7])
    assert data["replan"]["status_sources"]["logbook"]
    assert "logbook" in data["replan"]["logbook"]
    assert any(g["reason"] == "closed" for g in data["gaps"])


def test_replan_reads_weather_closures_from_the_campaign_logbook(tmp_path, capsys):
    """`gcplan log weather closed/open` beside a campaign file closes that stretch in
    `gcplan replan`; nothing is planned inside it and nothing before --now moves."""
    import json
    import shutil

    camp = tmp_path / "camp"
    shutil.copytree(DEMO.parent, camp)
    campaign = str(camp / "campaign.toml")
    for state, when in (("closed", "2027-01-07T03:30:00Z"), ("open", "2027-01-07T04:30:00Z")):
        assert main(["log", "weather", state, "--time", when, "--campaign", campaign]) == 0
    capsys.readouterr()
    assert main(["schedule", "--campaign", campaign, "--date", "2027-01-06", "--json"]) == 0
    before = json.loads(capsys.readouterr().out)
    assert main(["replan", "--campaign", campaign, "--date", "2027-01-06",
                 "--now", "2027-01-07T03:00:00Z", "--json"]) == 0
    after = json.loads(capsys.readouterr().out)
    assert "logbook" in after["replan"]
    assert any(g["reason"] == "closed" and g["start"] == "2027-01-07T03:30:00Z" for g in after["gaps"])
    for v in after["visits"]:
        assert v["end"] <= "2027-01-07T03:30:00Z" or v["start"] >= "2027-01-07T04:30:00Z"
    past = [v for v in before["visits"] if v["start"] < "2027-01-07T03:00:00Z"]
    assert past and all(v in after["visits"] or any(
        w["id"] == v["id"] and w["start"] == v["start"] and w["end"] == v["end"] for w in after["visits"])
        for v in past)


def test_done_naming_no_visit_is_a_warning(setup):
    campaign, original, _ = setup
    now = original.visits[3].end_jd + 1e-4
    result = replan_night(campaign, NIGHT, now, done=(original.visits[0].id, "N9999-var1"))
    assert any("'N9999-var1' names no visit" in w for w in result.plan.warnings)
    assert not any(original.visits[0].id in w for w in result.plan.warnings)


def test_a_replan_keeps_the_night_used_and_its_gaps_true(setup):
    """Re-planned from mid-night (seeing changed), the rest of the night is as full as the
    campaign's own plan of it: goals first, spare-time work around them, and the gaps are
    those of the night as it now stands (not the goals' pass alone), each with a reason."""
    campaign, original, _ = setup
    now = original.visits[len(original.visits) // 2].start_jd + 1e-4

    def idle_after(plan):
        return sum(max(0.0, g.end_jd - max(g.start_jd, now)) * 1440.0 for g in plan.gaps if g.reason != "closed")

    result = replan_night(campaign, NIGHT, now, seeing_arcsec=1.2)
    assert result.reasons
    assert idle_after(result.plan) <= idle_after(original) + 20.0
    assert {g.reason for g in result.plan.gaps} <= {"goals met", "nothing observable", "closed"}
    busy = sorted((v.start_jd, v.end_jd) for v in result.plan.visits if v.status != "missed")
    for g in result.plan.gaps:  # a gap is time no kept visit takes
        assert not any(a < g.end_jd - 1e-9 and b > g.start_jd + 1e-9 for a, b in busy)
    assert not validate_plan(campaign.site, result.plan)
