"""Tonight: the almanac block and each target's window, the targets up now marked."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.widgets import Footer, Static

from planner.tui.rows import TARGET_HEAD, almanac_lines, target_rows
from planner.tui.screens.night_screen import NightScreen
from planner.tui.widgets.night_header import NightHeader
from planner.tui.widgets.row_list import RowList


class TonightScreen(NightScreen):
    """The night's Sun, twilights and Moon, and when each target is observable."""


    def compose(self) -> ComposeResult:
        yield NightHeader(id="header")
        yield Static("", id="almanac", classes="block")
        yield Static(TARGET_HEAD, id="target-head", classes="head")
        yield RowList(id="targets")
        yield Static("", id="note", classes="note")
        yield Footer()

    def watch_note(self, note: str) -> None:
        if self._ready:
            self.query_one("#note", Static).update(note)

    def redraw(self) -> None:
        if not self._ready or self.data is None:
            return
        run = self.data.run
        header = self.query_one(NightHeader)
        header.site_name = run.site.location.name
        header.zone = run.site.location.timezone
        header.night = self.data.night
        header.now_jd = self.now_jd
        self.query_one("#almanac", Static).update("\n".join(almanac_lines(run)))
        self.query_one(RowList).show(target_rows(run, self.now_jd), empty="no targets")
        self.query_one("#note", Static).update(self.note or "; ".join(run.warnings))
