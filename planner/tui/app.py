"""The app: holds the campaign, the night shown and the clock; computes nights in a worker.

App-wide keys live here; each screen has its own.  The night's data is computed
off the UI thread (``@work(thread=True, exclusive=True)``) and posted back with
``call_from_thread``; a result for a night no longer asked for is dropped.
"""

from __future__ import annotations

import datetime as dt
import math

from textual import work
from textual.app import App
from textual.binding import Binding
from textual.reactive import reactive

from planner.errors import InputError
from planner.sky.nights import datetime_to_jd
from planner.tui.clock import Clock, system_clock
from planner.tui.night_data import NightData, campaign_night_data
from planner.tui.screens.help import HelpScreen
from planner.tui.screens.plan import PlanScreen
from planner.tui.screens.tonight import TonightScreen

#: How often the clock is read, seconds: the marks move at most a minute late.
TICK_S = 20.0

SCREEN_NAMES = ("tonight", "plan")


class PlannerApp(App):
    """gcplan in the terminal: ``tonight`` and ``plan`` screens over one campaign."""

    CSS_PATH = "app.tcss"
    TITLE = "gcplan"
    ENABLE_COMMAND_PALETTE = False  # every action has its key; keep the footer for them
    BINDINGS = [
        Binding("1", "show('tonight')", "tonight"),
        Binding("2", "show('plan')", "plan"),
        Binding("tab", "other_screen", "switch", show=False, priority=True),
        Binding("n", "step_night(1)", "next"),
        Binding("p", "step_night(-1)", "prev"),
        Binding("question_mark", "help", "help", key_display="?"),
        Binding("q", "quit", "quit", priority=True),
        Binding("ctrl+c", "quit", "quit", show=False, priority=True),  # as terminal users expect (ssh too)
    ]

    night = reactive(None, init=False)  # dt.date shown
    now_jd: reactive[float] = reactive(math.nan, init=False)
    data = reactive(None, init=False)  # NightData of ``night`` once computed
    busy: reactive[bool] = reactive(False, init=False)
    note: reactive[str] = reactive("", init=False)

    def __init__(self, campaign, night: dt.date | None = None, clock: Clock = system_clock,
                 seeing_arcsec: float | None = None, tick_s: float = TICK_S, plan_cache=None) -> None:
        super().__init__()
        from planner.cache.plans import plan_cache_for

        # the campaign's nights kept for re-use (on disk, beside other runs'): a night change
        # plans only that night, whatever its place in the campaign
        self.plan_cache = plan_cache if plan_cache is not None else plan_cache_for(campaign.source)
        self.campaign = campaign
        self._first_night = night or campaign.nights[0]
        self.clock = clock
        self.seeing_arcsec = seeing_arcsec
        self.tick_s = tick_s
        self._nights: dict[dt.date, NightData] = {}  # computed nights, kept for n/p back and forth

    # ------------------------------------------------------------ start, clock

    def on_mount(self) -> None:
        self.install_screen(TonightScreen(), "tonight")
        self.install_screen(PlanScreen(), "plan")
        self.push_screen("tonight")
        self.read_clock()
        self.set_interval(self.tick_s, self.read_clock)
        self.night = self._first_night

    def read_clock(self) -> None:
        self.now_jd = datetime_to_jd(self.clock())

    def _screens(self):
        return [self.get_screen(name) for name in SCREEN_NAMES]

    def _share(self, name: str, value) -> None:
        for screen in self._screens():
            setattr(screen, name, value)

    def watch_now_jd(self, value: float) -> None:
        self._share("now_jd", value)

    def watch_data(self, value) -> None:
        self._share("data", value)

    def watch_busy(self, value: bool) -> None:
        self._share("busy", value)

    def watch_note(self, value: str) -> None:
        self._share("note", value)

    # ------------------------------------------------------------ the night

    def watch_night(self, night: dt.date) -> None:
        self.note = ""
        if night in self._nights:
            self.busy = False
            self.data = self._nights[night]
            return
        self.busy = True
        self.load_night(night)

    @work(thread=True, exclusive=True, group="night")
    def load_night(self, night: dt.date) -> None:
        """Almanac, windows and plan of ``night``, computed off the UI thread."""
        try:
            data = campaign_night_data(self.campaign, night, self.seeing_arcsec, self.plan_cache)
        except InputError as exc:
            self.call_from_thread(self._night_failed, night, str(exc))
            return
        self.call_from_thread(self._night_ready, data)

    def _night_ready(self, data: NightData) -> None:
        self._nights[data.night] = data
        if data.night != self.night:  # the observer has moved on: stale
            return
        self.busy = False
        self.data = data

    def _night_failed(self, night: dt.date, message: str) -> None:
        if night == self.night:
            self.busy = False
            self.note = f"error: {message}"

    # ------------------------------------------------------------ keys

    def action_show(self, name: str) -> None:
        if self.screen is not self.get_screen(name) and not isinstance(self.screen, HelpScreen):
            self.switch_screen(name)

    def action_other_screen(self) -> None:
        if isinstance(self.screen, HelpScreen):
            return
        current = "plan" if self.screen is self.get_screen("plan") else "tonight"
        self.switch_screen("tonight" if current == "plan" else "plan")

    def action_step_night(self, step: int) -> None:
        """The next or previous night: within the campaign by its list, else by a day."""
        nights = self.campaign.nights
        if self.night in nights:
            k = nights.index(self.night) + step
            if not 0 <= k < len(nights):
                self.notify("the campaign's " + ("last" if step > 0 else "first") + " night", timeout=2)
                return
            self.night = nights[k]
        else:
            self.night = self.night + dt.timedelta(days=step)

    def action_help(self) -> None:
        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())
