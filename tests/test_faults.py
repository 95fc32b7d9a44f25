"""Fault injection: hostile FITS frames, foreign and missing logbooks, full disks, FIFOs.

Each case must end in its one-line error (``gcplan: error: …``, exit 2) or its
warning, with nothing already stored lost and nothing created or changed that
the user did not ask for.  Commands that could hang run in a subprocess with a
timeout, so a hang fails the test instead of blocking the suite.  What counts as
"one line, no traceback" is common practice, no source; the frames are written
with astropy.io.fits (the reference writer of the format).
"""

from __future__ import annotations

import os
import time
from pathlib import Path

import pytest

from planner.config import configure_runtime
from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.logbook.ingest import ingest_folder
from planner.logbook.store import Logbook
from planner.reports.demo_night import write_invented_frame

from helpers.faults import gcplan

GOOD = {"DATE-OBS": "2027-05-13T03:10:00.5", "EXPTIME": 120.0, "OBJECT": "NGC 362", "FILTER": "V",
        "RA": "01:03:14.26", "DEC": "-70:50:55.6"}
#: The ingest's "now" in these tests: a day after the good frame.
NOW_JD = 2461538.5 + 1.0


@pytest.fixture(scope="module")
def site():
    configure_runtime()
    return resolve_site("demo")


# --- hostile frames ---------------------------------------------------------------

#: Each hostile frame: its cards, and a word its skip reason (or warning) must hold.
HOSTILE = {
    "year_0001.fits": ({"DATE-OBS": "0001-01-01T00:00:00"}, "DATE-OBS"),
    "year_9999.fits": ({"DATE-OBS": "9999-12-31T23:59:59"}, "DATE-OBS"),
    "garbage_date.fits": ({"DATE-OBS": "last tuesday"}, "DATE-OBS"),
    "numeric_date.fits": ({"DATE-OBS": 5}, "DATE-OBS"),
    "exptime_huge.fits": ({"EXPTIME": 1e30}, "EXPTIME"),
    "exptime_negative.fits": ({"EXPTIME": -5.0}, "EXPTIME"),
    "exptime_text.fits": ({"EXPTIME": "long"}, "EXPTIME"),
    "exptime_bool.fits": ({"EXPTIME": True}, "EXPTIME"),
    "no_object.fits": ({"OBJECT": None}, "OBJECT"),
    "blank_object.fits": ({"OBJECT": "   "}, "OBJECT"),
    "ra_text.fits": ({"RA": "north"}, "RA"),
    "dec_out.fits": ({"DEC": 100.0}, "DEC"),
}


def _write_hostile(folder: Path) -> None:
    for name, (cards, _) in HOSTILE.items():
        merged = {k: v for k, v in (GOOD | cards).items() if v is not None}
        write_invented_frame(folder / name, merged, seed=len(name))


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_each_hostile_frame_is_skipped_alone_and_the_good_one_stored(tmp_path, site, name):
    frames = tmp_path / "frames"
    frames.mkdir()
    cards, word = HOSTILE[name]
    write_invented_frame(frames / "good.fits", GOOD)
    write_invented_frame(frames / name, {k: v for k, v in (GOOD | cards).items() if v is not None}, seed=3)
    with Logbook(tmp_path / "log.sqlite") as book:
        started = time.monotonic()
        report = ingest_folder(book, frames, site, load_catalog(), now_jd=NOW_JD)
        took = time.monotonic() - started
        assert [Path(e.file).name for e in book.entries()] == ["good.fits"]
    reasons = {Path(f).name: r for f, r in report.skipped}
    assert set(reasons) == {name} and word in reasons[name], reasons
    # A date years away builds no Sun/Moon table spanning the years (that took minutes);
    # a generous cap, far from the 28 s a 1970 date used to cost.
    assert took < 20.0


def test_an_unset_camera_clock_costs_what_a_good_frame_does(tmp_path, site):
    """1970 (a clock never set) is inside the ephemeris' years: stored, with its airmass, and the
    pass builds one small Sun/Moon table per run of frames, not one spanning 57 years."""
    from planner.logbook import ingest

    frames = tmp_path / "frames"
    frames.mkdir()
    write_invented_frame(frames / "good.fits", GOOD)
    write_invented_frame(frames / "epoch.fits", GOOD | {"DATE-OBS": "1970-01-01T00:00:00"}, seed=1)
    spans = []
    real = ingest.airmass_at.__globals__["time_groups"]

    def spy(jd, gap):
        groups = real(jd, gap)
        spans.extend(float(jd[g].max() - jd[g].min()) for g in groups)
        return groups

    ingest.airmass_at.__globals__["time_groups"] = spy
    try:
        with Logbook(tmp_path / "log.sqlite") as book:
            report = ingest_folder(book, frames, site, load_catalog(), now_jd=NOW_JD)
    finally:
        ingest.airmass_at.__globals__["time_groups"] = real
    assert len(report.added) == 2 and report.skipped == ()
    assert len(spans) == 2 and max(spans) < 1.0


def test_a_frame_from_the_future_is_stored_without_computed_airmass(tmp_path, site):
    frames = tmp_path / "frames"
    frames.mkdir()
    write_invented_frame(frames / "good.fits", GOOD)
    write_invented_frame(frames / "later.fits", GOOD | {"DATE-OBS": "2031-05-13T03:10:00"}, seed=1)
    with Logbook(tmp_path / "log.sqlite") as book:
        report = ingest_folder(book, frames, site, load_catalog(), now_jd=NOW_JD)
        by_name = {Path(e.file).name: e for e in book.entries()}
    assert set(by_name) == {"good.fits", "later.fits"}
    assert by_name["good.fits"].airmass_source == "computed"
    assert by_name["later.fits"].airmass is None
    assert any("later.fits" in w and "DATE-OBS" in w and "future" in w for w in report.warnings)


def test_all_hostile_frames_at_once_through_the_command_line(tmp_path):
    frames = tmp_path / "frames"
    frames.mkdir()
    _write_hostile(frames)
    write_invented_frame(frames / "good.fits", GOOD)
    (frames / "empty.fits").write_bytes(b"")
    (frames / "random.fits").write_bytes(os.urandom(5000))
    (frames / "folder.fits").mkdir()
    os.mkfifo(frames / "pipe.fits")  # opening it would block: it is not a frame
    (frames / "loop.fits").symlink_to(frames / "loop.fits")
    book = tmp_path / "log.sqlite"
    r = gcplan("log", "ingest", frames, "--logbook", book, "--site", "demo", "--json", timeout=120)
    assert r.returncode == 0, r.stderr[-2000:]
    assert "Traceback" not in r.stderr
    import json

    data = json.loads(r.stdout)
    assert data["added"] == 1
    skipped = {Path(s["file"]).name for s in data["skipped"]}
    assert set(HOSTILE) | {"empty.fits", "random.fits"} <= skipped
    with Logbook(book) as b:
        assert [Path(e.file).name for e in b.entries()] == ["good.fits"]
        assert b.integrity_ok()
