"""The top line of every screen: the site, the night, the time now (from the app's clock),
LST, and a busy mark while a worker computes."""

from __future__ import annotations

import math

from textual.reactive import reactive
from textual.widgets import Static

from planner.tui.rows import header_text


class NightHeader(Static):
    """``site · night … · local UTC · LST`` with ``◌ busy`` at its end while computing."""

    DEFAULT_CSS = """
    NightHeader { height: 1; width: 100%; text-wrap: nowrap; }
    """

    site_name: reactive[str] = reactive("")
    zone: reactive[str] = reactive("UTC")
    night = reactive(None)
    now_jd: reactive[float] = reactive(math.nan)
    lst_deg: reactive[float] = reactive(math.nan)
    busy: reactive[str] = reactive("")  # what is being computed, "" when nothing

    def watch_busy(self, busy: str) -> None:
        self.set_class(bool(busy), "-busy")

    def render(self) -> str:
        width = max(self.size.width - 2, 40)
        mark = f" ◌ {self.busy}" if self.busy else ""
        if self.night is None:
            return "gcplan: computing the night…" + mark
        return header_text(self.site_name, self.night, self.now_jd, self.zone, self.lst_deg,
                           width - len(mark)) + mark
