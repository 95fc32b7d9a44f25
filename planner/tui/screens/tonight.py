"""Tonight: the almanac block and each target's window, the targets up now marked."""

from __future__ import annotations

import math

from textual.app import ComposeResult
from textual.reactive import reactive
from textual.screen import Screen
from textual.widgets import Footer, Static

from planner.tui.rows import TARGET_HEAD, almanac_lines, target_rows
from planner.tui.widgets.night_header import NightHeader
from planner.tui.widgets.row_list import RowList


class TonightScreen(Screen):
    """The night's Sun, twilights and Moon, and when each target is observable."""

    #: Set by the app: the night's data (planner.tui.night_data.NightData), the time, whether busy.
    data = reactive(None, init=False)
    now_jd: reactive[float] = reactive(math.nan, init=False)
    busy: reactive[bool] = reactive(False, init=False)
    note: reactive[str] = reactive("", init=False)

    def compose(self) -> ComposeResult:
        yield NightHeader(id="header")
        yield Static("", id="almanac", classes="block")
        yield Static(TARGET_HEAD, id="target-head", classes="head")
        yield RowList(id="targets")
        yield Static("", id="note", classes="note")
        yield Footer()

    _ready = False  # set once mounted: the widgets exist

    def on_mount(self) -> None:
        self._ready = True
        self.redraw()
        self.query_one(RowList).focus()

    def watch_data(self) -> None:
        self.redraw()

    def watch_now_jd(self) -> None:
        self.redraw()

    def watch_busy(self, busy: bool) -> None:
        if self._ready:
            self.query_one(NightHeader).busy = busy

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
