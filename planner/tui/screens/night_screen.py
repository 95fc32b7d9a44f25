"""What every per-night screen shares: the header, the message line, the keys that act.

The app holds the night, the clock and the logbook's account; it calls
``show_night`` when the night's data, the plan or the logbook changed, and
``tick`` when only the clock moved (lines are then updated in place).
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import Static

from planner.tui.widgets.key_footer import KeyFooter
from planner.tui.widgets.night_header import NightHeader
from planner.tui.widgets.row_list import RowList

#: The keys of every night screen (the app's actions); ``show`` puts them in the footer.
NIGHT_KEYS = [
    Binding("d", "app.mark('done')", "done"),
    Binding("p", "app.partial", "partial"),
    Binding("s", "app.mark('skipped')", "skip"),
    Binding("n", "app.note", "note"),
    Binding("w", "app.weather", "dome"),
    Binding("r", "app.replan", "replan"),
    Binding("e", "app.exposure", "expose"),
    Binding("question_mark", "app.help", "help", key_display="?"),
    Binding("u", "app.mark('planned')", "unmark", show=False),
    Binding("1", "app.show('plan')", "plan", show=False),
    Binding("2", "app.show('tonight')", "sky", show=False),
    Binding("3", "app.show('phases')", "phases", show=False),
    Binding("tab", "app.other_screen", "next screen", show=False),
    Binding("right_square_bracket", "app.step_night(1)", "next night", show=False, key_display="]"),
    Binding("left_square_bracket", "app.step_night(-1)", "previous night", show=False, key_display="["),
    Binding("g", "app.go_night", "go to night", show=False),
    Binding("t", "app.tonight", "tonight", show=False),
    Binding("c", "app.to_current", "to now", show=False),
    Binding("o", "app.write_sheet", "night sheet", show=False),
    Binding("l", "app.write_log", "night log", show=False),
]


class NightScreen(Screen):
    """Base of the plan, sky and phase screens: the header, the screen's own parts (``parts``),
    the list of rows, the message line and the keys; subclasses fill theirs in ``fill``."""

    BINDINGS = NIGHT_KEYS
    _ready = False
    ROWS_ID = "rows"  # the id of the screen's RowList

    def parts(self) -> ComposeResult:
        """The widgets between the header and the list of rows."""
        return iter(())

    def compose(self) -> ComposeResult:
        yield NightHeader(id="header")
        yield from self.parts()
        yield RowList(id=self.ROWS_ID)
        yield Static("", id="message", classes="message")
        yield KeyFooter(show_command_palette=False, compact=True)

    def on_mount(self) -> None:
        self._ready = True
        self.query_one(RowList).focus()
        self.show_night()

    def on_screen_resume(self) -> None:
        if self._ready:
            self.show_night()

    def on_resize(self) -> None:
        if self._ready:
            self.show_night()

    @property
    def width(self) -> int:
        return max(self.size.width - 2, 40)

    def set_header(self) -> None:
        app = self.app
        h = self.query_one(NightHeader)
        h.site_name = app.campaign.site.location.name if app.campaign else "gcplan"
        h.zone = app.campaign.site.location.timezone if app.campaign else "UTC"
        h.night = app.night
        h.now_jd = app.now_jd
        h.lst_deg = app.lst_deg
        h.busy = app.busy_text

    def set_message(self, text: str) -> None:
        if self._ready:
            self.query_one("#message", Static).update(text)

    def show_night(self) -> None:
        """The header and the message line, then the screen's own body (``fill``)."""
        if not self._ready:
            return
        app = self.app
        self.set_header()
        self.query_one("#message", Static).update(self.message_text(app))
        self.fill(app)

    def message_text(self, app) -> str:
        """The message line: the app's last word (a screen may say more)."""
        return app.message

    def fill(self, app) -> None:  # pragma: no cover - every subclass defines it
        """The screen's own parts and rows, from the app's night."""
        raise NotImplementedError

    def tick(self) -> None:
        """The clock moved: what depends on it only."""
        self.show_night()
