"""The terminal app, headless (textual's run_test) with a clock the test sets.

The flows an observer runs at night — mark a visit done, skip one, add a note,
close the dome for weather and re-plan, switch nights — are driven with keys,
and after each the logbook (read with its own API and with ``gcplan log list
--json``) holds what was done.  What the screens show is compared with the core
functions the command line calls (``plan_campaign_night`` as ``gcplan schedule
--campaign``, ``replan_night`` as ``gcplan replan``, the exposure core as
``gcplan expose``).  The screen is read back from ``export_screenshot`` (the
SVG textual writes), at 80×24 and 160×50.
"""

from __future__ import annotations

import asyncio
import datetime as dt
import html
import json
import re
import shutil
from pathlib import Path
from zoneinfo import ZoneInfo

import pytest
from rich.cells import cell_len

from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.logbook.store import Logbook
from planner.scheduling.campaign import plan_campaign_night
from planner.sky.nights import datetime_to_jd

SIZES = [(80, 24), (160, 50)]
NIGHT = dt.date(2027, 1, 6)
# A rehearsal instant inside the demo campaign's night of 2027-01-06 (00:00 at the invented site).
NOW = dt.datetime(2027, 1, 7, 3, 0, tzinfo=dt.timezone.utc)


class SetClock:
    """A clock the test moves by hand (the app reads it on each tick and before each action)."""

    def __init__(self, moment: dt.datetime) -> None:
        self.moment = moment

    def __call__(self) -> dt.datetime:
        return self.moment


@pytest.fixture(scope="module")
def demo_plan():
    from planner.config import configure_runtime

    configure_runtime()
    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    plan, _ = plan_campaign_night(campaign, NIGHT)
    return plan


@pytest.fixture()
def campaign_file(tmp_path):
    """A copy of the demo campaign: its logbook is written beside it, in the test's folder."""
    folder = tmp_path / "demo"
    shutil.copytree(targets_dir() / "demo", folder, ignore=shutil.ignore_patterns("logbook.sqlite*"))
    return folder / "campaign.toml"


def make_app(campaign_file, clock, **kw):
    from planner.tui.app import PlannerApp

    return PlannerApp(campaign_path=campaign_file, clock=clock, tick_s=3600.0, **kw)


async def settle(pilot) -> None:
    """Until the campaign is read, the night planned and every worker done."""
    app = pilot.app
    for _ in range(400):
        await app.workers.wait_for_complete()
        await pilot.pause()
        done = app.load_error or (app.data is not None and not app.data.planning and app.record is not None
                                  and app.record.path != Path(""))
        if done and not app.busy_text and not any(w.is_running or w.state.name == "PENDING" for w in app.workers):
            for _ in range(3):  # the list scrolls to the cursor after a refresh
                await pilot.pause()
            return
        await asyncio.sleep(0.02)
    raise AssertionError("the app did not settle")


def screen_lines(app) -> list[str]:
    """The screen as text, one string per terminal row, read from the SVG screenshot
    (textual writes each run of cells as a <text> at its x and y)."""
    svg = app.export_screenshot()
    pieces = []
    for m in re.finditer(r'<text class="[^"]*" x="([\d.]+)" y="([\d.]+)" textLength="([\d.]+)"[^>]*>([^<]*)</text>',
                         svg):
        text = html.unescape(m[4])
        if cell_len(text):
            pieces.append((float(m[1]), float(m[2]), float(m[3]) / cell_len(text), text))
    cell = min(w for _, _, w, _ in pieces)
    ys = sorted({y for _, y, _, _ in pieces})
    pitch = min((b - a for a, b in zip(ys, ys[1:])), default=1.0)
    rows: dict[int, str] = {}
    for x, y, _, text in sorted(pieces):
        r = round((y - ys[0]) / pitch)
        rows[r] = rows.get(r, "").ljust(round(x / cell)) + text
    return [rows.get(r, "").replace("\xa0", " ") for r in range(max(rows) + 1)]


def screen_text(app) -> str:
    return "\n".join(screen_lines(app))


def marks_of(campaign_file, night=NIGHT):
    with Logbook(campaign_file.with_name("logbook.sqlite")) as book:
        return {k: m.status for k, m in book.latest_marks(night).items()}


def log_list_json(campaign_file, capsys) -> dict:
    from planner.cli import main

    capsys.readouterr()
    assert main(["log", "list", "--logbook", str(campaign_file.with_name("logbook.sqlite")), "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def under_way(plan, moment):
    jd = datetime_to_jd(moment)
    return next(v for v in plan.visits if v.start_jd <= jd < v.end_jd)


# --- what the screens show ----------------------------------------------------------------

@pytest.mark.parametrize("size", SIZES)
def test_opens_the_clocks_night_and_marks_the_visit_under_way(campaign_file, demo_plan, size):
    """Without --date the app opens the campaign night the clock is in; the header's date and
    time are the clock's; the visit under way (per the command line's plan) is marked, and
    every line fits the terminal."""
    current = under_way(demo_plan, NOW)

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=size) as pilot:
            await settle(pilot)
            lines = screen_lines(app)
            text = "\n".join(lines)
            assert "night Wed 2027-01-06" in text
            assert "00:00 local 03:00 UTC" in text  # the invented site keeps UTC−3 (site_profiles/demo.toml)
            assert "LST " in lines[0]
            now_row = next(line for line in lines if current.id in line and "▶" in line)
            assert now_row.strip().startswith("▶")
            assert f"NOW  {current.id}" in text
            assert all(cell_len(line.rstrip()) <= size[0] for line in lines)
            assert "Traceback" not in text

    asyncio.run(go())


def test_before_the_campaign_opens_its_first_night_saying_so(campaign_file):
    async def go():
        app = make_app(campaign_file, SetClock(dt.datetime(2026, 12, 30, 3, 0, tzinfo=dt.timezone.utc)))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            text = screen_text(app)
            assert "night Tue 2027-01-05" in text
            assert "showing its next night, 2027-01-05" in text

    asyncio.run(go())


def test_sky_screen_gives_position_time_left_and_reasons(campaign_file):
    """The sky screen's numbers are the core's (sky_now) at the clock's moment, and a target out
    of the limits says why; no "-0°" anywhere."""
    from planner.sky.sky_now import sky_now

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("2")
            await pilot.pause()
            text = screen_text(app)
            run = app.data.run
            sky = sky_now(run, app.data.places, datetime_to_jd(NOW), float(run.visibility.dark_end_jd[0]))
            for k, t in enumerate(run.targets):
                line = next(l for l in text.splitlines() if t.name in l and "°" in l)
                assert f"{round(float(sky.altitude_deg[k]))}°" in line
                if sky.minutes_left[k] > 0:
                    assert f"{float(sky.airmass[k]):.2f}" in line
                else:
                    assert sky.reasons[k] and sky.reasons[k] in line
            assert "-0°" not in text and "-0.0" not in text
            assert "sunset" in text and "usable" in text

    asyncio.run(go())


# --- acting: each action is in the logbook at once ---------------------------------------------

def test_mark_done_skip_and_note_are_logged_as_made(campaign_file, demo_plan, capsys):
    current = under_way(demo_plan, NOW)
    before = demo_plan.visits[demo_plan.visits.index(current) - 1]

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("d")  # the cursor starts on the visit under way
            await pilot.pause()
            assert marks_of(campaign_file) == {current.id: "done"}
            assert "✓ done " + current.id in screen_text(app)
            row = next(l for l in screen_lines(app) if current.id in l and "NOW" not in l)
            assert row.strip().startswith("✓") and "done" in row

            await pilot.press("up", "s")
            await pilot.pause()
            assert marks_of(campaign_file) == {current.id: "done", before.id: "skipped"}
            row = next(l for l in screen_lines(app) if before.id in l)
            assert row.strip().startswith("✗") and "skipped" in row

            await pilot.press("n")
            await pilot.pause()
            await pilot.press("enter")  # an empty note is refused in place, with a hint
            await pilot.pause()
            assert "a note needs some words" in screen_text(app)
            await pilot.press(*"cirrus from the west", "enter")
            await pilot.pause()
            assert "note — logged" in screen_text(app)

    asyncio.run(go())
    with Logbook(campaign_file.with_name("logbook.sqlite")) as book:
        assert [n.text for n in book.notes()] == ["cirrus from the west"]
    events = log_list_json(campaign_file, capsys)["events"]
    kinds = [(e["kind"], e["text"]) for e in events]
    assert ("done", f"{current.id} done") in kinds
    assert ("skipped", f"{before.id} skipped") in kinds
    assert ("note", "cirrus from the west") in kinds
    assert all(set(e) == {"id", "time", "kind", "text"} for e in events)
    assert {e["time"] for e in events} == {"2027-01-07T03:00:00Z"}


def _moment_of_jd(jd: float) -> dt.datetime:
    return dt.datetime(2000, 1, 1, 12, tzinfo=dt.timezone.utc) + dt.timedelta(days=jd - 2451545.0)


def test_a_later_visit_and_a_one_frame_partial_are_refused_with_a_hint(campaign_file, demo_plan):
    # the clock in the middle of the night's first one-frame visit from NOW on
    current = next(v for v in demo_plan.visits if v.start_jd >= datetime_to_jd(NOW)
                   and sum(e.frames for e in v.exposures) == 1)
    moment = _moment_of_jd(0.5 * (current.start_jd + current.end_jd))

    async def go():
        app = make_app(campaign_file, SetClock(moment))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("down", "d")  # the next visit has not started
            await pilot.pause()
            assert "has not started yet" in screen_text(app)
            await pilot.press("up", "p")  # a single frame: nothing to be partial
            await pilot.pause()
            assert f"{current.id} has one frame: mark it done (d) or skip it (s)" in screen_text(app)

    asyncio.run(go())
    assert not campaign_file.with_name("logbook.sqlite").exists() or marks_of(campaign_file) == {}


def test_partial_frames_typed_are_checked_in_place():
    from planner.tui.night_state import frames_problem

    assert frames_problem("2", 5) == (2, None)
    for bad in ("two", "0", "5", "-1", ""):
        n, hint = frames_problem(bad, 5)
        assert n is None and "1 to 4" in hint


@pytest.mark.slow
def test_close_for_weather_then_replan_accept(campaign_file, demo_plan, capsys):
    """Dome closed at 00:00, open at 00:40, re-plan at 00:40: the app shows what changed and,
    accepted, follows the very plan ``replan_night`` makes from the same logbook; the logbook
    holds the closure, the reopening, the note of the re-plan and the new visits' ids."""
    from planner.logbook.night_record import read_night_record
    from planner.scheduling.replan import replan_night
    from planner.tui.night_data import catalog_key

    clock = SetClock(NOW)
    reopen = NOW + dt.timedelta(minutes=40)

    async def go():
        app = make_app(campaign_file, clock)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("w")
            await pilot.pause()
            assert "dome closed for weather" in screen_text(app)
            clock.moment = reopen
            await pilot.press("w")
            await pilot.pause()
            assert "dome open for weather" in screen_text(app)
            await pilot.press("r")
            await pilot.pause()
            await pilot.press("enter")  # the seeing as planned
            await settle(pilot)
            text = screen_text(app)
            # The core's reason: the visits of the closed 40 minutes were not taken (how many:
            # checked against the core's own re-plan below).
            shown = re.search(r"because (\d+) visit\(s\) before now not done", text)
            assert shown is not None, text
            missed_shown.append(int(shown.group(1)))
            assert "moved" in text and "dropped" in text
            await pilot.press("a")
            await pilot.pause()
            assert "re-plan accepted" in screen_text(app)
            return app.plan

    missed_shown: list[int] = []
    accepted = asyncio.run(go())
    path = campaign_file.with_name("logbook.sqlite")
    campaign = read_campaign_file(campaign_file)
    record = read_night_record(path, NIGHT, campaign.site.location.timezone)
    assert [(a, b) for a, b in record.closed] == [(datetime_to_jd(NOW), datetime_to_jd(reopen))]
    expected = replan_night(campaign, NIGHT, datetime_to_jd(reopen), logged=record.frames, key=catalog_key(),
                            logged_closed=record.closed, used_ids={v.id for v in demo_plan.visits})
    assert [v.id for v in accepted.visits] == [v.id for v in expected.plan.visits]
    in_shut = [v for v in expected.plan.visits if v.status == "missed"]
    assert missed_shown == [len(in_shut)] and in_shut
    shut = (datetime_to_jd(NOW), datetime_to_jd(reopen))
    assert not any(v.status == "planned" and v.start_jd < shut[1] and v.end_jd > shut[0] for v in accepted.visits)
    new_ids = {v.id for v in accepted.visits if v.status == "planned"}
    assert new_ids and new_ids <= set(record.recorded_ids)
    kinds = [e["kind"] for e in log_list_json(campaign_file, capsys)["events"]]
    assert kinds[:2] == ["closed", "open"] and "note" in kinds

    async def again():  # a restarted app follows the accepted re-plan, kept in the logbook
        app = make_app(campaign_file, clock)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            assert "following the re-plan accepted earlier" in screen_text(app)
            return app.plan

    restored = asyncio.run(again())
    assert [(v.id, v.start_jd, v.status) for v in restored.visits] == [
        (v.id, v.start_jd, v.status) for v in accepted.visits]


def test_replan_refuses_a_nonsense_seeing_in_place(campaign_file):
    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("r")
            await pilot.pause()
            await pilot.press("ctrl+a", "ctrl+k", *"fog", "enter")
            await pilot.pause()
            text = screen_text(app)
            assert "the seeing in arcsec" in text and "'fog'" in text
            await pilot.press("escape")
            await pilot.pause()
            assert "the plan stands" in screen_text(app)

    asyncio.run(go())


@pytest.mark.slow
def test_switch_night_and_back(campaign_file):
    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("right_square_bracket")
            await settle(pilot)
            text = screen_text(app)
            assert "night Thu 2027-01-07" in text
            assert "NOW" not in text  # the clock is not in that night: nothing under way
            await pilot.press("d")  # its visits are all ahead: refused, nothing logged
            await pilot.pause()
            assert "has not started yet" in screen_text(app)
            await pilot.press("t")
            await settle(pilot)
            assert "night Wed 2027-01-06" in screen_text(app)

    asyncio.run(go())
    assert not campaign_file.with_name("logbook.sqlite").exists() or (
        marks_of(campaign_file, dt.date(2027, 1, 7)) == {} and marks_of(campaign_file) == {})


def test_the_nights_either_side_are_made_ahead_as_the_core_plans_them(campaign_file):
    """While a night is shown its neighbours are made (so ] and [ show them at once): the next
    night's plan is plan_campaign_night's, and ] shows it with no computation of its own."""
    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            later, earlier = NIGHT + dt.timedelta(days=1), NIGHT - dt.timedelta(days=1)
            for _ in range(300):  # made a moment after the night is shown
                if {later, earlier} <= set(app._nights):
                    break
                await asyncio.sleep(0.02)
            assert {later, earlier} <= set(app._nights)
            ahead = app._nights[later]
            await pilot.press("right_square_bracket")
            assert app.data is ahead and not app.busy_text  # at once: no worker was needed
            await settle(pilot)
            assert "night Thu 2027-01-07" in screen_text(app)
            return ahead.plan

    plan = asyncio.run(go())
    core, _ = plan_campaign_night(read_campaign_file(campaign_file), NIGHT + dt.timedelta(days=1))
    assert [(v.id, v.start_jd, v.end_jd) for v in plan.visits] == [(v.id, v.start_jd, v.end_jd) for v in core.visits]


def test_clock_ticks_update_lines_in_place(campaign_file, demo_plan):
    """Two minutes later the under-way mark moves to the next visit without the list being
    built anew."""
    from planner.tui.widgets.row_list import RowList

    clock = SetClock(NOW)
    current = under_way(demo_plan, NOW)
    # a minute into the next visit (its start is the current one's end, or later)
    nxt = next(v for v in demo_plan.visits if v.start_jd >= current.end_jd - 1e-9)
    later = _moment_of_jd(nxt.start_jd) + dt.timedelta(minutes=1)
    after = under_way(demo_plan, later)
    assert after.id != current.id
    local = later.astimezone(ZoneInfo(read_campaign_file(campaign_file).site.location.timezone))

    async def go():
        app = make_app(campaign_file, clock)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            rows = app.screen.query_one(RowList)
            built = rows.rebuilds
            clock.moment = later
            app.tick()
            await settle(pilot)
            assert rows.rebuilds == built
            # the site's local clock (not UTC shown twice)
            assert f"{local:%H:%M} local {later:%H:%M} UTC" in screen_text(app)
            line = next(l for l in screen_lines(app) if after.id in l and "NOW" not in l)
            assert line.strip().startswith("▶")

    asyncio.run(go())


def test_exposure_check_matches_the_exposure_core_and_refuses_nonsense(campaign_file):
    from planner.light.exposure import band_setup, exposure_for_level
    from planner.light.photometry import science_level

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("e")
            await pilot.pause()
            screen = app.screen
            from textual.widgets import Input

            level = screen.query_one("#f-level", Input)
            level.value = "brightish"
            level.focus()
            await pilot.press("enter")
            await pilot.pause()
            assert "tip, hb, turnoff or a magnitude" in screen_text(app)
            level.value = "hb"
            await pilot.press("enter")
            await pilot.pause()
            fields = {n: screen.query_one(f"#f-{n}", Input).value for n in ("target", "filter", "snr", "seeing")}
            text = screen_text(app)
            k = next(i for i, t in enumerate(app.data.run.targets) if t.name == fields["target"])
            s = app.sky
            target = app.data.run.targets[k]
            plan = exposure_for_level(app.campaign.site, fields["filter"],
                                      science_level(target, "hb", band_setup(app.campaign.site, fields["filter"]).band),
                                      float(fields["snr"]), airmass=float(s.airmass[k]),
                                      seeing_fwhm_arcsec=float(fields["seeing"]),
                                      moon_illumination=s.moon_illumination,
                                      moon_separation_deg=float(s.moon_separation_deg[k]),
                                      moon_altitude_deg=s.moon_altitude_deg, max_frame_s=app.campaign.max_frame_s)
            assert f"{plan.frames} × {plan.frame_s:.3g} s" in text
            assert "Traceback" not in text

    asyncio.run(go())


@pytest.mark.slow
def test_phase_screen_counts_logged_epochs(campaign_file):
    """A frame of NGC 1851 logged before now is one epoch of every NGC 1851 variable."""
    from planner.logbook.store import NewEntry

    with Logbook(campaign_file.with_name("logbook.sqlite")) as book:
        book.add_entry(NewEntry(time_jd=datetime_to_jd(NOW) - 0.05, target="NGC 1851", filter="V", exposure_s=2.0))

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("3")
            await settle(pilot)
            table = app.phase_table
            assert table
            for r in table:
                assert r.epochs_before == (1 if r.cluster == "NGC 1851" else 0)
                assert r.bins_before == r.epochs_before
                assert r.bins_after >= r.bins_before
            assert "N1851" in screen_text(app)

    asyncio.run(go())


# --- the palette, help, quitting, bad input ------------------------------------------------

@pytest.mark.slow
def test_every_action_is_in_the_command_palette(campaign_file):
    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            titles = " | ".join(c.title for c in app.get_system_commands(app.screen))
            for word in ("done", "partial", "skip", "note", "closed", "open", "replan", "exposure", "night log"):
                assert word in titles, word
            await pilot.press("ctrl+p")
            await pilot.pause()
            await pilot.press(*"add a note")
            await asyncio.sleep(0.3)
            await pilot.pause()
            await pilot.press("enter")
            await pilot.pause()
            assert "Note to the log" in screen_text(app)

    asyncio.run(go())


def test_help_lists_the_keys_and_q_quits_with_everything_kept(campaign_file):
    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("question_mark")
            await pilot.pause()
            text = screen_text(app)
            for key in ("d done", "p partial", "s skip", "n note", "w dome", "r replan", "e exposure", "l the night log"):
                assert key in text
            assert all(cell_len(line.rstrip()) <= 80 for line in screen_lines(app))
            await pilot.press("x")  # any key closes it
            await pilot.press("w")
            await pilot.pause()
            await pilot.press("q")
            await pilot.pause()
        return app

    app = asyncio.run(go())
    assert app.return_code == 0
    with Logbook(campaign_file.with_name("logbook.sqlite")) as book:
        assert [w.state for w in book.weather()] == ["closed"]


def test_a_campaign_that_fails_to_load_shows_its_error_line(tmp_path):
    bad = tmp_path / "campaign.toml"
    bad.write_text('name = "x"\nsite = "demo"\nfirst_night = 2027-01-05\nlast_night = 2027-01-01\n')
    with pytest.raises(Exception) as caught:
        read_campaign_file(bad)

    async def go():
        app = make_app(bad, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            text = screen_text(app)
            assert f"error: {caught.value}"[:70] in text.replace("\n", " ") or str(caught.value)[:60] in text
            assert "Traceback" not in text
            await pilot.press("d")  # nothing to act on: said, not raised
            await pilot.pause()
            assert "no campaign is open" in screen_text(app)

    asyncio.run(go())


def test_rehearsal_clock_runs_on_from_its_start():
    from planner.tui.clock import rehearsal_clock

    seconds = [100.0]
    clock = rehearsal_clock(dt.datetime(2027, 1, 7, 3, 0), elapsed=lambda: seconds[0])
    assert clock() == NOW
    seconds[0] += 90.0
    assert clock() == NOW + dt.timedelta(seconds=90)


def test_app_command_starts_a_rehearsal_clock(monkeypatch):
    """``gcplan app --now`` hands the app a clock that starts at --now and runs on."""
    import planner.tui.app as tui_app
    from planner.commands import app as app_command

    seen = {}

    def fake_run(self):
        seen["now"] = self.clock()
        seen["path"] = self.campaign_path
        return None

    monkeypatch.setattr(tui_app.PlannerApp, "run", fake_run)
    from planner.cli import main

    assert main(["app", "--now", "2027-01-07T03:00Z"]) == 0
    assert abs((seen["now"] - NOW).total_seconds()) < 5
    assert str(seen["path"]) == str(app_command.demo_campaign_path())


@pytest.mark.slow
def test_the_readme_picture_is_regenerated_by_its_script(tmp_path):
    """tests/make_app_svg.py (which writes docs/app.svg) makes the picture of the app the README
    shows: the plan at 80×24 with a visit done and one skipped."""
    import importlib.util
    from pathlib import Path

    spec = importlib.util.spec_from_file_location("make_app_svg", Path(__file__).with_name("make_app_svg.py"))
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    out = module.make_svg(tmp_path / "app.svg")
    svg = out.read_text(encoding="utf-8")
    text = html.unescape(re.sub(r"<[^>]+>", "", svg)).replace("\xa0", " ")
    assert "night Wed 2027-01-06" in text and "NOW" in text and "skipped" in text and "done" in text
    assert (Path(__file__).parent.parent / "docs" / "app.svg").is_file()


def test_partial_frames_are_logged_as_entries_the_evidence_rule_counts(campaign_file, demo_plan):
    """A visit of V 3 × 19 s marked partial with 2 frames: the logbook gets 2 frames of it
    (manual entries inside its span) and the mark; the visit's state is the re-planner's
    ``partial``, with one frame owed (planner.model.evidence)."""
    from dataclasses import replace

    from planner.logbook.night_record import read_night_record
    from planner.model.evidence import match_visits
    from planner.scheduling.visits import Exposure
    from planner.tui import log_actions
    from planner.tui.night_data import catalog_key
    from planner.tui.night_state import visit_states

    campaign = read_campaign_file(campaign_file)
    visit = replace(under_way(demo_plan, NOW), exposures=(Exposure("V", 3, 19.0),))
    plan = replace(demo_plan, visits=(visit,))
    now_jd = datetime_to_jd(NOW)
    ids = log_actions.add_partial(campaign, NIGHT, visit, 2, now_jd, catalog_key())
    assert len(ids) == 1
    record = read_night_record(campaign_file.with_name("logbook.sqlite"), NIGHT, campaign.site.location.timezone)
    assert [(e.filter, e.frames, e.exposure_s) for e in record.frames] == [("V", 2, 19.0)]
    assert record.ids_marked("partial") == (visit.id,)
    assert visit_states(plan, record, now_jd + 0.01, catalog_key()) == {visit.id: "partial"}
    evidence = match_visits([visit], record.frames, catalog_key())[visit.id]
    assert evidence.status == "partial" and [(o.filter, o.frames) for o in evidence.owed] == [("V", 1)]


def test_a_target_without_a_distance_gets_a_message_for_that_check_only(campaign_file):
    """The hb level needs a distance: a target without one says so (naming no command-line
    option); a magnitude typed instead still gives an answer."""
    from planner.model.target import Target
    from planner.tui.night_state import check_exposure, parse_exposure_fields

    campaign = read_campaign_file(campaign_file)
    bare = Target("Nameless", 10.0, -30.0)
    ask, field, hint = parse_exposure_fields(campaign, bare, "V", "hb", "100", "1.2")
    assert field is None
    lines, why = check_exposure(campaign, ask, 1.2, 0.1, 90.0, -20.0)
    assert lines == [] and "distance" in why and "--" not in why
    ask, _, _ = parse_exposure_fields(campaign, bare, "V", "17.5", "100", "1.2")
    lines, why = check_exposure(campaign, ask, 1.2, 0.1, 90.0, -20.0)
    assert why is None and "S/N 100" in lines[0]
    for fields, bad in ((("X", "hb", "100", "1"), "filter"), (("V", "hb", "lots", "1"), "snr"),
                        (("V", "hb", "100", "0"), "seeing")):
        assert parse_exposure_fields(campaign, bare, *fields)[1] == bad


@pytest.mark.parametrize("key", ["ctrl+c", "ctrl+q"])
def test_ctrl_c_and_ctrl_q_quit(campaign_file, key):
    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("n")  # even from a dialog
            await pilot.pause()
            await pilot.press(key)
            await pilot.pause()
        return app

    assert asyncio.run(go()).return_code == 0


@pytest.mark.slow
def test_night_sheet_and_night_log_are_written_beside_the_campaign(campaign_file, demo_plan):
    """o writes the night sheet the command line prints (night_sheet of the plan the app
    holds); l writes the night log PDF of the logbook's night, with the note just made."""
    from planner.reports.schedule_report import night_sheet

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("n", *"seeing 1.4", "enter", "o")
            await pilot.pause()
            assert "night sheet written" in screen_text(app)
            await pilot.press("l")
            await settle(pilot)
            assert "night log written" in screen_text(app)
            return app.campaign

    campaign = asyncio.run(go())
    sheet = campaign_file.with_name("night-2027-01-06-sheet.txt").read_text(encoding="utf-8")
    assert sheet == night_sheet(campaign.site, demo_plan) + "\n"
    pdf = campaign_file.with_name("night-2027-01-06-log.pdf").read_bytes()
    assert pdf.startswith(b"%PDF")


def test_frames_logged_beside_the_app_appear_on_the_next_tick(campaign_file, demo_plan):
    """A frame of the visit under way written by another process's logbook (as
    ``gcplan log ingest --watch`` does) shows that visit done at the next clock tick."""
    from planner.logbook.store import NewEntry

    current = under_way(demo_plan, NOW)
    line = current.exposures[0]

    async def go():
        app = make_app(campaign_file, SetClock(NOW))
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            assert app.states[current.id] == "under way"
            with Logbook(campaign_file.with_name("logbook.sqlite")) as book:
                # logged now (a frame from the clock's future would be no evidence yet)
                book.add_entry(NewEntry(time_jd=min(current.science_start_jd, datetime_to_jd(NOW)),
                                        target=current.target,
                                        filter=line.filter, exposure_s=line.exposure_s, frames=line.frames,
                                        source="fits"))
            app.tick()
            await settle(pilot)
            assert app.states[current.id] == "done"
            row = next(l for l in screen_lines(app) if current.id in l and "NOW" not in l)
            assert row.strip().startswith("✓")

    asyncio.run(go())


def test_a_logbook_given_apart_from_the_campaign_is_the_one_written(campaign_file, tmp_path, demo_plan, capsys):
    """``gcplan app --logbook FILE``: marks go there, and nothing is written beside the campaign."""
    other = tmp_path / "elsewhere" / "night.sqlite"
    other.parent.mkdir()
    current = under_way(demo_plan, NOW)

    async def go():
        app = make_app(campaign_file, SetClock(NOW), logbook=other)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("d")
            await pilot.pause()

    asyncio.run(go())
    assert not campaign_file.with_name("logbook.sqlite").exists()
    with Logbook(other) as book:
        assert {k: m.status for k, m in book.latest_marks(NIGHT).items()} == {current.id: "done"}
