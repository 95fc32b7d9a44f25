"""When does the observing log show that a planned visit was taken?

The rule, one place for every reader of the log (the re-planner, the logbook's
links from frames to planned visits):

* a logged frame counts for a visit's line of frames (filter, frames × exposure)
  when it is **the same target** (names compared by a key the caller gives —
  the catalog's aliases, so ``M3``, ``M 3`` and ``NGC 5272`` are one cluster),
  **the same filter**, an **exposure within** :data:`EXPOSURE_TOLERANCE` of the
  planned one, and it **starts inside the visit's span** widened by
  :data:`TIME_TOLERANCE_D` on either side (observers start a little late or
  early; a frame outside that is another visit's, or none);
* each frame counts once: it goes to the matching visit whose span it falls in,
  else the nearest one (on the boundary of two visits back to back, the later one),
  and never beyond the frames a line asks for;
* a visit with all its frames is ``done``; with some but not all ``partial``
  (:attr:`VisitEvidence.owed` lists the frames still to take); with none, the
  log holds no evidence for it.

A frame whose exposure or filter is not in the log (``None``) is no evidence:
nothing can be checked against the plan.

Pure: visits and frames are duck-typed (a visit has ``id``, ``target``,
``exposures`` of ``filter``/``frames``/``exposure_s``, ``start_jd``, ``end_jd``;
a frame ``id``, ``target``, ``filter``, ``exposure_s``, ``frames``, ``time_jd``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterable, Sequence

from planner.model.names import normalize_name

#: A frame's exposure may differ from the plan's by this fraction (the observer
#: rounds, a sequencer adds a second): beyond it the frame was taken for something else.
EXPOSURE_TOLERANCE = 0.10
#: A frame may start this long before or after the visit's planned span (days):
#: 15 minutes, about the slip of a night that runs a visit or two late (our choice).
TIME_TOLERANCE_D = 15.0 / 1440.0


@dataclass(frozen=True)
class FrameLine:
    """A line of frames: ``frames`` × ``exposure_s`` in ``filter`` (planned, or still owed)."""

    filter: str
    frames: int
    exposure_s: float


@dataclass(frozen=True)
class VisitEvidence:
    visit_id: str
    status: str | None  # "done" | "partial" | None (no frame of it in the log)
    frames_found: int
    frames_planned: int
    owed: tuple[FrameLine, ...]
    entry_ids: tuple  # the log entries counted for it


def exposure_matches(planned_s: float, logged_s: float | None) -> bool:
    """A logged exposure within :data:`EXPOSURE_TOLERANCE` of the planned one."""
    if logged_s is None or planned_s is None:
        return False
    return abs(float(logged_s) - float(planned_s)) <= EXPOSURE_TOLERANCE * float(planned_s) + 1e-9


def outside_span_d(visit, time_jd: float) -> float:
    """How far a moment lies outside the visit's span (0 inside), days."""
    return max(visit.start_jd - time_jd, time_jd - visit.end_jd, 0.0)


def line_fits(visit, line, frame, key: Callable[[str], str] = normalize_name) -> bool:
    """Whether ``frame`` can count for ``line`` (an exposure line) of ``visit``."""
    return (frame.filter is not None and frame.filter == line.filter
            and exposure_matches(line.exposure_s, frame.exposure_s)
            and key(frame.target) == key(visit.target)
            and outside_span_d(visit, frame.time_jd) <= TIME_TOLERANCE_D)


def match_visits(visits: Sequence, frames: Iterable, key: Callable[[str], str] = normalize_name
                 ) -> dict[str, VisitEvidence]:
    """The log's evidence for each visit (by id), frames counted once each (see the module docstring)."""
    need = {v.id: [int(e.frames) for e in v.exposures] for v in visits}
    got = {v.id: [0] * len(v.exposures) for v in visits}
    entries: dict[str, list] = {v.id: [] for v in visits}
    for f in sorted(frames, key=lambda f: (f.time_jd, f.id if f.id is not None else 0)):
        left = max(int(f.frames or 1), 1)
        # Candidates: (distance outside the span, distance from the science start, start, visit,
        # line) with frames still wanted.  The second key settles a frame on the boundary of two
        # visits back to back (one's end is the next one's start): it is the later one's.
        cands = sorted(((outside_span_d(v, f.time_jd), abs(f.time_jd - getattr(v, "science_start_jd", v.start_jd)), v.start_jd, n, v, k)
                        for n, v in enumerate(visits)
                        for k, line in enumerate(v.exposures) if line_fits(v, line, f, key)),
                       key=lambda c: c[:4])
        for _, _, _, _, v, k in cands:
            take = min(left, need[v.id][k] - got[v.id][k])
            if take <= 0:
                continue
            got[v.id][k] += take
            left -= take
            if f.id not in entries[v.id]:
                entries[v.id].append(f.id)
            if left == 0:
                break
    out = {}
    for v in visits:
        found, planned = sum(got[v.id]), sum(need[v.id])
        status = None if found == 0 else "done" if found >= planned else "partial"
        owed = tuple(FrameLine(e.filter, n - g, float(e.exposure_s))
                     for e, n, g in zip(v.exposures, need[v.id], got[v.id]) if n > g)
        out[v.id] = VisitEvidence(v.id, status, found, planned, owed, tuple(entries[v.id]))
    return out
