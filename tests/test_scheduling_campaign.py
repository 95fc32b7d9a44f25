"""The demo campaign over its 14 nights, the schedule/campaign commands' JSON, and bad input.

Checks against outside references: every night passes the astropy validator
(tests/helpers/validate.py); the Moon's illumination for dark time is the
planner's own, so the tip frames' "dark" is re-checked with astropy's Moon.
"""

from __future__ import annotations

import dataclasses
import json
import re

import numpy as np
import pytest

from planner.cli import main
from planner.errors import InputError
from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.scheduling.campaign import is_fill, plan_campaign

from helpers.validate import validate_plan

DEMO = targets_dir() / "demo" / "campaign.toml"
ISO_Z = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$")


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def demo_plan():
    campaign = read_campaign_file(DEMO)
    return campaign, plan_campaign(campaign)


def test_demo_campaign_file_is_the_invented_one():
    c = read_campaign_file(DEMO)
    text = DEMO.read_text()
    assert c.invented and "INVENTED" in text
    assert len(c.nights) == 14 and str(c.nights[0]) == "2027-01-05"
    assert "5904" not in text and not any("5904" in t.name for t in c.targets)
    assert {g.level for g in c.goals} == {"tip", "hb", "turnoff"}
    assert c.cadence.visits_per_night == 12 and c.cadence.phase_bins == 20


@pytest.mark.slow
def test_every_campaign_night_passes_the_validator(demo_plan):
    campaign, plan = demo_plan
    assert len(plan.nights) == 14
    for night, requests in zip(plan.nights, plan.requests):
        assert validate_plan(campaign.site, night, list(requests)) == [], night.night


def test_tip_frames_dark_low_and_cadence_spaced(demo_plan):
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body
    from astropy.time import Time

    campaign, plan = demo_plan
    loc = campaign.site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    tips = [(p, v) for p in plan.nights for v in p.visits if v.purpose == "tip" and not is_fill(v)]
    assert tips, "some tip frames are planned"
    for p, v in tips:
        assert v.airmass_start <= 1.5 + 1e-3 and v.airmass_end <= 1.5 + 1e-3
        moon = get_body("moon", Time(v.start_jd, format="jd"), where).transform_to(
            AltAz(obstime=Time(v.start_jd, format="jd"), location=where))
        assert p.moon_illumination <= 0.25 or moon.alt.deg < 0
    for p in plan.nights:
        by_key = {}
        for v in p.visits:
            by_key.setdefault(v.request_key, []).append(0.5 * (v.science_start_jd + v.end_jd))
        for key, mids in by_key.items():
            if key.endswith("/variables"):
                assert len(mids) <= campaign.cadence.visits_per_night
                if len(mids) > 1:
                    assert np.min(np.diff(sorted(mids))) * 1440 >= campaign.cadence.min_spacing_min - 1e-6
    # each depth goal met once at most (its extra visits are spare-time work)
    n_tip = {}
    for _, v in tips:
        n_tip[v.target] = n_tip.get(v.target, 0) + 1
    assert max(n_tip.values()) == 1


def test_every_goal_met_and_forecast_is_there(demo_plan):
    _, plan = demo_plan
    assert not any("visit(s) planned" in w for w in plan.warnings)
    clusters = {c["cluster"] for c in plan.coverage["clusters"]}
    assert clusters == {"NGC 104", "NGC 362", "NGC 1851", "NGC 2808", "NGC 3201"}
    assert 0 <= plan.recovery["recovered_fraction"] <= 1
    for c in plan.coverage["clusters"]:
        assert 1 <= c["median_bins_covered"] <= 20


def test_campaign_text_fits_80_columns(capsys):
    code, out, _ = run(capsys, "campaign", "--campaign", DEMO)
    assert code == 0 and "forecast" in out and "Caution" in out
    assert all(len(line) <= 80 for line in out.splitlines())
    assert "h usable; the goals take" in out and "spare" in out  # how much of the time is spare


def test_campaign_json_contract(capsys, tmp_path):
    code, out, err = run(capsys, "campaign", "--campaign", DEMO, "--json")
    assert code == 0
    data = json.loads(out)
    assert set(data) >= {"site", "nights", "coverage", "recovery"}
    assert len(data["nights"]) == 14
    night = data["nights"][0]
    assert set(night) >= {"night", "constraints", "visits", "idle_minutes", "efficiency"}
    assert set(night["night"]) >= {"date", "start", "end"}
    v = night["visits"][0]
    assert set(v) >= {"target", "ra_deg", "dec_deg", "start", "end", "purpose", "exposures", "airmass_start",
                      "airmass_end", "moon_separation_deg"}
    assert ISO_Z.match(v["start"]) and set(v["exposures"][0]) == {"filter", "frames", "exposure_s"}
    assert {"fill", "usable_hours", "required_hours", "spare_hours", "fill_hours"} <= set(data)
    assert all(isinstance(v["fill"], bool) for n in data["nights"] for v in n["visits"])
    assert all(set(g) == {"start", "end", "minutes", "reason"} for n in data["nights"] for g in n["gaps"])


def test_schedule_campaign_form_text_ecsv_plot(capsys, tmp_path):
    from figure_reading import figures_saved

    with figures_saved() as saved:
        code, out, err = run(capsys, "schedule", "--campaign", DEMO, "--date", "2027-01-07",
                             "--out", tmp_path / "p.ecsv", "--plot", tmp_path / "p.png")
    assert code == 0
    assert all(len(line) <= 80 for line in out.splitlines())
    assert "UTC" in out and "local" in out and "Caution" in out and "idle" in out
    from astropy.table import Table

    t = Table.read(tmp_path / "p.ecsv", format="ascii.ecsv")
    assert len(t) > 5 and "airmass_start" in t.colnames
    # The figure written is this plan: one bar per visit of the table (what the bars
    # show is checked in tests/test_figures.py).
    assert (tmp_path / "p.png").exists() and len(saved) == 1
    bars = [ln for ln in saved[0].axes[0].lines if (ln.get_gid() or "").startswith("visit:")]
    assert len(bars) == len(t)


def test_schedule_ad_hoc_json(capsys):
    code, out, _ = run(capsys, "schedule", "--site", "demo", "--targets", targets_dir() / "demo" / "clusters.ecsv",
                       "--date", "2027-01-10", "--visit", "filter=V,frames=2,exposure=300", "--max-airmass", "2",
                       "--json")
    assert code == 0
    data = json.loads(out)
    assert data["constraints"]["max_airmass"] == 2
    names = [v["target"] for v in data["visits"]]
    assert len(names) == len(set(names)) >= 4  # each target once
    assert all(v["exposures"] == [{"filter": "V", "frames": 2, "exposure_s": 300.0}] for v in data["visits"])
    assert 0 < data["efficiency"] < 1 and data["idle_minutes"] >= 0


def _write(tmp_path, text, name="c.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


BASE = f'''site = "demo"
targets = "{(targets_dir() / "demo" / "clusters.ecsv").as_posix()}"
variables = "{(targets_dir() / "demo" / "variables.ecsv").as_posix()}"
first_night = 2027-01-05
nights = 2
'''


@pytest.mark.parametrize("extra, words", [
    ('[[goals]]\nlevel = "tip"\nfilter = "Z"\nsnr = 100\n', ["filter", "Z"]),
    ('[[goals]]\nlevel = "tip"\nfilter = "U"\nsnr = 100\n', ["goals", "U"]),  # no tip colour in U
    ('[[goals]]\nlevel = "hb"\nfilter = "U"\nsnr = 9000\n', ["longer than", "night"]),
    ('[cadence]\nexposure_s = 30000\nvisits_per_night = 2\n', ["longer than", "night"]),
    ('[[goals]]\nlevel = "tip"\nfilter = "I"\nsnr = 100\ntargets = ["NGC 5139"]\n', ["targets", "NGC 5139"]),
    ('[constraints]\nmax_airmass = 0.5\n', ["max_airmass"]),
    ('colour = 1\n', ["unknown key colour"]),
])
def test_bad_campaigns_are_one_line_errors(capsys, tmp_path, extra, words):
    p = _write(tmp_path, BASE + extra)
    code, out, err = run(capsys, "campaign", "--campaign", p)
    assert code == 2 and out == ""
    assert err.startswith("gcplan: error: ") and err.count("\n") == 1
    for w in words:
        assert w in err


def test_missing_files_are_one_line_errors(capsys, tmp_path):
    p = _write(tmp_path, BASE.replace("clusters.ecsv", "nowhere.ecsv"))
    code, _, err = run(capsys, "campaign", "--campaign", p)
    assert code == 2 and "nowhere.ecsv" in err and err.count("\n") == 1
    code, _, err = run(capsys, "schedule", "--campaign", tmp_path / "absent.toml", "--date", "2027-01-05")
    assert code == 2 and "no such file" in err
    code, _, err = run(capsys, "schedule", "--site", "demo", "--target", "NGC 104", "--date", "2027-01-05",
                       "--visit", "filter=V,frames=30,exposure=1200")
    assert code == 2 and "longer than the usable night" in err


def test_a_goal_that_can_never_be_met_is_an_error(capsys, tmp_path):
    # NGC 104 (Dec −72°) never climbs to airmass 1.01 from the demo site (latitude −31°):
    # its least zenith distance is 41°.
    p = _write(tmp_path, BASE + '[[goals]]\nlevel = "hb"\nfilter = "V"\nsnr = 50\n'
               '[[goals]]\nlevel = "tip"\nfilter = "I"\nsnr = 100\nmax_airmass = 1.01\n'
               'targets = ["NGC 104"]\n')
    code, out, err = run(capsys, "campaign", "--campaign", p, "--json")
    assert code == 2 and out == "" and err.count("\n") == 1
    assert str(p) in err and "[[goals]] #2" in err and "NGC 104" in err and "airmass ≤ 1.01" in err
    # The same for the seeing: a limit better than the seeing the campaign plans for.
    p = _write(tmp_path, BASE + 'seeing_arcsec = 1.4\n[[goals]]\nlevel = "hb"\nfilter = "V"\nsnr = 50\n'
               'max_seeing_arcsec = 1.0\n')
    code, out, err = run(capsys, "campaign", "--campaign", p)
    assert code == 2 and "[[goals]] #1" in err and "max_seeing_arcsec" in err


def test_recover_takes_visit_times_from_a_schedule(capsys, tmp_path):
    code, out, _ = run(capsys, "campaign", "--campaign", DEMO, "--json")
    (tmp_path / "c.json").write_text(out)
    code, out, err = run(capsys, "recover", "--site", "demo", "--population", targets_dir() / "demo" / "variables.ecsv",
                         "--schedule", tmp_path / "c.json", "--cluster", "NGC 3201", "--json")
    assert code == 0, err
    data = json.loads(out)
    campaign = json.loads((tmp_path / "c.json").read_text())
    n = sum(1 for night in campaign["nights"] for v in night["visits"]
            if v["target"] == "NGC 3201" and v["purpose"] == "variables")
    assert data["n_epochs"] == n and data["nights"] == 14
    code, _, err = run(capsys, "recover", "--site", "demo", "--population", "oosterhoff-1",
                       "--schedule", tmp_path / "c.json", "--nights", "3")
    assert code == 2 and "--schedule" in err


def test_write_demo_schedule(tmp_path):
    from planner.commands.demo import write_demo_schedule

    paths = write_demo_schedule(tmp_path)
    names = sorted(p.name for p in paths)
    assert "campaign.json" in names and sum(n.endswith(".txt") for n in names) == 14
    assert sum(n.endswith(".png") for n in names) == 1
    sheet = (tmp_path / "schedule_2027-01-05.txt").read_text()
    assert "Caution" in sheet and all(len(line) <= 80 for line in sheet.splitlines())


def test_max_frame_s_splits_the_deep_frames():
    """The demo campaign caps single frames at its max_frame_s: every depth-goal frame
    stays under it, and the split frames still add up to the S/N (more frames, each shorter)."""
    from planner.scheduling.campaign import goal_exposures

    campaign = read_campaign_file(DEMO)
    assert campaign.max_frame_s == 600
    capped = goal_exposures(campaign)
    free = goal_exposures(dataclasses.replace(campaign, max_frame_s=None))
    split = 0
    for key, exposures in capped.items():
        if key[0] == "variables":
            continue
        for e, f in zip(exposures, free[key]):
            assert e.exposure_s <= 600 + 1e-9
            assert e.frames * e.exposure_s >= f.frames * f.exposure_s - 1e-6  # no less light in all
            split += e.frames > f.frames
    assert split >= 1


def test_max_frame_s_out_of_range_is_a_file_error(tmp_path):
    text = DEMO.read_text().replace("max_frame_s = 600", "max_frame_s = -5")
    bad = tmp_path / "campaign.toml"
    bad.write_text(text)
    for name in ("clusters.ecsv", "variables.ecsv"):
        (tmp_path / name).write_text((DEMO.parent / name).read_text())
    with pytest.raises(InputError) as exc:
        read_campaign_file(bad)
    assert "max_frame_s" in str(exc.value) and "-5" in str(exc.value)


# ----------------------------------------------------------------- full nights, spare time, gap reasons


def _observable_anywhere(campaign, jd):
    """Whether any campaign target is inside the campaign's constraints at the times ``jd``,
    from the visibility kernels directly (apparent places of each time, not the planner's
    one-place-a-night shortcut), the Sun below the twilight."""
    from planner.sky.almanac import TWILIGHT_ALTITUDE_DEG
    from planner.sky.ephemeris import build_ephemeris, site_geometry
    from planner.sky.visibility import apparent_places, constraint_margin_deg, sky_grid

    loc = campaign.site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    eph = build_ephemeris(float(jd.min()) - 0.1, float(jd.max()) + 0.1)
    places = apparent_places([t.ra_deg for t in campaign.targets], [t.dec_deg for t in campaign.targets],
                             float(jd.min()), float(jd.max()))
    grid = sky_grid(eph, geo, places, jd)
    c = campaign.constraints
    ok = constraint_margin_deg(grid, c) >= 0
    ok &= grid.sun_altitude_deg[None, :] <= TWILIGHT_ALTITUDE_DEG[c.twilight]
    return ok.any(axis=0)


def test_demo_nights_are_used(demo_plan):
    """Every night's idle time, where targets are up, is under 15 % of its usable window,
    and the goals' depth frames are spread over the fortnight, not all on its first night."""
    _, plan = demo_plan
    for p in plan.nights:
        wanting = sum(g.minutes for g in p.gaps if g.reason == "goals met")
        assert wanting < 0.15 * p.window_minutes, (p.night, wanting)
        assert {g.reason for g in p.gaps} <= {"goals met", "nothing observable", "closed"}
    deep_nights = {p.night for p in plan.nights for v in p.visits
                   if v.purpose in ("tip", "hb", "turnoff") and not is_fill(v)}
    assert len(deep_nights) >= 4
    assert any(is_fill(v) for p in plan.nights[1:] for v in p.visits)


def test_dark_goals_land_on_dark_nights(demo_plan):
    """Depth visits asking for dark time go where the Moon is down or at most 25 % lit
    (the Moon's altitude from astropy), every one of them planned."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body
    from astropy.time import Time

    campaign, plan = demo_plan
    loc = campaign.site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    dark_keys = {f"{name}/{g.level}-{g.filter}" for g in campaign.goals if g.dark for name in g.targets}
    seen = 0
    for p in plan.nights:
        for v in p.visits:
            if v.request_key not in dark_keys:
                continue
            seen += 1
            t = Time([v.start_jd, v.end_jd], format="jd")
            moon = get_body("moon", t, where).transform_to(AltAz(obstime=t, location=where))
            assert p.moon_illumination <= 0.25 or np.all(moon.alt.deg < 0), (p.night, v.id)
    assert seen >= len(dark_keys) - 1


def test_cadence_is_spread_over_each_clusters_hours(demo_plan):
    """A cluster's cadence visits of a night span most of the hours it is observable,
    not the minimum spacing times the visits."""
    campaign, plan = demo_plan
    c = campaign.cadence
    names = [t.name for t in campaign.targets]
    for p in plan.nights:
        jd = np.arange(p.window_start_jd, p.window_end_jd, 1 / 1440)
        up = _observable_per_target(campaign, jd)
        for name in {v.target for v in p.visits if v.purpose == "variables"}:
            mids = sorted(0.5 * (v.science_start_jd + v.end_jd) for v in p.visits
                          if v.target == name and v.request_key == f"{name}/variables")
            hours = up[names.index(name)].sum() / 60.0
            if len(mids) < 3 or hours < 3:
                continue
            span = (mids[-1] - mids[0]) * 24
            assert span >= 0.6 * hours, (p.night, name, span, hours)
            if hours * 60 > 2 * (c.visits_per_night - 1) * c.min_spacing_min:
                assert span * 60 > 1.5 * (len(mids) - 1) * c.min_spacing_min


def test_spare_depth_frames_back_to_back_are_one_visit(demo_plan):
    """A run of spare-time frames of one target, filter and exposure is one pointing at the
    telescope (one acquisition), not a visit per frame: no two such visits back to back, and
    the merged visits keep the visit model's time (acquisition + frames × (exposure + readout))."""
    from planner.scheduling.campaign import is_fill
    from planner.scheduling.visits import body_s

    campaign, plan = demo_plan
    merged = 0
    for p in plan.nights:
        visits = sorted(p.visits, key=lambda v: v.start_jd)
        for a, b in zip(visits, visits[1:]):
            assert not (is_fill(a) and is_fill(b) and a.purpose != "variables" and a.request_key == b.request_key
                        and a.exposures == b.exposures and b.start_jd <= a.end_jd + 2 / 86400), (a.id, b.id)
        for v in visits:
            if is_fill(v) and v.purpose != "variables" and v.exposures[0].frames > 1:
                merged += 1
                assert abs((v.end_jd - v.science_start_jd) * 86400 - body_s(campaign.site, v.exposures)) < 0.01
    assert merged > 0


def test_spare_depth_frames_leave_no_idle_time_another_frame_would_use(demo_plan):
    """Where a spare-time depth visit is followed by idle time, one more frame of it would not
    fit before the next visit, or would take its target outside the limits (the validator
    holds the frames that are there)."""
    from planner.scheduling.campaign import is_fill
    from planner.scheduling.campaign_nights import observable
    from planner.sky.ephemeris import build_ephemeris

    campaign, plan = demo_plan
    readout = campaign.site.camera.readout_s
    eph = build_ephemeris(plan.nights[0].window_start_jd - 0.1, plan.nights[-1].window_end_jd + 0.1)
    stretched = 0
    for p in plan.nights:
        visits = sorted(p.visits, key=lambda v: v.start_jd)
        for v, nxt in zip(visits, visits[1:] + [None]):
            if not is_fill(v) or v.purpose == "variables":
                continue
            step = (v.exposures[0].exposure_s + readout) / 86400.0
            room = (nxt.start_jd if nxt is not None else p.window_end_jd) - v.end_jd
            if room < step - 1e-9:
                continue
            goal = next(g for g in campaign.goals if g.level == v.purpose and g.filter == v.exposures[0].filter
                        and v.target in g.targets)
            ok, airmass, moon_down = observable(campaign.site, campaign.constraints, [v.ra_deg], [v.dec_deg],
                                                eph, np.array([v.end_jd + step]))
            still = ok[0][0] and airmass[0][0] <= (goal.max_airmass or np.inf) and (moon_down[0] or not goal.dark)
            assert not still, (v.id, room * 1440)
        stretched += sum(1 for v in visits if is_fill(v) and v.purpose != "variables" and v.exposures[0].frames > 1)
    assert stretched > 0


def test_extra_epochs_keep_the_minimum_spacing_from_the_goals_epochs(demo_plan):
    """Spare-time cadence epochs add phase only when they are apart from every other epoch
    of the cluster that night, the goals' included: no two variables visits of a cluster
    closer than the campaign's minimum spacing (middle to middle)."""
    campaign, plan = demo_plan
    spacing_d = campaign.cadence.min_spacing_min / 1440.0
    checked = 0
    for p in plan.nights:
        for name in {v.target for v in p.visits if v.purpose == "variables"}:
            mids = np.sort([0.5 * (v.science_start_jd + v.end_jd) for v in p.visits
                            if v.target == name and v.purpose == "variables"])
            if len(mids) > 1:
                assert np.diff(mids).min() >= spacing_d - 1e-6, (p.night, name, np.diff(mids).min() * 1440)
                checked += 1
    assert checked > 0


def _observable_per_target(campaign, jd):
    from planner.sky.ephemeris import build_ephemeris, site_geometry
    from planner.sky.visibility import apparent_places, constraint_margin_deg, sky_grid

    loc = campaign.site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    eph = build_ephemeris(float(jd.min()) - 0.1, float(jd.max()) + 0.1)
    places = apparent_places([t.ra_deg for t in campaign.targets], [t.dec_deg for t in campaign.targets],
                             float(jd.min()), float(jd.max()))
    return constraint_margin_deg(sky_grid(eph, geo, places, jd), campaign.constraints) >= 0


def test_gap_reasons_are_true(tmp_path):
    """With a tight airmass limit the clusters are within it only near transit: the gaps
    called "nothing observable" have no target within the constraints anywhere inside,
    and those called "goals met" have one at some time."""
    p = _write(tmp_path, BASE.replace("nights = 2", "nights = 1") + 'fill = "none"\n[constraints]\n'
               'max_airmass = 1.15\n[[goals]]\nlevel = "hb"\nfilter = "V"\nsnr = 50\ntargets = ["NGC 1851", "NGC 3201"]\n')
    campaign = read_campaign_file(p)
    plan = plan_campaign(campaign, forecast=False)
    reasons = {g.reason for n in plan.nights for g in n.gaps}
    assert reasons == {"nothing observable", "goals met"}
    for night in plan.nights:
        for g in night.gaps:
            inside = np.linspace(g.start_jd, g.end_jd, max(int(g.minutes * 4), 3))[1:-1]
            up = _observable_anywhere(campaign, inside)
            if g.reason == "nothing observable":
                assert not up.any(), (night.night, g)
            else:
                assert up.any(), (night.night, g)


def test_fill_none_leaves_the_spare_time_idle(capsys, tmp_path):
    p = _write(tmp_path, BASE + 'fill = "none"\n[[goals]]\nlevel = "hb"\nfilter = "V"\nsnr = 50\n'
               '[cadence]\nvisits_per_night = 4\n')
    code, out, err = run(capsys, "campaign", "--campaign", p, "--json")
    assert code == 0
    data = json.loads(out)
    assert data["fill"] == "none" and data["fill_hours"] == 0
    assert not any(v["fill"] for n in data["nights"] for v in n["visits"])
    met = [g for n in data["nights"] for g in n["gaps"] if g["reason"] == "goals met"]
    assert met and sum(g["minutes"] for g in met) > 300
    assert data["spare_hours"] == pytest.approx(data["usable_hours"] - data["required_hours"], abs=0.02)
    assert 0 < data["required_hours"] < 0.25 * data["usable_hours"]
    assert "left idle" in err and 'fill = "none"' in err
    # The default fills the same nights with extra work, marked as such.
    p.write_text(p.read_text().replace('fill = "none"\n', ""))
    code, out, err = run(capsys, "campaign", "--campaign", p, "--json")
    data = json.loads(out)
    extra = [v for n in data["nights"] for v in n["visits"] if v["fill"]]
    assert extra and data["fill_hours"] > 0.5 * data["spare_hours"]
    assert {v["purpose"] for v in extra} >= {"variables", "hb"}
    assert "extra" in err


def test_unknown_fill_is_a_one_line_error(capsys, tmp_path):
    p = _write(tmp_path, BASE + 'fill = "everything"\n')
    code, out, err = run(capsys, "campaign", "--campaign", p)
    assert code == 2 and out == "" and err.count("\n") == 1
    assert str(p) in err and "fill" in err and "everything" in err and "cadence-and-depth" in err


def test_one_night_is_the_night_of_the_whole_campaign(demo_plan):
    """`schedule --campaign --date` plans the campaign up to that night with the same
    sharing-out of the goals over all its nights, so it gives the night `campaign` gives."""
    from planner.scheduling.campaign import plan_campaign_night

    campaign, plan = demo_plan
    night, _ = plan_campaign_night(campaign, campaign.nights[1])
    assert [(v.id, v.request_key, round(v.start_jd, 6)) for v in night.visits] == \
        [(v.id, v.request_key, round(v.start_jd, 6)) for v in plan.nights[1].visits]


def test_goal_field_radius_adds_the_clusters_light_where_planned(tmp_path):
    """A depth goal with ``field_radius_arcmin`` counts the cluster's unresolved light at that
    radius (King 1962 profile from Harris 2010's structure, planner.light.cluster_light) as
    sky: its frames are longer than without, both in the goal table and where the night
    planner sizes the visit; nearer the centre (brighter cluster light) longer still."""
    from planner.scheduling.campaign import goal_exposures, plan_campaign_night

    campaign = read_campaign_file(DEMO)
    i = next(k for k, g in enumerate(campaign.goals) if g.level == "turnoff")
    name = campaign.goals[i].targets[0]

    def with_radius(r):
        goals = list(campaign.goals)
        goals[i] = dataclasses.replace(goals[i], field_radius_arcmin=r)
        return dataclasses.replace(campaign, goals=tuple(goals))

    def light(c):
        return sum(e.frames * e.exposure_s for e in goal_exposures(c)[(i, name)])

    none, far, near = light(campaign), light(with_radius(3.0)), light(with_radius(1.0))
    assert none < far < near
    text = DEMO.read_text().replace("[[goals]]\nlevel = \"turnoff\"", "[[goals]]\nlevel = \"turnoff\"\n"
                                    "field_radius_arcmin = 1.0", 1)
    assert text != DEMO.read_text()  # the file form reads the key too
    for f in DEMO.parent.iterdir():
        if f.is_file():
            (tmp_path / f.name).write_bytes(f.read_bytes())
    (tmp_path / "campaign.toml").write_text(text)
    assert read_campaign_file(tmp_path / "campaign.toml").goals[i].field_radius_arcmin == 1.0
    night = campaign.nights[0]
    plain, _ = plan_campaign_night(campaign, night)
    lit, _ = plan_campaign_night(with_radius(1.0), night)
    key = f"{name}/turnoff-{campaign.goals[i].filter}"

    def shutter(plan):
        return [sum(e.frames * e.exposure_s for e in v.exposures) for v in plan.visits if v.request_key == key]

    assert shutter(plain) and shutter(lit)  # the goal is planned on the first night in both
    assert min(shutter(lit)) > max(shutter(plain))
    snr = [v.snr_planned for v in lit.visits if v.request_key == key]
    assert all(s >= campaign.goals[i].snr * 0.99 for s in snr)


def test_a_goal_visits_longer_slew_never_starts_where_its_limits_fail():
    """A spare-time visit put before a goal's visit lengthens the goal's slew; where that
    slew would start before the goal may start (its target outside its limits then, e.g.
    the Moon still up for dark time), the spare-time visit goes and the goal's slew stays
    as planned.  Without an ``earliest`` the same visits keep the longer slew."""
    from planner.inputs.sites import resolve_site
    from planner.scheduling.campaign_nights import reconcile
    from planner.scheduling.visits import Exposure, Visit

    site = resolve_site("demo")
    day = 1.0 / 86400.0

    def visit(vid, key, ra, start, sci, end):
        return Visit(vid, key, key, ra, -30.0, "hb", (Exposure("V", 1, 60.0),), start, sci, end, 1.0, 0.0,
                     1.1, 1.1, 1.1, 90.0)

    t0 = 2461421.5
    spare = visit("02", "far" + "/spare", 10.0, t0, t0 + 30 * day, t0 + 200 * day)
    goal = visit("01", "goal", 100.0, t0 + 290 * day, t0 + 300 * day, t0 + 900 * day)  # 10 s planned slew
    fill = lambda v: v.request_key.endswith("/spare")  # noqa: E731
    kept = reconcile(site, [spare, goal], fill)
    assert [v.id for v in kept] == ["02", "01"] and kept[1].start_jd < goal.start_jd  # the 90° slew
    kept = reconcile(site, [spare, goal], fill, {"01": goal.start_jd})
    assert kept == [goal]  # the goal's visit as planned


def test_the_goals_depth_visits_sit_near_their_best_airmass(demo_plan):
    """The goals' deep frames (tip, HB, turnoff) go where their target is near the least
    airmass it reaches that night: within 10 % of it (the readout an observer makes first).
    The cadence's epochs are spread over the hours on purpose and spare-time frames fill
    what is left, so they are not held to it."""
    _, plan = demo_plan
    off = [(str(n.night), v.id, round(v.airmass_mid, 2), round(v.best_airmass, 2))
           for n in plan.nights for v in n.visits
           if not is_fill(v) and v.purpose != "variables" and v.airmass_mid > 1.1 * v.best_airmass]
    assert off == []
