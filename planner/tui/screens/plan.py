"""The plan: where the night stands, then the night's visits with their ids and states.

The cursor chooses the visit the keys act on (done, partial, skip); it starts on
the visit under way.
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.widgets import Static

from planner.tui.rows import now_lines, plan_head, plan_rows, plan_summary
from planner.tui.screens.night_screen import NightScreen
from planner.tui.widgets.row_list import RowList


class PlanScreen(NightScreen):
    """The night's timed visits, the one under way and the next marked, each with its state."""

    ROWS_ID = "visits"

    def parts(self) -> ComposeResult:
        yield Static("", id="now", classes="panel")
        yield Static("", id="summary", classes="block")
        yield Static(plan_head(), id="plan-head", classes="head")

    def fill(self, app) -> None:
        data, plan = app.data, app.plan
        rows = self.query_one(RowList)
        if data is None:
            self.query_one("#now", Static).update(app.load_error or "computing the night…")
            self.query_one("#summary", Static).update("")
            rows.show([], empty="")
            return
        w = self.width
        self.query_one("#plan-head", Static).update(plan_head(w))
        self.query_one("#now", Static).update("\n".join(now_lines(
            plan, data.run, app.sky, app.states, app.now_jd, w,
            "the plan is being made…" if data.planning else "no plan for this night")))
        if plan is None:
            self.query_one("#summary", Static).update(data.plan_note)
            rows.show([], empty="planning the night…" if data.planning else "no plan for this night")
            return
        self.query_one("#summary", Static).update(plan_summary(plan, app.states, w))
        nxt = app.next_visit_id
        fresh = rows.current is None
        rows.show(plan_rows(plan, app.states, data.run.site.location.timezone, nxt, w), empty="no visits planned")
        if fresh:
            self.to_current()

    def to_current(self) -> None:
        """The cursor to the visit under way, else the next one, else the last."""
        rows = self.query_one(RowList)
        if rows.move_to_kind("under-way", "next"):
            return
        app = self.app
        ended = app.plan is not None and app.now_jd >= app.plan.window_end_jd
        rows.action_move(100000 if ended else -100000)  # a night over: its end; a night ahead: its start

    def chosen_id(self) -> str | None:
        row = self.query_one(RowList).current
        return row.key if row is not None and row.key else None
