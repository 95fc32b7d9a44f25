"""Small boxes over the night: a question with one answer, the exposure check, the re-plan.

Whatever is typed is checked where it is typed: a refusal says why and what would do,
under the field, and the box stays open.
"""

from __future__ import annotations

from typing import Callable

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Static


class AskScreen(ModalScreen[str | None]):
    """One line to type; ``check`` returns a hint when the answer will not do (None: fine)."""

    BINDINGS = [Binding("escape", "dismiss(None)", "cancel", priority=True)]

    def __init__(self, title: str, prompt: str, value: str = "", check: Callable[[str], str | None] | None = None,
                 placeholder: str = "") -> None:
        super().__init__()
        self.title_text, self.prompt, self.value, self.placeholder = title, prompt, value, placeholder
        self.check = check or (lambda text: None)

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.title_text, classes="dialog-title")
            yield Static(self.prompt, classes="dialog-text")
            yield Input(self.value, placeholder=self.placeholder, id="answer", classes="field")
            yield Static("enter: keep it · esc: cancel", id="hint", classes="hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        hint = self.check(event.value)
        if hint:
            self.query_one("#hint", Static).update(f"✗ {hint}")
            self.query_one("#hint", Static).add_class("refused")
            return
        self.dismiss(event.value)


class ExposureScreen(ModalScreen[None]):
    """The exposure check: target, filter, level or magnitude, S/N and seeing under the sky now.

    ``compute(fields)`` returns ``(lines, None, None)`` or ``([], field, hint)``."""

    BINDINGS = [Binding("escape", "dismiss(None)", "close", priority=True)]
    FIELDS = (("target", "target"), ("filter", "filter"), ("level", "level or mag"), ("snr", "S/N"),
              ("seeing", "seeing ″"))

    def __init__(self, values: dict[str, str], compute) -> None:
        super().__init__()
        self.values, self.compute = values, compute

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog wide"):
            yield Static("Exposure check — under the sky now (Moon, airmass of the target now)",
                         classes="dialog-title")
            for name, label in self.FIELDS:
                with Horizontal(classes="field-row"):
                    yield Static(label, classes="label")
                    yield Input(self.values.get(name, ""), id=f"f-{name}", classes="field")
            yield Static("enter: compute · tab: next field · esc: close", id="hint", classes="hint")
            yield Static("", id="result", classes="dialog-text")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        fields = {name: self.query_one(f"#f-{name}", Input).value for name, _ in self.FIELDS}
        lines, field, hint = self.compute(fields)
        hint_box = self.query_one("#hint", Static)
        for name, _ in self.FIELDS:
            self.query_one(f"#f-{name}", Input).remove_class("refused")
        if field is not None or hint:
            hint_box.update(f"✗ {field}: {hint}" if field else f"✗ {hint}")
            hint_box.add_class("refused")
            if field is not None:
                box = self.query_one(f"#f-{field}", Input)
                box.add_class("refused")
                box.focus()
            self.query_one("#result", Static).update("")
            return
        hint_box.remove_class("refused")
        hint_box.update("enter: compute again · esc: close")
        self.query_one("#result", Static).update("\n".join(lines))


class ReplanScreen(ModalScreen[bool]):
    """Re-plan from now: the seeing to plan for, then what changes; a accepts, k keeps the old plan."""

    BINDINGS = [Binding("escape", "keep", "keep the plan", priority=True), Binding("k", "keep", "keep", show=False),
                Binding("a", "accept", "accept", show=False)]

    def __init__(self, seeing: float, start: Callable[[float], None]) -> None:
        super().__init__()
        self.seeing, self.start = seeing, start
        self.ready = False

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog wide"):
            yield Static("Re-plan the rest of the night from now", classes="dialog-title")
            yield Static("seeing now, arcsec (enter to re-plan):", classes="dialog-text")
            yield Input(f"{self.seeing:g}", id="seeing", classes="field")
            yield Static("what the logbook says (done, closures, marks) is read as of now", id="hint", classes="hint")
            yield Static("", id="changes", classes="dialog-text changes")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        from planner.model.constraints import seeing_problem

        hint = self.query_one("#hint", Static)
        try:
            seeing = float(event.value)
            problem = seeing_problem(seeing)
        except ValueError:
            problem = f"the seeing in arcsec, such as 1.1 (got {event.value.strip()!r})"
        if problem:
            hint.update(f"✗ {problem}")
            hint.add_class("refused")
            return
        hint.remove_class("refused")
        hint.update("◌ re-planning…")
        self.ready = False
        self.start(seeing)

    def show_changes(self, text: str, can_accept: bool) -> None:
        self.ready = can_accept
        self.query_one("#changes", Static).update(text)
        self.query_one("#hint", Static).update("a: accept the new plan · k or esc: keep the old one"
                                              if can_accept else "esc: close (the plan stands)")
        self.set_focus(None)

    def show_failure(self, text: str) -> None:
        hint = self.query_one("#hint", Static)
        hint.update(f"✗ {text}")
        hint.add_class("refused")

    def action_accept(self) -> None:
        if self.ready:
            self.dismiss(True)

    def action_keep(self) -> None:
        self.dismiss(False)
