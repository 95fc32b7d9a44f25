"""The app: holds the campaign, the night shown, the clock and the logbook's account; acts.

Slow work runs in worker threads (``@work(thread=True, exclusive=True)``): the
night's plan, the logbook's re-read, a re-plan, phase coverage, the PDF.  Each
result says which night (and which request) it answers; one for a night or a
request no longer wanted is dropped.  The header shows ``◌`` and what is being
computed meanwhile.  Logbook writes are made on the spot, each its own
committed transaction: quitting at any moment loses nothing already logged.
"""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path

from textual import work
from textual.app import App, SystemCommand
from textual.binding import Binding

from planner.errors import InputError
from planner.sky.nights import datetime_to_jd
from planner.tui import collector
from planner.tui.clock import Clock, system_clock
from planner.tui.night_actions import NightActions, guarded
from planner.tui.screens.dialogs import AskScreen
from planner.tui.screens.help import HelpScreen
from planner.tui.screens.night_screen import NightScreen
from planner.tui.screens.phases import PhaseScreen
from planner.tui.screens.plan import PlanScreen
from planner.tui.screens.tonight import TonightScreen

#: The app's own dark theme: the command palette, the footer and the fields in the same dim,
#: warm tones as app.tcss (no bright panel anywhere).
NIGHT_THEME = dict(name="gcplan-night", primary="#c07a50", secondary="#9c5a4c", accent="#ffb347",
                   warning="#e0905a", error="#ff8a65", success="#b0a060", foreground="#d9c1ab",
                   background="#120b09", surface="#1b110d", panel="#2a1914", dark=True)

#: How often the clock is read, seconds: the marks move at most this late.
TICK_S = 10.0
SCREEN_NAMES = ("plan", "tonight", "phases")
#: Seconds after a night is shown before its neighbours are made (its screen settles first).
READ_AHEAD_AFTER_S = 0.2


class PlannerApp(NightActions, App):
    """gcplan in the terminal: the plan (act on it), the sky now, phase coverage, over one campaign."""

    CSS_PATH = "app.tcss"
    TITLE = "gcplan"
    BINDINGS = [
        Binding("q", "quit", "quit", show=False),
        Binding("ctrl+c", "quit", "quit", show=False, priority=True),
    ]

    def __init__(self, campaign=None, night: dt.date | None = None, clock: Clock = system_clock,
                 seeing_arcsec: float | None = None, tick_s: float = TICK_S,
                 campaign_path: str | Path | None = None, logbook: str | Path | None = None) -> None:
        super().__init__()
        from textual.theme import Theme

        # The theme before the stylesheet is first parsed: set in on_mount, it parsed it all again.
        self.register_theme(Theme(**NIGHT_THEME))
        self.theme = "gcplan-night"
        self._plan_cache = None  # made with the campaign (see plan_cache)
        self._sun_moon = None  # the Sun/Moon samples kept between runs (see sun_moon_store)
        self.campaign = campaign
        self.campaign_path = campaign_path
        self.logbook_file = Path(logbook) if logbook else None  # else the campaign's, beside its file
        self.asked_night = night
        self.clock = clock
        self.seeing_arcsec = seeing_arcsec
        self.tick_s = tick_s
        self.night: dt.date | None = None
        self.now_jd = math.nan
        self.data = None  # NightData of ``night`` once computed
        self.sky = None  # SkyNow at now (or the night's middle on another night)
        self.record = None  # NightRecord of ``night``
        self.states: dict[str, str] = {}
        self.phase_table = None
        self.key = None  # the catalog's name key
        self.message = ""
        self.load_error = ""
        self._nights: dict = {}  # night → NightData
        self._plans: dict = {}  # night → the plan followed (an accepted re-plan replaces the campaign's)
        self._busy: dict[str, int] = {}
        self._replan = None  # (gen, night, result) of the re-plan on show
        self._replan_gen = 0
        self._replan_screen = None

    @property
    def plan_cache(self):
        """The campaign's nights kept for re-use (on disk, beside other runs'): a night change
        or a re-plan plans only that night, whatever its place in the campaign."""
        if self._plan_cache is None and self.campaign is not None:
            from planner.cache.plans import plan_cache_for

            self._plan_cache = plan_cache_for(self.campaign.source)
        return self._plan_cache

    @property
    def sun_moon_store(self):
        """The Sun and Moon samples kept between runs (None when switched off)."""
        if self._sun_moon is None:
            from planner.cache.sun_moon import default_store

            self._sun_moon = default_store() or False
        return self._sun_moon or None

    # ------------------------------------------------------------ start, clock

    def on_load(self) -> None:
        collector.pause()  # until the first night is on screen (planner.tui.collector)

    def on_unmount(self) -> None:
        collector.release()

    def on_mount(self) -> None:
        for name, screen in zip(SCREEN_NAMES, (PlanScreen(), TonightScreen(), PhaseScreen())):
            self.install_screen(screen, name)
        self.push_screen("plan")
        self.read_clock()
        self.set_interval(self.tick_s, self.tick)
        if self.campaign is None:
            self.load_campaign()
        else:
            self._start()

    @work(thread=True, exclusive=True, group="campaign")
    def load_campaign(self) -> None:
        from planner.inputs.campaign_file import read_campaign_file
        from planner.inputs.catalog import load_catalog

        self.call_from_thread(self._set_busy, "reading the campaign", 1)
        try:
            catalog = load_catalog()  # read once: the campaign's targets and the name key
            campaign = read_campaign_file(self.campaign_path, catalog)
        except InputError as exc:
            self.call_from_thread(self._campaign_failed, f"error: {exc}")
            return
        except Exception as exc:  # noqa: BLE001 - the app shows it, never a traceback
            self.call_from_thread(self._campaign_failed, f"error: {self.campaign_path}: {exc}")
            return
        finally:
            self.call_from_thread(self._set_busy, "reading the campaign", -1)
        self.call_from_thread(self._campaign_ready, campaign, catalog.key)

    def _campaign_failed(self, text: str) -> None:
        collector.resume()
        self.load_error = text
        self.message = "the campaign could not be read: fix the file and start again (q quits)"
        self.show_all()

    @guarded
    def _campaign_ready(self, campaign, key) -> None:
        self.campaign = campaign
        self.key = key
        self._start()

    def _start(self) -> None:
        from planner.tui.night_data import night_for_moment

        if self.asked_night is not None:
            self.set_night(self.asked_night)
            return
        night, note = night_for_moment(self.campaign, self.clock())
        self.message = note
        self.set_night(night)

    def read_clock(self) -> None:
        """The time now, and what follows from it (the sky, the visits' states): the header
        and the marks always agree with the clock."""
        self.now_jd = datetime_to_jd(self.clock())
        self._update_sky()
        self._update_states()

    @guarded
    def tick(self) -> None:
        """The clock moved: the sky, the states and the marks follow; the logbook is read again
        (frames ingested beside the app appear)."""
        self.read_clock()
        screen = self.screen
        if isinstance(screen, NightScreen):
            screen.tick()
        if self.night is not None:
            self.load_record(self.night)

    # ------------------------------------------------------------ busy mark

    def _set_busy(self, label: str, step: int) -> None:
        n = self._busy.get(label, 0) + step
        if n > 0:
            self._busy[label] = n
        else:
            self._busy.pop(label, None)
        screen = self.screen
        if isinstance(screen, NightScreen) and screen._ready:
            screen.set_header()

    @property
    def busy_text(self) -> str:
        return ", ".join(self._busy)

    # ------------------------------------------------------------ the night

    @property
    def plan(self):
        return self._plans.get(self.night, self.data.plan if self.data is not None else None)

    @property
    def lst_deg(self) -> float:
        """Local sidereal time now (the header's): the sky's own when it is of now, else the
        mean sidereal time (Meeus 12.4; UT1 taken as UTC, < 1 s) at the site's longitude."""
        if self.sky is not None and abs(self.sky.jd - self.now_jd) < 1e-6:
            return self.sky.lst_deg
        if self.campaign is None or not math.isfinite(self.now_jd):
            return math.nan
        from planner.sky.sidereal import gmst_deg

        return float(gmst_deg(self.now_jd) + self.campaign.site.location.longitude_deg) % 360.0

    @property
    def next_visit_id(self) -> str | None:
        from planner.tui.night_state import next_visit

        if self.sky is not None and abs(self.sky.jd - self.now_jd) > 1e-6:
            return None  # the clock is not in this night: nothing here is next
        v = next_visit(self.plan, self.now_jd)
        return v.id if v is not None else None

    def set_night(self, night: dt.date) -> None:
        from planner.logbook.night_record import NightRecord

        self.night = night
        self.load_error = ""
        self.data = self._nights.get(night)
        self.record = NightRecord(Path(""), False)
        self.phase_table = None
        self._update_sky()
        self._update_states()
        self.show_all()
        if self.data is None:
            self.load_night(night)
        self.load_record(night)

    @work(thread=True, exclusive=True, group="night")
    def load_night(self, night: dt.date) -> None:
        """Almanac, windows and plan of ``night``, computed off the UI thread."""
        from planner.tui.night_data import campaign_night_data, catalog_key, night_sky_data

        self.call_from_thread(self._set_busy, "planning the night", 1)
        try:
            key = self.key or catalog_key()
            sky = night_sky_data(self.campaign, night, self.sun_moon_store)
            # The sky first (header, Moon, what is up): useful while the plan is made.
            self.call_from_thread(self._night_ready, sky, key)
            data = campaign_night_data(self.campaign, night, self.seeing_arcsec, sky, cache=self.plan_cache,
                                       store=self.sun_moon_store)
            accepted, why = self._accepted_plan(night, data.plan)
        except Exception as exc:  # noqa: BLE001 - shown in the app, never as a traceback
            self.call_from_thread(self._night_failed, night, str(exc) or type(exc).__name__)
            return
        finally:
            self.call_from_thread(self._set_busy, "planning the night", -1)
        self.call_from_thread(self._night_ready, data, key, accepted, why)

    def _accepted_plan(self, night, campaign_plan):
        """A re-plan accepted earlier for ``night`` (kept in the logbook), or (None, why/None)."""
        from planner.tui.accepted_plan import read_accepted_plan
        from planner.tui.log_actions import logbook_path

        try:
            return read_accepted_plan(logbook_path(self.campaign, self.logbook_file), night, campaign_plan)
        except Exception as exc:  # noqa: BLE001 - an unreadable logbook: the campaign's plan stands
            return None, f"the logbook could not be read for an accepted re-plan ({exc})"

    @guarded
    def _night_ready(self, data, key, accepted=None, why=None) -> None:
        if not data.planning:
            self._nights[data.night] = data
        if accepted is not None and data.night not in self._plans:
            self._plans[data.night] = accepted  # the re-plan the observer accepted before
            if data.night == self.night:
                self.message = "following the re-plan accepted earlier tonight (kept in the logbook)"
        if why and data.night == self.night:
            self.message = why
        self.key = key
        if data.night != self.night:  # the observer has moved on: stale
            return
        self.data = data
        self._update_sky()
        self._update_states()
        self.show_all()
        if not data.planning:  # once the night is on screen: not to slow its first screen
            collector.resume()
            ahead = [n for n in (self._step(data.night, 1), self._step(data.night, -1))
                     if n is not None and n not in self._nights]
            self.set_timer(READ_AHEAD_AFTER_S, lambda: self.read_ahead(ahead))

    @work(thread=True, exclusive=True, group="ahead")
    def read_ahead(self, nights: list) -> None:
        """The nights either side of the one shown, made while the observer reads it (plans from
        the nights kept on disk): ] and [ show them at once. A failure is said when shown."""
        from planner.tui.night_data import campaign_night_data

        for night in nights:
            try:
                data = campaign_night_data(self.campaign, night, self.seeing_arcsec, cache=self.plan_cache,
                                           store=self.sun_moon_store)
                accepted, _ = self._accepted_plan(night, data.plan)
            except Exception:  # noqa: BLE001 - made again, and its error said, when shown
                return
            self.call_from_thread(self._ahead_ready, data, accepted)

    @guarded
    def _ahead_ready(self, data, accepted) -> None:
        shown = data.night == self.night and self.data is not None and not self.data.planning
        if data.night not in self._nights and not shown:  # else made already by its own worker
            self._night_ready(data, self.key, accepted)

    def _night_failed(self, night: dt.date, message: str) -> None:
        collector.resume()
        if night == self.night:
            self.load_error = f"error: {message}"
            self.show_all()

    @work(thread=True, exclusive=True, group="record")
    def load_record(self, night: dt.date) -> None:
        """The logbook's account of ``night``, read off the UI thread."""
        try:
            record = self._read_record(night)
        except Exception as exc:  # noqa: BLE001 - an unreadable logbook is said, not raised
            self.call_from_thread(self.say, f"✗ the logbook: {exc}")
            return
        self.call_from_thread(self._record_ready, night, record)

    def _read_record(self, night):
        from planner.logbook.night_record import read_night_record
        from planner.tui.log_actions import logbook_path

        return read_night_record(logbook_path(self.campaign, self.logbook_file), night,
                                 self.campaign.site.location.timezone)

    @guarded
    def _record_ready(self, night, record) -> None:
        if night != self.night:
            return
        old = self.record
        same = (old is not None and old.exists == record.exists
                and [e.id for e in old.frames] == [e.id for e in record.frames]
                and [e.id for e in old.events] == [e.id for e in record.events])
        self.record = record
        if not same:
            self._update_states()
            self.show_all()
            if isinstance(self.screen, PhaseScreen):
                self.load_phases()

    def reread_record(self) -> None:
        """After a write: the logbook's account at once (a small read), so the screen shows it."""
        try:
            self._record_ready(self.night, self._read_record(self.night))
        except Exception as exc:  # noqa: BLE001
            self.say(f"✗ the logbook: {exc}")

    def _moment_for_sky(self) -> float:
        """Now, on the clock's night; else the middle of the shown night's dark window."""
        from planner.logbook.night_record import night_span_jd

        run = self.data.run
        a, b = night_span_jd(self.night, run.site.location.timezone)
        if a <= self.now_jd < b:
            return self.now_jd
        s, e = run.visibility.dark_start_jd[0], run.visibility.dark_end_jd[0]
        return (s + e) / 2 if math.isfinite(s) else (a + b) / 2

    def _update_sky(self) -> None:
        from planner.sky.sky_now import sky_now

        if self.data is None or not math.isfinite(self.now_jd):
            self.sky = None
            return
        run = self.data.run
        end = run.visibility.dark_end_jd[0]
        jd = self._moment_for_sky()
        self.sky = sky_now(run, self.data.places, jd, end if math.isfinite(end) else jd)

    def _update_states(self) -> None:
        from planner.tui.night_state import visit_states

        plan = self.plan
        if plan is None or self.record is None or self.key is None:
            self.states = {v.id: "planned" for v in plan.visits} if plan is not None else {}
            return
        self.states = visit_states(plan, self.record, self.now_jd, self.key)

    def show_all(self) -> None:
        screen = self.screen
        if isinstance(screen, NightScreen):
            screen.show_night()

    def _safe(self, callback):
        """A dialog's callback, guarded as the actions are."""
        return lambda *args: guarded(lambda app, *a: callback(*a))(self, *args)

    def say(self, text: str) -> None:
        self.message = text
        screen = self.screen
        if isinstance(screen, NightScreen):
            screen.set_message(text)

    # ------------------------------------------------------------ moving about

    @guarded
    def action_show(self, name: str) -> None:
        if self.screen is not self.get_screen(name):
            self.switch_screen(name)

    @guarded
    def action_other_screen(self) -> None:
        names = list(SCREEN_NAMES)
        current = next((n for n in names if self.screen is self.get_screen(n)), names[0])
        self.switch_screen(names[(names.index(current) + 1) % len(names)])

    @guarded
    def action_step_night(self, step: int) -> None:
        """The next or previous night: within the campaign by its list, else by a day."""
        if self.campaign is None or self.night is None:
            return
        night = self._step(self.night, step)
        if night is None:
            self.say("the campaign's " + ("last" if step > 0 else "first") + " night")
            return
        self.message = ""
        self.set_night(night)

    def _step(self, night: dt.date, step: int) -> dt.date | None:
        """The night ``step`` away: within the campaign by its list (None past its ends),
        else by a day."""
        nights = list(self.campaign.nights)
        if night in nights:
            k = nights.index(night) + step
            return nights[k] if 0 <= k < len(nights) else None
        return night + dt.timedelta(days=step)

    @guarded
    def action_go_night(self) -> None:
        if self.campaign is None:
            return

        def check(text: str) -> str | None:
            from planner.sky.nights import night_out_of_range

            try:
                return night_out_of_range(dt.date.fromisoformat(text.strip()))
            except ValueError:
                return (f"a date YYYY-MM-DD, the night's local evening (got {text.strip()!r}); "
                        f"the campaign runs {self.campaign.nights[0]} to {self.campaign.nights[-1]}")

        def answered(text: str | None) -> None:
            if text:
                self.message = ""
                self.set_night(dt.date.fromisoformat(text.strip()))

        self.push_screen(AskScreen("Go to a night", "the night's local evening date:", f"{self.night}", check),
                         self._safe(answered))

    @guarded
    def action_tonight(self) -> None:
        from planner.tui.night_data import night_for_moment

        if self.campaign is None:
            return
        night, note = night_for_moment(self.campaign, self.clock())
        self.message = note
        self.set_night(night)

    @guarded
    def action_to_current(self) -> None:
        self.action_show("plan")
        screen = self.get_screen("plan")
        if screen._ready:
            screen.to_current()

    def action_help(self) -> None:
        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    # ------------------------------------------------------------ the command palette

    def get_system_commands(self, screen):
        """Every action by name (ctrl+p); the key beside it in the help text."""
        commands = [
            ("Mark the chosen visit done", "d: the visit under way, or the one the cursor is on",
             lambda: self.action_mark("done")),
            ("Mark the chosen visit partial (frames taken)", "p: how many frames were taken; the rest are owed",
             self.action_partial),
            ("Mark the chosen visit skipped", "s: not taken; a re-plan gives its request time again",
             lambda: self.action_mark("skipped")),
            ("Take back the mark of the chosen visit", "u", lambda: self.action_mark("planned")),
            ("Add a note to the log", "n", self.action_note),
            ("Dome closed for weather", "w toggles: closed now", lambda: self.action_dome("closed")),
            ("Dome open again after weather", "w toggles: open now", lambda: self.action_dome("open")),
            ("Make a replan of the rest of the night from now", "r: seeing, then what changes; accept or keep",
             self.action_replan),
            ("Check an exposure under the sky now", "e: level or magnitude, S/N, seeing", self.action_exposure),
            ("Write the night log (PDF)", "l: beside the campaign file", self.action_write_log),
            ("Write the night sheet (text)", "o: beside the campaign file", self.action_write_sheet),
            ("Show the plan", "1", lambda: self.action_show("plan")),
            ("Show the sky now", "2", lambda: self.action_show("tonight")),
            ("Show the phase coverage", "3", lambda: self.action_show("phases")),
            ("Next night", "]", lambda: self.action_step_night(1)),
            ("Previous night", "[", lambda: self.action_step_night(-1)),
            ("Go to a night by date", "g", self.action_go_night),
            ("Tonight: the night the clock is in", "t", self.action_tonight),
            ("Back to the visit under way", "c", self.action_to_current),
            ("Help: the keys", "?", self.action_help),
            ("Quit", "q (everything logged is saved already)", self.exit),
        ]
        for title, help_text, callback in commands:
            yield SystemCommand(title, help_text, callback)
