"""A scrolling list of text lines with a cursor, each line styled by its kind (class).

A clock tick changes a few lines (the visit under way, the next one): ``show``
then updates those lines in place and leaves the rest alone; only a list of
other lines (another night, a re-plan) is built anew.
"""

from __future__ import annotations

from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.message import Message
from textual.widgets import Static

from planner.tui.rows import Row


class RowList(VerticalScroll, can_focus=True):
    """Lines of a table; ↑ ↓ PgUp PgDn Home End move the cursor (a line with a key)."""

    DEFAULT_CSS = """
    RowList { height: 1fr; scrollbar-size-vertical: 1; }
    RowList > .row { height: 1; width: 100%; text-wrap: nowrap; text-overflow: ellipsis; }
    """
    BINDINGS = [
        Binding("up", "move(-1)", show=False), Binding("down", "move(1)", show=False),
        Binding("pageup", "move(-10)", show=False), Binding("pagedown", "move(10)", show=False),
        Binding("home", "move(-100000)", show=False), Binding("end", "move(100000)", show=False),
    ]

    class Moved(Message):
        """The cursor moved to another line."""

        def __init__(self, row: Row | None) -> None:
            super().__init__()
            self.row = row

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.rows: list[Row] = []
        self.cursor = -1
        self.rebuilds = 0  # how many times the lines were built anew (ticks must not)

    def _lines(self) -> list[Static]:
        return [c for c in self.children if isinstance(c, Static)]

    def _row_classes(self, i: int, row: Row) -> str:
        return f"row {row.kind}" + (" -cursor" if i == self.cursor else "")

    def show(self, rows: list[Row], empty: str = "") -> None:
        """Show ``rows``: lines that changed are updated in place when the list is the same
        list of keys, else the lines are built anew (the cursor keeps its key if it can)."""
        rows = list(rows)
        old_key = self.rows[self.cursor].key if 0 <= self.cursor < len(self.rows) else None
        lines = self._lines()
        if rows and len(lines) == len(rows) == len(self.rows) and [r.key for r in rows] == [r.key for r in self.rows]:
            for i, (line, new, was) in enumerate(zip(lines, rows, self.rows)):
                if new != was:
                    line.update(new.text)
                    line.set_classes(self._row_classes(i, new))
            self.rows = rows
            return
        self.rows = rows
        self.rebuilds += 1
        self.remove_children()
        if not rows:
            self.cursor = -1
            if empty:
                self.mount(Static(empty, classes="row empty", markup=False))
            return
        keys = [r.key for r in rows]
        self.cursor = keys.index(old_key) if old_key in keys else self._first_keyed(0, 1)
        self.mount_all([Static(r.text, classes=self._row_classes(i, r), markup=False) for i, r in enumerate(rows)])

    def _first_keyed(self, start: int, step: int) -> int:
        i = start
        while 0 <= i < len(self.rows):
            if self.rows[i].key:
                return i
            i += step
        return -1

    @property
    def current(self) -> Row | None:
        return self.rows[self.cursor] if 0 <= self.cursor < len(self.rows) else None

    def set_cursor(self, i: int, scroll: bool = True) -> None:
        if not self.rows:
            return
        i = max(0, min(i, len(self.rows) - 1))
        lines = self._lines()
        if 0 <= self.cursor < len(lines):
            lines[self.cursor].remove_class("-cursor")
        self.cursor = i
        if i < len(lines):
            lines[i].add_class("-cursor")
            if scroll:
                self.call_after_refresh(self._scroll_to_cursor, 20)
        self.post_message(self.Moved(self.current))

    def _scroll_to_cursor(self, tries: int) -> None:
        """Centre the cursor's line once it is laid out (lines just mounted may not be yet)."""
        lines = self._lines()
        if not 0 <= self.cursor < len(lines):
            return
        line = lines[self.cursor]
        if line.virtual_region.height == 0 and tries > 0:
            self.call_after_refresh(self._scroll_to_cursor, tries - 1)
            return
        self.scroll_to_widget(line, animate=False, center=True)

    def action_move(self, step: int) -> None:
        if not self.rows:
            return
        target = max(0, min(self.cursor + step, len(self.rows) - 1))
        # Gaps have no key: the cursor steps over them.
        k = self._first_keyed(target, 1 if step > 0 else -1)
        if k < 0:
            k = self._first_keyed(target, -1 if step > 0 else 1)
        if k >= 0:
            self.set_cursor(k)

    def move_to_key(self, key: str) -> bool:
        for i, r in enumerate(self.rows):
            if r.key == key:
                self.set_cursor(i)
                return True
        return False

    def move_to_kind(self, *kinds: str) -> bool:
        """The cursor to the first line of one of ``kinds`` (the visit under way, the next)."""
        for kind in kinds:
            for i, r in enumerate(self.rows):
                if r.kind == kind:
                    self.set_cursor(i)
                    return True
        return False
