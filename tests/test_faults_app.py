"""The terminal app quits on Ctrl-C, as terminal programs do (over ssh too), while a
night is still being computed.  Headless (textual's run_test), the demo campaign."""

from __future__ import annotations

import asyncio

from planner.config import configure_runtime
from planner.inputs.campaign_file import read_campaign_file
from planner.inputs.resources import targets_dir


def test_ctrl_c_quits_the_app():
    from planner.tui.app import PlannerApp

    configure_runtime()
    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")

    async def go():
        app = PlannerApp(campaign)
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause()
            await pilot.press("ctrl+c")
            await pilot.pause()
            assert not app.is_running
        return app.return_code

    assert asyncio.run(go()) == 0
