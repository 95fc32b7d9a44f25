"""What the app reads from the core and the logbook, outside the app: the sky at a moment,
a re-plan's changes, the observer's marks and the night's events, skipped visits in a re-plan."""

from __future__ import annotations

import datetime as dt
import sqlite3
from types import SimpleNamespace

import numpy as np
import pytest

from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.logbook.store import Logbook
from planner.sky.nights import datetime_to_jd

NIGHT = dt.date(2027, 1, 6)
NOW = dt.datetime(2027, 1, 7, 3, 0, tzinfo=dt.timezone.utc)


@pytest.fixture(scope="module")
def demo_night():
    from planner.config import configure_runtime
    from planner.tui.night_data import night_sky_data

    configure_runtime()
    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    return campaign, night_sky_data(campaign, NIGHT)


def test_sky_now_agrees_with_astropy_altaz(demo_night):
    """Altitude and azimuth of every target at the moment, against astropy's full AltAz
    transform (no refraction: gcplan's altitudes are geometric)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    from planner.sky.sky_now import sky_now

    campaign, data = demo_night
    run = data.run
    jd = datetime_to_jd(NOW)
    sky = sky_now(run, data.places, jd, float(run.visibility.dark_end_jd[0]))
    loc = campaign.site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    coords = SkyCoord([t.ra_deg for t in run.targets] * u.deg, [t.dec_deg for t in run.targets] * u.deg)
    altaz = coords.transform_to(AltAz(obstime=Time(jd, format="jd", scale="utc"), location=where, pressure=0))
    assert np.allclose(sky.altitude_deg, altaz.alt.deg, atol=0.02)
    d_az = (sky.azimuth_deg - altaz.az.deg + 180.0) % 360.0 - 180.0
    assert np.all(np.abs(d_az * np.cos(np.radians(altaz.alt.deg))) < 0.02)
    assert 0.0 <= sky.lst_deg < 360.0


def test_time_left_ends_where_the_nights_window_ends(demo_night):
    """Minutes left inside the limits (the grid of sky_now) end where the night's window of
    the target ends (closed forms of planner.sky.windows), to the grid's 2-minute step."""
    from planner.sky.sky_now import STEP_D, sky_now

    _, data = demo_night
    run = data.run
    jd = datetime_to_jd(NOW)
    sky = sky_now(run, data.places, jd, float(run.visibility.dark_end_jd[0]))
    checked = 0
    for k in range(len(run.targets)):
        w0, w1 = run.visibility.window_start_jd[k, 0], run.visibility.window_end_jd[k, 0]
        if np.isfinite(w0) and w0 <= jd < w1:
            assert sky.minutes_left[k] == pytest.approx((w1 - jd) * 1440.0, abs=STEP_D * 1440.0 + 0.1)
            assert sky.reasons[k] == ""
            checked += 1
    assert checked >= 3


def test_why_out_names_the_first_limit_broken():
    """Common practice, no source: the words an observer needs, the Moon's limit named with
    both numbers."""
    from planner.model.constraints import Constraints
    from planner.sky.sky_now import why_out

    c = Constraints(min_altitude_deg=30.0, max_airmass=None, twilight="astronomical", min_moon_separation_deg=30.0)
    assert why_out(c, 45.0, 180.0, 18.0, 20.0, 120.0, -30.0) == "Moon 18° away < 30°"
    assert why_out(c, 45.0, 180.0, 18.0, -5.0, 120.0, -30.0) == ""  # the Moon is down
    assert why_out(c, 12.0, 180.0, 90.0, 20.0, 120.0, -30.0) == "low: 12° < 30°"
    assert why_out(c, -3.0, 180.0, 90.0, 20.0, 120.0, -30.0) == "below the horizon"
    assert why_out(c, 45.0, 180.0, 90.0, 20.0, 120.0, -12.0) == "astronomical twilight"


def _v(vid, key, start_min, status="planned"):
    return SimpleNamespace(id=vid, request_key=key, target=key.split("/")[0], purpose="x",
                           start_jd=2461412.5 + start_min / 1440.0, status=status)


def test_plan_diff_pairs_visits_by_what_they_are_for():
    from planner.scheduling.plan_diff import diff_plans

    now = 2461412.5 + 10 / 1440.0
    old = [_v("a1", "A/var", 0), _v("a2", "A/var", 20), _v("b1", "B/hb", 30), _v("c1", "C/tip", 40)]
    new = [_v("a1", "A/var", 0, "missed"), _v("a3", "A/var", 25), _v("b1", "B/hb", 30),
           _v("d1", "D/hb", 45), _v("e1", "A/var owed by a1", 50)]
    diff = diff_plans(old, new, now)
    kinds = {(c.kind, (c.old or c.new).id) for c in diff.changes}
    assert kinds == {("moved", "a2"), ("kept", "b1"), ("dropped", "c1"), ("added", "d1"), ("added", "e1")}
    moved = diff.of("moved")[0]
    assert moved.new.id == "a3" and moved.shift_min == pytest.approx(5.0)
    assert diff.past == (("a1", "missed"),)
    assert diff.counts() == {"moved": 1, "dropped": 1, "added": 2, "kept": 1}


def test_marks_and_events_read_back_and_a_read_adds_no_table(tmp_path):
    path = tmp_path / "logbook.sqlite"
    with Logbook(path) as book:
        book.add_note(2461412.60, "cirrus")
    with Logbook(path) as book:
        assert book.visit_marks() == [] and book.latest_marks(NIGHT) == {}
        assert [e.kind for e in book.events()] == ["note"]
    tables = {r[0] for r in sqlite3.connect(path).execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert "visit_marks" not in tables
    with Logbook(path) as book:
        book.add_weather(2461412.61, "closed")
        book.add_visit_mark(2461412.62, NIGHT, "0106-N1851-var3", "done")
        book.add_visit_mark(2461412.63, NIGHT, "0106-N1851-var3", "skipped", "clouds")
        book.add_visit_mark(2461412.63, NIGHT, "0106-N362-var1", "done")
        book.add_visit_mark(2461412.64, NIGHT, "0106-N362-var1", "planned")  # taken back
        book.add_weather(2461412.64, "open")
        marks = book.latest_marks(NIGHT)
        events = book.events()
        with pytest.raises(Exception, match="must be one of"):
            book.add_visit_mark(2461412.65, NIGHT, "0106-N362-var1", "maybe")
    assert {k: m.status for k, m in marks.items()} == {"0106-N1851-var3": "skipped"}
    assert [(e.kind, e.text) for e in events] == [
        ("note", "cirrus"), ("closed", "dome closed"), ("done", "0106-N1851-var3 done"),
        ("skipped", "0106-N1851-var3 skipped: clouds"), ("done", "0106-N362-var1 done"),
        ("open", "dome open"), ("planned", "0106-N362-var1 planned")]
    assert len({e.id for e in events}) == len(events)


@pytest.mark.slow
def test_a_skipped_visit_is_missed_and_wants_time_again():
    from planner.scheduling.campaign import plan_campaign_night
    from planner.scheduling.replan import past_statuses, replan_night

    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    plan, _ = plan_campaign_night(campaign, NIGHT)
    now = datetime_to_jd(NOW)
    current = next(v for v in plan.visits if v.start_jd <= now < v.end_jd)
    said = {v.id: (v.status, v.status_source) for v in past_statuses(plan, now, skipped=[current.id])}
    assert said[current.id] == ("missed", "observer")
    assert said[plan.visits[0].id] == ("unknown", None)  # nothing said of it
    result = replan_night(campaign, NIGHT, now, skipped=[current.id])
    assert result.reasons and current.id in result.reasons[0]
    assert any(v.request_key == current.request_key and v.start_jd >= now and v.status == "planned"
               for v in result.plan.visits)


@pytest.mark.slow
def test_a_visit_stopped_part_way_frees_its_time_and_owes_its_frames():
    """The observer's partial mark on a visit still running (the app's p): the re-plan takes
    it as stopped now, keeps the frames the logbook holds and plans the rest again."""
    from planner.scheduling.campaign import plan_campaign_night
    from planner.scheduling.replan import replan_night

    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    night = dt.date(2027, 1, 7)
    plan, _ = plan_campaign_night(campaign, night)
    visit = next(v for v in plan.visits if sum(e.frames for e in v.exposures) >= 2)
    now = (visit.start_jd + visit.end_jd) / 2
    first = visit.exposures[0]
    frame = SimpleNamespace(id=1, time_jd=visit.science_start_jd, target=visit.target, filter=first.filter,
                            exposure_s=first.exposure_s, frames=1)
    result = replan_night(campaign, night, now, logged=[frame], stopped=[visit.id])
    kept = next(v for v in result.plan.visits if v.id == visit.id)
    assert (kept.status, kept.status_source) == ("partial", "observer") and kept.end_jd == pytest.approx(now)
    owed = [v for v in result.plan.visits if v.request_key.endswith(f"owed by {visit.id}")]
    assert len(owed) == 1 and sum(e.frames for e in owed[0].exposures) == sum(e.frames for e in visit.exposures) - 1
    assert min(v.start_jd for v in result.plan.visits if v.status == "planned") < visit.end_jd
