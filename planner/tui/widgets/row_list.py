"""A scrolling list of text lines, each styled by its kind (class) from app.tcss."""

from __future__ import annotations

from textual.containers import VerticalScroll
from textual.widgets import Static

from planner.tui.rows import Row


class RowList(VerticalScroll):
    """Lines of a table; the keyboard scrolls it (↑ ↓ PgUp PgDn Home End) once focused."""

    DEFAULT_CSS = """
    RowList { height: 1fr; scrollbar-size-vertical: 1; }
    RowList > .row { height: 1; width: 100%; text-wrap: nowrap; text-overflow: ellipsis; }
    """

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.rows: list[Row] = []

    def show(self, rows: list[Row], empty: str = "") -> None:
        """Replace the lines; ``empty`` is shown when there are none."""
        self.rows = list(rows)
        self.remove_children()
        if not rows and empty:
            self.mount(Static(empty, classes="row empty"))
            return
        self.mount_all([Static(r.text, classes=f"row {r.kind}", markup=False) for r in rows])

    def scroll_to_first(self, *kinds: str) -> None:
        """Bring the first line of one of ``kinds`` into view (the visit under way, the next)."""
        for kind in kinds:
            for child in self.query(f".row.{kind}"):
                self.call_after_refresh(self.scroll_to_widget, child, animate=False, center=True)
                return
