"""The rule for "done": a visit is done when the log holds its frames (same cluster by the
catalog's aliases, same filter, exposure within 10 %, inside the visit's time)."""

from __future__ import annotations

from dataclasses import dataclass

import pytest

from planner.inputs.catalog import load_catalog
from planner.model.evidence import EXPOSURE_TOLERANCE, TIME_TOLERANCE_D, match_visits
from planner.model.evidence import FrameLine as Line

JD0 = 2461411.6
SPAN_D = 20 / 1440


@dataclass(frozen=True)
class PlanVisit:
    id: str
    target: str
    exposures: tuple
    start_jd: float
    end_jd: float


@dataclass(frozen=True)
class Frame:
    id: int
    target: str
    filter: str | None
    exposure_s: float | None
    time_jd: float
    frames: int = 1


KEY = load_catalog().key


def _visit(vid="0105-N5272-tipI1", target="NGC 5272", lines=(Line("I", 2, 300.0),), start=JD0):
    return PlanVisit(vid, target, tuple(lines), start, start + SPAN_D)


def _status(visits, frames):
    return {k: e.status for k, e in match_visits(visits, frames, KEY).items()}


def test_all_frames_make_it_done_and_alias_names_match():
    v = _visit()
    frames = [Frame(1, "M3", "I", 300.0, JD0 + 0.002), Frame(2, "M 3", "I", 300.0, JD0 + 0.006)]
    ev = match_visits([v], frames, KEY)[v.id]
    assert (ev.status, ev.frames_found, ev.frames_planned, ev.owed) == ("done", 2, 2, ())
    assert ev.entry_ids == (1, 2)


def test_one_of_two_frames_is_partial_and_owes_one():
    v = _visit()
    ev = match_visits([v], [Frame(1, "NGC 5272", "I", 300.0, JD0 + 0.002)], KEY)[v.id]
    assert ev.status == "partial"
    assert [(o.filter, o.frames, o.exposure_s) for o in ev.owed] == [("I", 1, 300.0)]


def test_wrong_filter_is_no_evidence():
    assert _status([_visit()], [Frame(1, "M3", "V", 300.0, JD0 + 0.002, frames=2)]) == {"0105-N5272-tipI1": None}


@pytest.mark.parametrize("factor, counts", [(1.2, False), (0.8, False), (1.09, True), (0.91, True)])
def test_exposure_must_be_within_ten_percent(factor, counts):
    assert EXPOSURE_TOLERANCE == 0.10
    status = _status([_visit()], [Frame(1, "M3", "I", 300.0 * factor, JD0 + 0.002, frames=2)])
    assert status["0105-N5272-tipI1"] == ("done" if counts else None)


def test_missing_exposure_or_filter_is_no_evidence():
    frames = [Frame(1, "M3", "I", None, JD0 + 0.002, frames=2), Frame(2, "M3", None, 300.0, JD0 + 0.003, frames=2)]
    assert _status([_visit()], frames) == {"0105-N5272-tipI1": None}


def test_time_outside_the_span_and_its_tolerance_is_no_evidence():
    v = _visit()
    late = v.end_jd + TIME_TOLERANCE_D + 1 / 1440
    slightly_late = v.end_jd + TIME_TOLERANCE_D - 1 / 1440
    assert _status([v], [Frame(1, "M3", "I", 300.0, late, frames=2)])[v.id] is None
    assert _status([v], [Frame(1, "M3", "I", 300.0, slightly_late, frames=2)])[v.id] == "done"


def test_other_cluster_is_no_evidence():
    assert _status([_visit()], [Frame(1, "M 13", "I", 300.0, JD0 + 0.002, frames=2)]) == {"0105-N5272-tipI1": None}


def test_each_frame_counts_once_and_for_the_visit_it_falls_in():
    """Two visits of one kind 25 min apart: frames go to the visit whose span holds them,
    and a frame never completes two visits."""
    a = _visit("0105-N5272-var1", lines=(Line("V", 1, 60.0),), start=JD0)
    b = _visit("0105-N5272-var2", lines=(Line("V", 1, 60.0),), start=JD0 + 25 / 1440)
    in_b = Frame(1, "M3", "V", 60.0, b.start_jd + 0.001)
    assert _status([a, b], [in_b]) == {a.id: None, b.id: "done"}
    both = [in_b, Frame(2, "M3", "V", 60.0, a.start_jd + 0.001)]
    assert _status([a, b], both) == {a.id: "done", b.id: "done"}


def test_a_grouped_entry_counts_its_frames_across_lines():
    v = _visit(lines=(Line("V", 2, 100.0), Line("I", 3, 120.0)))
    frames = [Frame(1, "M3", "V", 100.0, JD0 + 0.001, frames=2), Frame(2, "M3", "I", 120.0, JD0 + 0.004, frames=2)]
    ev = match_visits([v], frames, KEY)[v.id]
    assert (ev.status, ev.frames_found, ev.frames_planned) == ("partial", 4, 5)
    assert [(o.filter, o.frames) for o in ev.owed] == [("I", 1)]


def test_a_frame_on_the_boundary_of_two_visits_back_to_back_is_the_later_ones():
    """Two like visits of one cluster back to back (one's end is the next one's start): a frame
    that starts on the boundary cannot belong to the visit that ends there."""
    first = _visit("0105-N5272-hbV1", lines=(Line("V", 1, 20.0),))
    second = _visit("0105-N5272-hbV2", lines=(Line("V", 1, 20.0),), start=first.end_jd)
    assert _status([first, second], [Frame(1, "NGC 5272", "V", 20.0, second.start_jd)]) == {
        first.id: None, second.id: "done"}
