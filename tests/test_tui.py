"""The terminal app, headless (textual's run_test) with a frozen clock.

What the screens show is checked against the core functions the command line
calls (``run_of_nights`` as ``gcplan night``, ``plan_campaign_night`` as
``gcplan schedule --campaign``), and the demo site against ``resolve_site("demo")``;
the screen is read back as text cell by cell, at 80×24 and 160×50.
"""

from __future__ import annotations

import asyncio
import datetime as dt
from zoneinfo import ZoneInfo

import pytest
from rich.cells import cell_len

from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir
from planner.inputs.sites import resolve_site
from planner.scheduling.campaign import plan_campaign_night
from planner.sky.nights import jd_to_datetime, local_hhmm

DEMO_TARGETS = ("NGC 104", "NGC 362", "NGC 1851", "NGC 2808", "NGC 3201")
SIZES = [(80, 24), (160, 50)]


@pytest.fixture(scope="module")
def demo():
    from planner.config import configure_runtime

    configure_runtime()
    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    plan, _ = plan_campaign_night(campaign, campaign.nights[0])
    first = plan.visits[0]
    # The clock stopped halfway through the night's first visit.
    moment = jd_to_datetime((first.start_jd + first.end_jd) / 2.0)
    return campaign, plan, moment


def screen_lines(app) -> list[str]:
    """The screen as text, one string per terminal row (what the observer sees)."""
    return [strip.text for strip in app.screen._compositor.render_strips()]


async def settle(pilot) -> None:
    """Let the night's worker finish and its result reach the screens."""
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()
    await pilot.pause()


def make_app(demo, night=None):
    from planner.tui.app import PlannerApp
    from planner.tui.clock import frozen_clock

    campaign, _, moment = demo
    return PlannerApp(campaign, night=night, clock=frozen_clock(moment))


def assert_fits(lines, width):
    assert all(cell_len(line.rstrip()) <= width for line in lines)


@pytest.mark.parametrize("size", SIZES)
def test_tonight_screen_shows_site_night_and_targets(demo, size):
    campaign, plan, moment = demo

    async def go():
        app = make_app(demo)
        async with app.run_test(size=size) as pilot:
            await settle(pilot)
            text = "\n".join(screen_lines(app))
            assert resolve_site("demo").location.name in text
            assert f"{campaign.nights[0]:%Y-%m-%d}" in text  # the campaign's first night by default
            zone = campaign.site.location.timezone
            assert f"now {moment.astimezone(ZoneInfo(zone)):%H:%M}" in text
            for name in DEMO_TARGETS:
                assert name in text
            # Up now: exactly the targets whose window (from run_of_nights) holds the frozen time.
            run = app.data.run
            now = app.now_jd
            vis = run.visibility
            up = {t.name for k, t in enumerate(run.targets)
                  if vis.window_start_jd[k, 0] <= now < vis.window_end_jd[k, 0]}
            assert up  # halfway through the first visit, its target at least is up
            assert plan.visits[0].target in up
            marked = {r.key for r in app.screen.query_one("#targets").rows if r.kind == "up"}
            assert marked == up
            assert_fits(screen_lines(app), size[0])

    asyncio.run(go())


@pytest.mark.parametrize("size", SIZES)
def test_plan_screen_matches_plan_campaign_night(demo, size):
    campaign, plan, _ = demo
    zone = campaign.site.location.timezone
    first = plan.visits[0]

    async def go():
        app = make_app(demo)
        async with app.run_test(size=size) as pilot:
            await settle(pilot)
            await pilot.press("2")
            await pilot.pause()
            lines = screen_lines(app)
            start = local_hhmm(first.start_jd, zone)
            row = next(line for line in lines if f"{start} " in line and first.target in line)
            assert row.lstrip().startswith("▶")  # under way at the frozen time
            assert "Caution:" in "\n".join(lines)
            assert_fits(lines, size[0])
            # Every visit line the screen draws is whole: nothing cut at the right edge.
            shown = [r.text for r in app.screen.query_one("#visits").rows]
            visible = "\n".join(lines)
            assert shown[0] in visible
            assert all(cell_len(t) <= size[0] - 3 for t in shown)
            await pilot.press("tab")
            await pilot.pause()
            assert "sunset" in "\n".join(screen_lines(app))

    asyncio.run(go())


def test_next_and_previous_night_and_quit(demo):
    campaign, _, _ = demo

    async def go():
        app = make_app(demo)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.press("n")
            await settle(pilot)
            second = campaign.nights[1]
            assert app.night == second
            assert f"{second:%Y-%m-%d}" in screen_lines(app)[0]
            expected, _ = plan_campaign_night(campaign, second)
            await pilot.press("2")
            await pilot.pause()
            zone = campaign.site.location.timezone
            v = expected.visits[0]
            assert any(f"{local_hhmm(v.start_jd, zone)} " in line and v.target in line
                       for line in screen_lines(app))
            await pilot.press("p")
            await settle(pilot)
            assert app.night == campaign.nights[0]
            await pilot.press("p")  # before the first night: stays
            await pilot.pause()
            assert app.night == campaign.nights[0]
            await pilot.press("question_mark")
            await pilot.pause()
            assert "keys" in "\n".join(screen_lines(app))
            assert_fits(screen_lines(app), 80)
            await pilot.press("escape")
            await pilot.press("q")
            await pilot.pause()
        assert app.return_code == 0

    asyncio.run(go())


def test_stale_night_result_is_dropped(demo):
    """A night computed after the observer moved on must not replace the night shown."""
    campaign, _, _ = demo

    async def go():
        app = make_app(demo)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            shown = app.data
            from planner.tui.night_data import campaign_night_data

            late = campaign_night_data(campaign, campaign.nights[2])
            app._night_ready(late)
            await pilot.pause()
            assert app.data is shown and app.night == campaign.nights[0]

    asyncio.run(go())


def test_night_outside_the_campaign_has_no_plan(demo):
    campaign, _, _ = demo
    outside = campaign.nights[0] - dt.timedelta(days=3)

    async def go():
        app = make_app(demo, night=outside)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            assert "NGC 104" in "\n".join(screen_lines(app))
            await pilot.press("2")
            await pilot.pause()
            assert "not a night of this campaign" in "\n".join(screen_lines(app))

    asyncio.run(go())


def test_no_command_without_a_terminal_prints_help(capsys):
    from planner.cli import main

    assert main([]) == 0
    assert "usage: gcplan" in capsys.readouterr().out
