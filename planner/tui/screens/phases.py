"""Phase coverage: each variable's phase bins covered by the frames logged so far, and what
the night's remaining variable visits add."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.widgets import Static

from planner.tui.rows import phase_head, phase_rows
from planner.tui.screens.night_screen import NightScreen
from planner.tui.widgets.row_list import RowList

EXPLAIN = ("phase bins covered by the logbook's frames before now; +tonight: bins the plan's "
           "remaining variable visits add; widest gap in cycles")


class PhaseScreen(NightScreen):
    ROWS_ID = "stars"

    def parts(self) -> ComposeResult:
        yield Static(EXPLAIN, id="explain", classes="block")
        yield Static(phase_head(), id="phase-head", classes="head")

    def on_screen_resume(self) -> None:
        super().on_screen_resume()
        self.app.load_phases()

    def fill(self, app) -> None:
        table = app.phase_table
        if table is None:
            self.query_one(RowList).show([], empty="computing phase coverage…" if app.data else "")
            return
        self.query_one(RowList).show(phase_rows(table, self.width), empty="no variables in this campaign")

    def tick(self) -> None:
        self.set_header()
