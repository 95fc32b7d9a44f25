"""The top line of every screen: the site, the night, the time now (from the app's clock)."""

from __future__ import annotations

import math

from textual.reactive import reactive
from textual.widgets import Static

from planner.tui.rows import header_text


class NightHeader(Static):
    """``site │ night … │ now …``, redrawn when any of its reactive parts change."""

    DEFAULT_CSS = """
    NightHeader { height: 1; width: 100%; text-wrap: nowrap; }
    """

    site_name: reactive[str] = reactive("")
    zone: reactive[str] = reactive("UTC")
    night = reactive(None)
    now_jd: reactive[float] = reactive(math.nan)
    busy: reactive[bool] = reactive(False)

    def watch_busy(self, busy: bool) -> None:
        self.set_class(busy, "-busy")

    def render(self) -> str:
        if self.night is None:
            return "gcplan: computing the night…"
        text = header_text(self.site_name, self.night, self.now_jd, self.zone)
        return text + (" …" if self.busy and len(text) < 77 else "")
