"""Help: every key, the marks and where things are written, over whichever screen is showing."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

HELP_TEXT = """\
gcplan — keys (also in ctrl+p, by name)

 act on the chosen visit (↑ ↓ choose; it starts on the visit under way)
  d done   p partial (frames taken)   s skip   u take a mark back
  n note to the log      w dome closed / open again (weather)
  r replan from now: seeing, then what changes; a accepts, k keeps
  e exposure check under the sky now (level or mag, S/N, seeing)
 look
  1 plan   2 sky now   3 phase coverage   tab next screen   c to now
  ] next night   [ previous night   g go to a night   t tonight
 write (beside the campaign file)
  o the night sheet (text)   l the night log (PDF)
  ? this help   ctrl+p every action by name   q quit (all is saved)

marks  ▶ under way  › next  ✓ done  ½ partial  ✗ skipped/missed
       ? unknown (started; nothing logged says)  ┄ idle or closed
sky    ▶ up now, with the time left inside the limits
       · out now, with the reason

Times: the site's local clock, UTC beside it. Any key closes this."""


class HelpScreen(ModalScreen[None]):
    """The keys and the marks; any key closes it."""

    BINDINGS = [Binding("escape", "dismiss", "close")]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help-box"):
            yield Static(HELP_TEXT, markup=False)

    def on_key(self, event) -> None:
        if event.key not in ("q", "ctrl+q", "ctrl+c"):
            event.stop()
            self.dismiss()
