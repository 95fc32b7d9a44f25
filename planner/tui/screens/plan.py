"""The plan: the campaign night's visits and gaps, the visit under way and the next marked."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.widgets import Footer, Static

from planner.cautions import PLAN_CAUTION
from planner.tui.rows import PLAN_HEAD, PLAN_SUBHEAD, plan_rows, plan_summary
from planner.tui.screens.night_screen import NightScreen
from planner.tui.widgets.night_header import NightHeader
from planner.tui.widgets.row_list import RowList


class PlanScreen(NightScreen):
    """The night's timed visits (``gcplan schedule --campaign``) with the caution at the foot."""

    BINDINGS = [Binding("c", "to_current", "now")]

    def compose(self) -> ComposeResult:
        yield NightHeader(id="header")
        yield Static("", id="summary", classes="block")
        yield Static(PLAN_HEAD + "\n" + PLAN_SUBHEAD, id="plan-head", classes="head")
        yield RowList(id="visits")
        yield Static(PLAN_CAUTION, id="caution")
        yield Footer()

    def on_screen_resume(self) -> None:
        self.action_to_current()

    def watch_data(self) -> None:
        self.redraw()
        self.action_to_current()

    def watch_note(self) -> None:
        self.redraw()

    def action_to_current(self) -> None:
        """Scroll to the visit under way, else the next one."""
        if self._ready:
            self.query_one(RowList).scroll_to_first("now", "next")

    def redraw(self) -> None:
        if not self._ready or self.data is None:
            return
        run, plan = self.data.run, self.data.plan
        header = self.query_one(NightHeader)
        header.site_name = run.site.location.name
        header.zone = run.site.location.timezone
        header.night = self.data.night
        header.now_jd = self.now_jd
        rows = self.query_one(RowList)
        if plan is None:
            self.query_one("#summary", Static).update(self.note or self.data.plan_note)
            rows.show([], empty="no plan for this night")
            return
        self.query_one("#summary", Static).update(self.note or plan_summary(plan))
        rows.show(plan_rows(plan, run.site.location.timezone, self.now_jd), empty="no visits planned")
