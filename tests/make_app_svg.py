"""Regenerate the README's picture of the app: ``python tests/make_app_svg.py [OUT.svg]``.

The app runs headless (textual's run_test) at 80×24 on a copy of the invented demo
campaign, with its clock stopped at 00:00 local on the night of 2027-01-06; one
visit is marked done and one skipped, as an observer would, and the screen is
written with ``export_screenshot`` (default: docs/app.svg).  ``tests/test_tui.py``
runs the same function.
"""

from __future__ import annotations

import asyncio
import datetime as dt
import shutil
import sys
import tempfile
from pathlib import Path

NOW = dt.datetime(2027, 1, 7, 3, 0, tzinfo=dt.timezone.utc)
DEFAULT_OUT = Path(__file__).resolve().parent.parent / "docs" / "app.svg"


async def _screenshot(campaign_file: Path, size=(80, 24)) -> str:
    from planner.tui.app import PlannerApp
    from planner.tui.clock import frozen_clock

    app = PlannerApp(campaign_path=campaign_file, clock=frozen_clock(NOW), tick_s=3600.0)
    async with app.run_test(size=size) as pilot:
        for _ in range(2000):
            await pilot.pause()
            if app.data is not None and app.key is not None and not app.busy_text:
                break
            await asyncio.sleep(0.01)
        await pilot.press("up", "up", "s", "down", "down", "d")
        await pilot.pause()
        return app.export_screenshot(title="gcplan app — the demo campaign (invented), rehearsal at 00:00")


def make_svg(out: Path = DEFAULT_OUT) -> Path:
    from planner.config import configure_runtime
    from planner.inputs.resources import targets_dir

    configure_runtime()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "demo"
        shutil.copytree(targets_dir() / "demo", folder, ignore=shutil.ignore_patterns("logbook.sqlite*"))
        svg = asyncio.run(_screenshot(folder / "campaign.toml"))
    out = Path(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(svg, encoding="utf-8")
    return out


if __name__ == "__main__":
    print(make_svg(Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT_OUT))
