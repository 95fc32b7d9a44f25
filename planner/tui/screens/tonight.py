"""The sky now: the almanac, then every target with its altitude, azimuth, airmass, the time
left inside the limits and, for those out, the reason."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.widgets import Static

from planner.tui.rows import almanac_lines, sky_head, sky_rows
from planner.tui.screens.night_screen import NightScreen
from planner.tui.widgets.row_list import RowList


class TonightScreen(NightScreen):
    """The night's Sun, twilights and Moon, and what is up right now."""

    ROWS_ID = "targets"

    def parts(self) -> ComposeResult:
        yield Static("", id="almanac", classes="block")
        yield Static(sky_head(), id="target-head", classes="head")

    def message_text(self, app) -> str:
        data = app.data
        if data is not None and app.sky is not None and abs(app.sky.jd - app.now_jd) > 1e-6:
            from planner.sky.nights import local_hhmm

            return (f"the sky at {local_hhmm(app.sky.jd, data.run.site.location.timezone)}, mid-dark: "
                    "the clock is in another night (t: tonight)")
        return app.message or ("; ".join(data.run.warnings) if data else "")

    def fill(self, app) -> None:
        data = app.data
        if data is None or app.sky is None:
            self.query_one("#almanac", Static).update(app.load_error or "computing the night…")
            self.query_one(RowList).show([], empty="")
            return
        w = self.width
        self.query_one("#almanac", Static).update("\n".join(almanac_lines(data.run, 0, w)))
        self.query_one(RowList).show(sky_rows(data.run, app.sky, w), empty="no targets")
