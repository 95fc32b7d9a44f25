"""What every per-night screen shares: the data the app sets, the clock, the busy mark."""

from __future__ import annotations

import math

from textual.reactive import reactive
from textual.screen import Screen

from planner.tui.widgets.night_header import NightHeader
from planner.tui.widgets.row_list import RowList


class NightScreen(Screen):
    """Base of the tonight and plan screens; subclasses compose and ``redraw``."""

    #: Set by the app: the night's data (planner.tui.night_data.NightData), the time, whether busy.
    data = reactive(None, init=False)
    now_jd: reactive[float] = reactive(math.nan, init=False)
    busy: reactive[bool] = reactive(False, init=False)
    note: reactive[str] = reactive("", init=False)

    _ready = False  # set once mounted: the widgets exist

    def on_mount(self) -> None:
        self._ready = True
        self.redraw()
        self.query_one(RowList).focus()

    def watch_data(self) -> None:
        self.redraw()

    def watch_now_jd(self) -> None:
        self.redraw()

    def watch_busy(self, busy: bool) -> None:
        if self._ready:
            self.query_one(NightHeader).busy = busy

    def redraw(self) -> None:  # pragma: no cover - every subclass defines it
        raise NotImplementedError
