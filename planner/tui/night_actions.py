"""The app's actions on the night: the observer's marks, notes and weather (written to the
logbook the moment they are made), the re-plan, the exposure check, phase coverage, and the
night's files.  A mixin of :class:`planner.tui.app.PlannerApp`, which holds the state they use
(the campaign, the night, the clock, the logbook's account).
"""

from __future__ import annotations

import datetime as dt

from textual import work

from planner.errors import InputError
from planner.sky.nights import local_hhmm
from planner.tui.screens.dialogs import AskScreen, ExposureScreen, ReplanScreen
from planner.tui.screens.plan import PlanScreen


def guarded(method):
    """An action or a result handler that never lets an exception reach the screen as a
    traceback: it is said on the message line, and the app carries on (what was logged
    stays logged: every write is committed on its own)."""
    import functools

    @functools.wraps(method)
    def run(self, *args, **kwargs):
        try:
            return method(self, *args, **kwargs)
        except Exception as exc:  # noqa: BLE001 - the one place the app turns a fault into a line
            self.say(f"✗ {type(exc).__name__}: {exc}")
            return None

    return run


class NightActions:
    """What the keys and the command palette do (see the module docstring)."""

    # ------------------------------------------------------------ the chosen visit

    def chosen_visit(self):
        """The visit the cursor is on (plan screen), else the one under way."""
        plan = self.plan
        if plan is None:
            return None
        screen = self.get_screen("plan")
        vid = screen.chosen_id() if screen._ready else None
        if vid is None or not isinstance(self.screen, PlanScreen):
            current = next((v for v in plan.visits if v.start_jd <= self.now_jd < v.end_jd), None)
            return current if current is not None else next(
                (v for v in plan.visits if v.id == vid), None)
        return next((v for v in plan.visits if v.id == vid), None)

    def _ready_to_log(self) -> bool:
        if self.campaign is None or self.night is None:
            self.say("✗ no campaign is open")
            return False
        return True

    def _logged(self, text: str) -> None:
        self.reread_record()
        self.say(f"{text} — logged {local_hhmm(self.now_jd, self.campaign.site.location.timezone)}")

    def _log_failed(self, exc: Exception) -> None:
        self.say(f"✗ not logged: {exc}")

    # ------------------------------------------------------------ actions: log

    @guarded
    def action_mark(self, status: str) -> None:
        from planner.tui import log_actions
        from planner.tui.night_state import mark_problem

        if not self._ready_to_log():
            return
        self.read_clock()
        v = self.chosen_visit()
        problem = mark_problem(v, self.now_jd, status) if status != "planned" else (
            None if v is not None else "choose a visit first (↑ ↓ on the plan)")
        if problem:
            self.say(f"✗ {problem}")
            return
        try:
            log_actions.add_mark(self.campaign, self.night, v, status, self.now_jd, logbook=self.logbook_file)
        except (InputError, OSError) as exc:
            self._log_failed(exc)
            return
        word = {"done": "✓ done", "skipped": "✗ skipped", "planned": "mark taken back:"}[status]
        self._logged(f"{word} {v.id}")

    @guarded
    def action_partial(self) -> None:
        from planner.tui import log_actions
        from planner.tui.night_state import frames_problem, mark_problem

        if not self._ready_to_log():
            return
        self.read_clock()
        v = self.chosen_visit()
        problem = mark_problem(v, self.now_jd, "partial")
        total = sum(int(e.frames) for e in v.exposures) if v is not None else 0
        if not problem and total < 2:
            problem = f"{v.id} has one frame: mark it done (d) or skip it (s)"
        if problem:
            self.say(f"✗ {problem}")
            return

        def answered(text: str | None) -> None:
            if text is None:
                return
            n, _ = frames_problem(text, total)
            try:
                log_actions.add_partial(self.campaign, self.night, v, n, self.now_jd, self.key,
                                        logbook=self.logbook_file)
            except (InputError, OSError) as exc:
                self._log_failed(exc)
                return
            self._logged(f"½ partial {v.id}: {n} of {total} frames")

        self.push_screen(AskScreen(f"Partial: {v.id} {v.target}",
                                   f"frames taken so far, of its {total} (the rest are owed):",
                                   check=lambda t: frames_problem(t, total)[1], placeholder="e.g. 2"), self._safe(answered))

    @guarded
    def action_note(self) -> None:
        from planner.tui import log_actions

        if not self._ready_to_log():
            return

        def answered(text: str | None) -> None:
            if text is None:
                return
            self.read_clock()
            try:
                log_actions.add_note(self.campaign, self.now_jd, text, logbook=self.logbook_file)
            except (InputError, OSError) as exc:
                self._log_failed(exc)
                return
            self._logged("note")

        self.push_screen(AskScreen("Note to the log", "what happened (written with the time now):",
                                   check=lambda t: None if t.strip() else "a note needs some words",
                                   placeholder="e.g. cirrus from the west"), self._safe(answered))

    @guarded
    def action_weather(self) -> None:
        closed = self.record is not None and self.record.closed_now
        self.action_dome("open" if closed else "closed")

    @guarded
    def action_dome(self, state: str) -> None:
        from planner.tui import log_actions

        if not self._ready_to_log():
            return
        self.read_clock()
        try:
            log_actions.add_weather(self.campaign, self.now_jd, state, f"dome {state} (weather)",
                                    logbook=self.logbook_file)
        except (InputError, OSError) as exc:
            self._log_failed(exc)
            return
        hint = " · r re-plans the rest" if state == "open" else " · w when it opens"
        self._logged(f"dome {state} for weather{hint}")

    # ------------------------------------------------------------ re-plan

    @guarded
    def action_replan(self) -> None:
        if self.plan is None or self.data is None:
            self.say("✗ no plan to re-plan on this night")
            return
        seeing = self.plan.seeing_arcsec
        self._replan_screen = ReplanScreen(seeing, self.start_replan)
        self.push_screen(self._replan_screen, self._replan_closed)

    @guarded
    def start_replan(self, seeing: float) -> None:
        self._replan_gen += 1
        self._replan = None
        self.read_clock()
        self.compute_replan(self._replan_gen, self.night, self.now_jd, seeing)

    @work(thread=True, exclusive=True, group="replan")
    def compute_replan(self, gen: int, night: dt.date, now_jd: float, seeing: float) -> None:
        from planner.scheduling.plan_diff import diff_plans
        from planner.scheduling.replan import replan_night

        self.call_from_thread(self._set_busy, "re-planning", 1)
        try:
            record = self._read_record(night)
            base = self._plans.get(night)
            used = set(record.recorded_ids) | ({v.id for v in base.visits} if base is not None else set())
            result = replan_night(self.campaign, night, now_jd, done=record.ids_marked("done"), logged=record.frames,
                                  seeing_arcsec=seeing, key=self.key, logged_closed=record.closed,
                                  used_ids=used, skipped=record.ids_marked("skipped"), base=base,
                                  stopped=record.ids_marked("partial"), cache=self.plan_cache,
                                  store=self.sun_moon_store)
            current = base if base is not None else result.original
            diff = diff_plans(current.visits, result.plan.visits, now_jd)
        except Exception as exc:  # noqa: BLE001 - shown in the box, never as a traceback
            self.call_from_thread(self._replan_failed, gen, str(exc) or type(exc).__name__)
            return
        finally:
            self.call_from_thread(self._set_busy, "re-planning", -1)
        self.call_from_thread(self._replan_ready, gen, night, result, diff)

    @guarded
    def _replan_ready(self, gen, night, result, diff) -> None:
        from planner.tui.replan_text import changes_text

        if gen != self._replan_gen or night != self.night or self._replan_screen is None:
            return  # stale: another re-plan was asked for, or the box is closed
        self._replan = (gen, night, result)
        zone = self.campaign.site.location.timezone
        self._replan_screen.show_changes(changes_text(result, diff, zone), bool(result.reasons))

    @guarded
    def _replan_failed(self, gen, text) -> None:
        if gen == self._replan_gen and self._replan_screen is not None:
            self._replan_screen.show_failure(text)

    @guarded
    def _replan_closed(self, accepted: bool | None) -> None:
        from planner.tui import log_actions

        self._replan_screen = None
        replan, self._replan = self._replan, None
        self._replan_gen += 1  # anything still computing is stale now
        if not accepted or replan is None or replan[1] != self.night:
            self.say("the plan stands as it was")
            return
        _, night, result = replan
        self._plans[night] = result.plan
        zone = self.campaign.site.location.timezone
        try:
            log_actions.record_plan(self.campaign, night, result.plan, logbook=self.logbook_file, now_jd=result.now_jd)
            log_actions.add_note(self.campaign, result.now_jd,
                                 f"re-planned from {local_hhmm(result.now_jd, zone)}: " + "; ".join(result.reasons),
                                 logbook=self.logbook_file)
        except (InputError, OSError) as exc:
            self._log_failed(exc)
        self._update_states()
        self.phase_table = None
        self.show_all()
        self.reread_record()
        self.say(f"re-plan accepted: {len(result.plan.visits)} visits from {local_hhmm(result.now_jd, zone)}")
        screen = self.get_screen("plan")
        if screen._ready:
            screen.to_current()

    # ------------------------------------------------------------ exposure check

    @guarded
    def action_exposure(self) -> None:
        if self.campaign is None or self.data is None:
            self.say("✗ the night is not computed yet")
            return
        v = self.chosen_visit()
        target = v.target if v is not None else self.campaign.targets[0].name
        filt = v.exposures[0].filter if v is not None and v.exposures else next(iter(self.campaign.site.filters))
        level = v.purpose if v is not None and v.purpose in ("tip", "hb", "turnoff") else "hb"
        seeing = self.plan.seeing_arcsec if self.plan is not None else self.campaign.site.sky.typical_seeing_arcsec
        values = {"target": target, "filter": filt, "level": level, "snr": "100", "seeing": f"{seeing:g}"}
        self.push_screen(ExposureScreen(values, self.exposure_answer))

    def exposure_answer(self, fields: dict):
        try:
            return self._exposure_answer(fields)
        except Exception as exc:  # noqa: BLE001 - said in the box, never a traceback
            return [], None, f"{type(exc).__name__}: {exc}"

    def _exposure_answer(self, fields: dict):
        from planner.tui.night_state import check_exposure, parse_exposure_fields

        run = self.data.run
        want = self.key(fields["target"]) if self.key else fields["target"].strip()
        k = next((i for i, t in enumerate(run.targets)
                  if (self.key(t.name) if self.key else t.name) == want), None)
        if k is None:
            names = ", ".join(t.name for t in run.targets)
            return [], "target", f"one of the campaign's targets: {names} (got {fields['target'].strip()!r})"
        ask, field, hint = parse_exposure_fields(self.campaign, run.targets[k], fields["filter"], fields["level"],
                                                 fields["snr"], fields["seeing"])
        if ask is None:
            return [], field, hint
        self._update_sky()
        s = self.sky
        lines, why = check_exposure(self.campaign, ask, float(s.airmass[k]), s.moon_illumination,
                                    float(s.moon_separation_deg[k]), s.moon_altitude_deg)
        return (lines, None, None) if why is None else ([], None, why)

    # ------------------------------------------------------------ phases

    @guarded
    def load_phases(self) -> None:
        if self.campaign is not None and self.data is not None and self.key is not None:
            self.compute_phases(self.night, self.now_jd, self.plan)

    @work(thread=True, exclusive=True, group="phases")
    def compute_phases(self, night, now_jd, plan) -> None:
        from planner.logbook.store import Logbook
        from planner.tui.log_actions import logbook_path
        from planner.tui.night_state import phase_table

        self.call_from_thread(self._set_busy, "phase coverage", 1)
        try:
            path = logbook_path(self.campaign, self.logbook_file)
            frames = []
            if path.is_file():
                with Logbook(path) as book:
                    frames = book.entries()
            table = phase_table(self.campaign, frames, plan, now_jd, self.key)
        except Exception as exc:  # noqa: BLE001
            self.call_from_thread(self.say, f"✗ phase coverage: {exc}")
            return
        finally:
            self.call_from_thread(self._set_busy, "phase coverage", -1)
        self.call_from_thread(self._phases_ready, night, table)

    @guarded
    def _phases_ready(self, night, table) -> None:
        if night != self.night:
            return
        self.phase_table = table
        self.show_all()

    # ------------------------------------------------------------ files

    @guarded
    def action_write_sheet(self) -> None:
        from planner.tui.log_actions import write_night_sheet

        if self.plan is None:
            self.say("✗ no plan on this night: no night sheet")
            return
        try:
            path = write_night_sheet(self.campaign, self.plan, self.night)
        except OSError as exc:
            self.say(f"✗ night sheet not written: {exc}")
            return
        self.say(f"night sheet written: {path}")

    @guarded
    def action_write_log(self) -> None:
        if self.campaign is None or self.night is None:
            return
        self.write_log(self.night)

    @work(thread=True, exclusive=True, group="output")
    def write_log(self, night) -> None:
        from planner.tui.log_actions import write_night_log

        self.call_from_thread(self._set_busy, "writing the night log", 1)
        try:
            path = write_night_log(self.campaign, night, self.logbook_file)
        except Exception as exc:  # noqa: BLE001
            self.call_from_thread(self.say, f"✗ night log not written: {exc}")
            return
        finally:
            self.call_from_thread(self._set_busy, "writing the night log", -1)
        self.call_from_thread(self.say, f"night log written: {path}")
