"""Campaign nights kept for re-use (planner.scheduling.plan_cache, planner.cache.plans):
a plan from the cache is the plan without it (same ids, same times, same JSON); anything that
shapes a night changes the key; a damaged or foreign file is ignored and rebuilt."""

from __future__ import annotations

import json
import math
import shutil
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import pytest

from planner.cli import main
from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.cache.plans import FilePlanCache, plan_cache_for
from planner.reports.schedule_report import schedule_json
from planner.scheduling.campaign import plan_campaign, plan_through_night
from planner.scheduling.plan_cache import MemoryCache, NightEntry, campaign_key, decode, encode
from planner.scheduling.replan import replan_night
from planner.sky import ephemeris

DEMO = targets_dir() / "demo" / "campaign.toml"


class Counting(MemoryCache):
    """A memory cache that counts what was asked and what was put."""

    def __init__(self):
        super().__init__()
        self.hits, self.puts = [], []

    def get(self, key, index):
        data = super().get(key, index)
        if data is not None:
            self.hits.append(index)
        return data

    def put(self, key, index, data):
        self.puts.append(index)
        super().put(key, index, data)


@pytest.fixture(scope="module")
def campaign():
    return read_campaign_file(DEMO)


@pytest.fixture(scope="module")
def uncached(campaign):
    """Nights 3 and 4 of the demo campaign planned without a cache."""
    return {k: plan_through_night(campaign, campaign.nights[k]) for k in (2, 3)}


def _text(site, plan) -> str:
    return json.dumps(schedule_json(site, plan), sort_keys=True)


def _times(plan):
    return [(v.id, v.request_key, v.start_jd, v.science_start_jd, v.end_jd, v.exposures) for v in plan.visits]


def _same(site, got, want):
    (p, r, c), (p0, r0, c0) = got, want
    assert _times(p) == _times(p0)  # the same ids and the very same times, not rounded
    assert _text(site, p) == _text(site, p0)
    assert r == r0
    assert sorted(c) == sorted(c0) and all(np.array_equal(c[k], c0[k]) for k in c)


def test_a_cached_night_is_the_night_planned_without_the_cache(campaign, uncached, tmp_path):
    store = FilePlanCache(tmp_path / "plans")
    _same(campaign.site, plan_through_night(campaign, campaign.nights[2], cache=store), uncached[2])
    assert sorted(p.name for p in (tmp_path / "plans").iterdir()) == [f"night-00{k}.json" for k in range(3)]
    # a new process: read from the files, night 3 planned from night 2's state alone
    fresh = Counting()
    for k in range(3):
        fresh.put(campaign_key(campaign, None), k, FilePlanCache(tmp_path / "plans").get(campaign_key(campaign, None), k))
    fresh.puts.clear()
    _same(campaign.site, plan_through_night(campaign, campaign.nights[3], cache=fresh), uncached[3])
    assert fresh.hits == [2] and fresh.puts == [3]
    again = Counting()
    again._entries = fresh._entries
    _same(campaign.site, plan_through_night(campaign, campaign.nights[3], cache=again), uncached[3])
    assert again.hits == [3] and again.puts == []  # a hit plans nothing


def test_the_whole_campaign_with_the_cache_is_the_campaign_without_it(campaign):
    short = replace(campaign, nights=campaign.nights[:3])
    cache = Counting()
    first = plan_campaign(short, cache=cache)
    again = plan_campaign(short, cache=cache)
    plain = plan_campaign(short)
    assert cache.puts == [0, 1, 2] and cache.hits == [0, 1, 2]
    for a, b in ((first, plain), (again, plain)):
        assert [_times(p) for p in a.nights] == [_times(p) for p in b.nights]
        assert (a.coverage, a.recovery, a.warnings) == (b.coverage, b.recovery, b.warnings)
        assert (a.usable_hours, a.required_hours, a.fill_hours) == (b.usable_hours, b.required_hours, b.fill_hours)


def test_an_edited_campaign_file_plans_every_night_again(campaign, tmp_path):
    folder = tmp_path / "demo"
    shutil.copytree(DEMO.parent, folder)
    path = folder / "campaign.toml"
    before = read_campaign_file(path)
    cache = Counting()
    plan_through_night(before, before.nights[1], cache=cache)
    path.write_text(path.read_text().replace("visits_per_night = 12", "visits_per_night = 10"))
    after = read_campaign_file(path)
    assert campaign_key(after, None) != campaign_key(before, None)
    cache.hits.clear()
    got = plan_through_night(after, after.nights[1], cache=cache)
    assert cache.hits == [] and cache.puts == [0, 1, 0, 1]  # nothing taken from the old campaign
    _same(after.site, got, plan_through_night(after, after.nights[1]))
    # every input that shapes a night is in the key: seeing, the site, a target, a variable
    assert campaign_key(before, 1.4) != campaign_key(before, None) != campaign_key(before, before.site.sky.typical_seeing_arcsec)
    t0 = before.targets[0]
    moved = replace(before, targets=(replace(t0, priority=3.0),) + before.targets[1:])
    assert campaign_key(moved, None) != campaign_key(before, None)
    v0 = before.variables[0]
    star = replace(before, variables=(replace(v0, period_d=v0.period_d + 1e-9),) + before.variables[1:])
    assert campaign_key(star, None) != campaign_key(before, None)


def test_a_replan_with_a_logged_frame_and_a_closure_is_the_same_with_the_cache(campaign, uncached):
    night = campaign.nights[2]
    original = uncached[2][0]
    now = original.visits[6].end_jd + 1e-4
    first = original.visits[0]
    e = first.exposures[0]
    logged = [SimpleNamespace(id=1, target=first.target, filter=e.filter, exposure_s=e.exposure_s,
                              frames=e.frames, time_jd=first.science_start_jd + 1e-4)]
    closed = ((now + 0.5 / 24, now + 1.5 / 24),)
    cache = MemoryCache()
    plan_through_night(campaign, campaign.nights[1], cache=cache)  # earlier nights kept
    for _ in range(2):  # cold for this night, then a hit
        got = replan_night(campaign, night, now, closed=closed, logged=logged, cache=cache)
        want = replan_night(campaign, night, now, closed=closed, logged=logged)
        assert got.reasons == want.reasons and got.reasons
        assert _times(got.plan) == _times(want.plan)
        assert [(v.status, v.status_source) for v in got.plan.visits] == [
            (v.status, v.status_source) for v in want.plan.visits]
        assert got.plan.visits[0].status == "done"


def test_a_replan_takes_the_nights_own_sun_and_moon_from_its_entry(campaign, uncached, tmp_path, monkeypatch):
    """With a Sun and Moon store, each kept night holds its own samples (noon to noon): the
    very values a re-plan would make again, with the store or without it; a re-plan from
    them is the re-plan without any cache."""
    from planner.cache.sun_moon import SunMoonStore
    from planner.scheduling.campaign import night_entry
    from planner.scheduling.night_sky import night_ephemeris

    sky = SunMoonStore(tmp_path / "sun-moon")
    folder = tmp_path / "plans"
    night = campaign.nights[2]
    made = night_entry(campaign, night, cache=FilePlanCache(folder), store=sky).ephemeris
    read = decode(FilePlanCache(folder).get(campaign_key(campaign, None), 2)).ephemeris  # from the file
    for fresh in (night_ephemeris(campaign.site, night, sky), night_ephemeris(campaign.site, night)):
        for kept in (made, read):
            for f in fresh.__dataclass_fields__:
                x, y = getattr(kept, f), getattr(fresh, f)
                assert np.array_equal(x, y) and np.asarray(x).dtype == np.asarray(y).dtype, f
    assert decode(FilePlanCache(folder).get(campaign_key(campaign, None), 1)).ephemeris.jd0 < read.jd0
    now = uncached[2][0].visits[6].end_jd + 1e-4
    closed = ((now + 0.5 / 24, now + 1.5 / 24),)
    got = replan_night(campaign, night, now, closed=closed, cache=FilePlanCache(folder), store=sky)
    want = replan_night(campaign, night, now, closed=closed)
    assert got.reasons == want.reasons and got.reasons
    assert _times(got.plan) == _times(want.plan)
    assert _text(campaign.site, got.plan) == _text(campaign.site, want.plan)
    # A store that keeps nothing (its folder cannot be made): no year is made again for each
    # night; the entry keeps no samples and a re-plan makes them, to the same plan.
    blocker = tmp_path / "a file"
    blocker.write_text("x")
    calls = []
    made = ephemeris.sun_moon_samples
    monkeypatch.setattr(ephemeris, "sun_moon_samples", lambda jd: calls.append(len(jd)) or made(jd))
    kept = night_entry(campaign, night, cache=MemoryCache(), store=SunMoonStore(blocker / "sun-moon"))
    monkeypatch.undo()
    assert kept.ephemeris is None and len(calls) == 1  # the campaign's span once, no night's own
    again = replan_night(campaign, night, now, closed=closed, cache=MemoryCache(),
                         store=SunMoonStore(blocker / "sun-moon"))
    assert _times(again.plan) == _times(want.plan)


def test_damaged_or_foreign_files_are_ignored_and_rebuilt(campaign, uncached, tmp_path):
    folder = tmp_path / "plans"
    plan_through_night(campaign, campaign.nights[2], cache=FilePlanCache(folder))
    good = (folder / "night-002.json").read_text()
    key = campaign_key(campaign, None)
    data = json.loads(good)
    forged = json.loads(good)
    forged["entry"]["plan"]["@"] = "Popen"  # only gcplan's data classes are ever rebuilt
    other = dict(data, code="another version")
    for text in ("", good[: len(good) // 2], "not json", "[1, 2]", json.dumps(dict(data, format=99)),
                 json.dumps(other), json.dumps(dict(data, key="0" * 64)), json.dumps(forged)):
        (folder / "night-002.json").write_text(text, encoding="utf-8")
        store = FilePlanCache(folder)
        assert decode(store.get(key, 2)) is None
        _same(campaign.site, plan_through_night(campaign, campaign.nights[2], cache=store), uncached[2])
        assert json.loads((folder / "night-002.json").read_text())["key"] == key  # rebuilt whole
    assert not [p for p in folder.iterdir() if p.suffix == ".tmp"]  # no temporary file left behind
    (folder / "night-002.json").write_bytes(b"\xff\xfe\x00garbage")
    assert FilePlanCache(folder).get(key, 2) is None


def test_an_entry_keeps_every_value_exactly(uncached):
    plan, requests, covered = uncached[2]
    entry = NightEntry(plan, tuple(requests), covered, covered, {(0, "NGC 362"): 2})
    back = decode(json.loads(json.dumps(encode(entry))))
    assert _times(back.plan) == _times(plan) and back.requests == tuple(requests)
    for a, b in zip(back.plan.visits, plan.visits):  # NaN stays NaN, floats to the last bit
        for f in a.__dataclass_fields__:
            x, y = getattr(a, f), getattr(b, f)
            assert (isinstance(x, float) and math.isnan(x) and math.isnan(y)) or x == y
    assert back.done_after == {(0, "NGC 362"): 2}
    assert decode({"format": 0}) is None and decode("x") is None


def test_the_commands_give_the_same_plan_from_a_warm_cache(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("GCPLAN_CACHE_DIR", str(tmp_path / "cache"))
    args = ["schedule", "--campaign", str(DEMO), "--date", "2027-01-06", "--json"]
    assert main(args) == 0
    cold = capsys.readouterr().out
    folder = plan_cache_for(DEMO).folder
    assert sorted(p.name for p in folder.iterdir()) == ["night-000.json", "night-001.json"]
    assert main(args) == 0
    assert capsys.readouterr().out == cold
