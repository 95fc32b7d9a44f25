"""What the logbook says of one night, as a re-plan and the app read it.

One reader for ``gcplan replan`` and the terminal app, so both see the same
night: its frames, its closed periods (``closed`` until the next ``open``, or
the night's end), the visit ids of its recorded plan, the observer's marks on
visits (done, partial, skipped; the last mark of a visit counts) and the
night's events (notes, weather, marks) in time order.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from pathlib import Path

from planner.sky.nights import local_noon_jd


@dataclass(frozen=True)
class NightRecord:
    """The logbook's account of a night (empty when there is no logbook file)."""

    path: Path
    exists: bool
    frames: tuple = ()  # LogEntry, in time order
    closed: tuple = ()  # (start_jd, end_jd) pairs
    recorded_ids: frozenset = frozenset()
    marks: dict = field(default_factory=dict)  # plan_id → VisitMark (the latest of each visit)
    events: tuple = ()  # NightEvent, in time order
    closed_now: bool = False  # the last weather change is a closure

    def ids_marked(self, status: str) -> tuple[str, ...]:
        """Ids of the visits whose latest mark is ``status``."""
        return tuple(sorted(k for k, m in self.marks.items() if m.status == status))

    def note(self) -> str:
        """What was read, in one line."""
        if not self.exists:
            return f"no logbook at {self.path}: nothing is read from one"
        n = len(self.frames)
        return (f"logbook {self.path}: {n} entr{'y' if n == 1 else 'ies'} this night, "
                f"{len(self.closed)} closed period(s), {len(self.recorded_ids)} recorded visit(s)"
                + (f", {len(self.marks)} visit(s) marked" if self.marks else ""))


def night_span_jd(night: dt.date, zone: str) -> tuple[float, float]:
    """Local noon to the next local noon, JD (UTC)."""
    return local_noon_jd(night, zone), local_noon_jd(night + dt.timedelta(days=1), zone)


def read_night_record(path: str | Path, night: dt.date, zone: str) -> NightRecord:
    """The night's account from the logbook at ``path`` (nothing, if there is no such file)."""
    p = Path(path)
    if not p.is_file():
        return NightRecord(p, False)
    from planner.logbook.store import Logbook, closed_periods  # SQLite only when there is a file

    a, b = night_span_jd(night, zone)
    with Logbook(p, readonly=True) as book:  # reading never creates, migrates or writes
        frames = tuple(book.entries(a, b))
        weather = sorted(book.weather(a, b), key=lambda e: e.time_jd)
        recorded = frozenset(book.planned_ids(night))
        marks = book.latest_marks(night)
        events = tuple(book.events(a, b))
    closed_now = bool(weather) and weather[-1].state == "closed"
    return NightRecord(p, True, frames, tuple(closed_periods(weather, b)), recorded, marks, events, closed_now)
