"""A scrolling list of text lines with a cursor, each line styled by its kind.

The list draws only the lines on screen (textual's line API): a night's plan of a
hundred lines costs what twenty do, where a widget per line cost the app's first
screen about a tenth of a second to mount, style and lay out.  A line's look comes
from app.tcss through the component classes ``row--<kind>`` and ``row--cursor``.
A clock tick changes a few lines (the visit under way, the next one): ``show``
then redraws those lines only; a list of other lines (another night, a re-plan)
is taken anew.
"""

from __future__ import annotations

from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from rich.style import Style
from textual.binding import Binding
from textual.geometry import Region, Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip

from planner.tui.rows import Row

#: The kinds of line the screens make (tui.rows), each styled by app.tcss as ``.row--<kind>``.
KINDS = ("under-way", "next", "done", "partial", "skipped", "missed", "unknown", "planned", "idle", "closed",
         "empty", "up", "later", "out", "gain")


class RowList(ScrollView, can_focus=True):
    """Lines of a table; ↑ ↓ PgUp PgDn Home End move the cursor (a line with a key)."""

    COMPONENT_CLASSES = {"row--cursor", *(f"row--{kind}" for kind in KINDS)}
    DEFAULT_CSS = """
    RowList { height: 1fr; overflow-x: hidden; scrollbar-size-vertical: 1; }
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
        self._shown: list[Row] = []  # the lines drawn: the rows, or the line saying there are none

    def show(self, rows: list[Row], empty: str = "") -> None:
        """Show ``rows``: lines that changed are redrawn in place when the list is the same
        list of keys, else the lines are taken anew (the cursor keeps its key if it can)."""
        rows = list(rows)
        old_key = self.rows[self.cursor].key if 0 <= self.cursor < len(self.rows) else None
        if rows and len(rows) == len(self.rows) and [r.key for r in rows] == [r.key for r in self.rows]:
            changed = [i for i, (new, was) in enumerate(zip(rows, self.rows)) if new != was]
            self.rows = self._shown = rows
            for i in changed:
                self.refresh_line(i)
            return
        self.rows = rows
        self.rebuilds += 1
        if not rows:
            self.cursor = -1
            self._shown = [Row(empty, "empty")] if empty else []
        else:
            keys = [r.key for r in rows]
            self.cursor = keys.index(old_key) if old_key in keys else self._first_keyed(0, 1)
            self._shown = rows
        self.virtual_size = Size(0, len(self._shown))
        # The scrollbar shown or hidden now, not a frame later (each frame waits 1/60 s).
        self._refresh_scrollbars()
        self.refresh()

    def render_line(self, y: int) -> Strip:
        width = self.scrollable_content_region.width
        i = y + self.scroll_offset.y
        if not 0 <= i < len(self._shown):
            return Strip.blank(width, Style(bgcolor=self.rich_style.bgcolor))
        row = self._shown[i]
        style = self._line_style(row.kind, i == self.cursor)
        text = row.text if cell_len(row.text) <= width else set_cell_size(row.text, max(width - 1, 0)) + "…"
        # The rest of the line in the line's background only, as a widget per line drew it.
        return Strip([Segment(text, style)], cell_len(text)).extend_cell_length(width, Style(bgcolor=style.bgcolor))

    def _line_style(self, kind: str, cursor: bool) -> Style:
        """The list's own style, then its kind's (``.row--<kind>``), then the cursor's."""
        style = self.rich_style
        if kind in KINDS:
            style += self.get_component_rich_style(f"row--{kind}", partial=True)
        if cursor:
            style += self.get_component_rich_style("row--cursor", partial=True)
        return style

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
        old, self.cursor = self.cursor, i
        if 0 <= old < len(self.rows):
            self.refresh_line(old)
        self.refresh_line(i)
        if scroll and self.size.height:  # laid out: at once (the list's height is known)
            self._scroll_to_cursor()
        elif scroll:
            self.call_after_refresh(self._scroll_to_cursor)
        self.post_message(self.Moved(self.current))

    def _scroll_to_cursor(self) -> None:
        """Centre the cursor's line (as far as the list's ends allow)."""
        if 0 <= self.cursor < len(self.rows):
            self.scroll_to_region(Region(0, self.cursor, max(self.scrollable_content_region.width, 1), 1),
                                  animate=False, center=True, immediate=True)

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
