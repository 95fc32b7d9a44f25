"""Help: the keys, over whichever screen is showing."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Static

HELP_TEXT = """\
gcplan — keys

  1 / 2      tonight (almanac, targets) / the night's plan
  tab        the other screen
  n / p      next / previous night
  ↑ ↓ PgUp PgDn Home End   scroll the list
  c          plan: back to the visit under way (or the next)
  ?          this help        q   quit

Tonight   ▶ window open now   · window over   × not observable
Plan      ▶ under way   › next   · done   ┄ idle or closed

Times: site's local clock, UTC beside. Any key closes this."""


class HelpScreen(ModalScreen[None]):
    """The keys and the marks; any key closes it."""

    BINDINGS = [Binding("escape", "dismiss", "close")]

    def compose(self) -> ComposeResult:
        with Vertical(id="help-box"):
            yield Static(HELP_TEXT, markup=False)

    def on_key(self, event) -> None:
        if event.key != "q":
            event.stop()
            self.dismiss()
