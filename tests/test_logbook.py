"""The logbook store: schema and migrations, idempotence, concurrent writers, crash safety.

The checks are against SQLite itself (``PRAGMA integrity_check``, its UNIQUE
constraint, its file locking between processes), not against our own numbers.
"""

from __future__ import annotations

import os
import random
import signal
import sqlite3
import subprocess
import sys
import textwrap
import threading
import time

import pytest

from planner.logbook.ingest import watch_folder
from planner.logbook.store import (
    _MIGRATIONS,
    SCHEMA_VERSION,
    Logbook,
    LogbookError,
    NewEntry,
    night_of_jd,
)
from planner.reports.demo_night import write_invented_frame

JD0 = 2461538.5  # 2027-05-13 00:00 UTC


def _frame_cards(i: int) -> dict:
    # AIRMASS given: the crash test measures the store, not the ephemeris.
    second = i % 60
    minute = (i // 60) % 60
    return {"DATE-OBS": f"2027-05-13T03:{minute:02d}:{second:02d}", "EXPTIME": 1.0, "OBJECT": "NGC 362",
            "FILTER": "V", "AIRMASS": 1.2 + i * 1e-4}


def test_new_logbook_has_the_current_schema_and_wal(tmp_path):
    with Logbook(tmp_path / "a.sqlite") as book:
        assert book.schema_version() == SCHEMA_VERSION
        assert book._db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert book.integrity_ok()


def test_migration_brings_a_version_1_file_up_to_date(tmp_path):
    path = tmp_path / "old.sqlite"
    db = sqlite3.connect(path)
    db.execute("CREATE TABLE schema_version (version INTEGER PRIMARY KEY, applied_utc TEXT NOT NULL)")
    db.executescript(_MIGRATIONS[0][1])
    db.execute("INSERT INTO schema_version VALUES (1, '2026-01-01T00:00:00Z')")
    db.execute("INSERT INTO entries (time_jd, target, filter, exposure_s) VALUES (?, 'NGC 104', 'V', 30)", (JD0,))
    db.commit()
    db.close()
    with Logbook(path) as book:
        assert book.schema_version() == SCHEMA_VERSION == 3
        assert [e.target for e in book.entries()] == ["NGC 104"]  # the old entry survives
        indexes = {r[0] for r in book._db.execute("SELECT name FROM sqlite_master WHERE type = 'index'")}
        assert {"entries_time", "entries_file", "visits_night", "visits_plan_id"} <= indexes


def test_a_newer_schema_is_refused(tmp_path):
    path = tmp_path / "new.sqlite"
    Logbook(path).close()
    db = sqlite3.connect(path)
    db.execute("INSERT INTO schema_version VALUES (99, 'x')")
    db.commit()
    db.close()
    with pytest.raises(LogbookError, match="newer gcplan"):
        Logbook(path)


@pytest.mark.parametrize("make", ["missing_folder", "folder", "not_sqlite", "parent_is_file"])
def test_unusable_paths_give_a_logbook_error(tmp_path, make):
    if make == "missing_folder":
        path = tmp_path / "no" / "such" / "log.sqlite"
    elif make == "folder":
        path = tmp_path
    elif make == "not_sqlite":
        path = tmp_path / "text.sqlite"
        path.write_text("this is not a database\n" * 200)
    else:
        (tmp_path / "plain").write_text("x")
        path = tmp_path / "plain" / "log.sqlite"
    with pytest.raises(LogbookError, match="--logbook FILE") as info:
        Logbook(path)
    assert str(path) in str(info.value) and "\n" not in str(info.value)


def test_the_same_fingerprint_is_one_entry(tmp_path):
    with Logbook(tmp_path / "a.sqlite") as book:
        entry = NewEntry(time_jd=JD0, target="NGC 104", filter="V", exposure_s=30.0, fingerprint="abc", source="fits")
        first = book.add_entry(entry)
        assert first is not None
        assert book.add_entry(entry) is None
        assert book.count_entries() == 1
        # manual entries have no fingerprint: two identical ones are two entries
        book.add_entry(NewEntry(time_jd=JD0, target="NGC 104"))
        book.add_entry(NewEntry(time_jd=JD0, target="NGC 104"))
        assert book.count_entries() == 3


def test_bad_entries_are_refused_without_a_trace(tmp_path):
    with Logbook(tmp_path / "a.sqlite") as book:
        with pytest.raises(LogbookError, match="frames"):
            book.add_entry(NewEntry(time_jd=JD0, target="x", frames=0))
        with pytest.raises(LogbookError, match="refused"):
            book.add_entry(NewEntry(time_jd=JD0, target="x", exposure_s=-1.0))
        with pytest.raises(LogbookError, match="closed or open"):
            book.add_weather(JD0, "cloudy")
        assert book.count_entries() == 0 and book.weather() == []


def test_entries_complete_their_planned_visit_only_with_its_frames(tmp_path):
    """An entry is linked to the planned visit it is evidence for (same cluster by the
    catalog's aliases, same filter, exposure within 10 %, inside the visit's time); the
    visit is done once all its frames are in."""
    from planner.inputs.catalog import load_catalog

    key = load_catalog().key
    night = "2027-05-12"
    span = 10 / 1440
    with Logbook(tmp_path / "a.sqlite") as book:
        ids = book.add_planned_visits(night, [
            {"target": "NGC 104", "filter": "V", "exposure_s": 30, "frames": 1, "start_jd": JD0,
             "end_jd": JD0 + span, "plan_id": "0512-N104-hbV1", "line": 0},
            {"target": "NGC 104", "filter": "I", "exposure_s": 100, "frames": 2, "start_jd": JD0 + 0.01,
             "end_jd": JD0 + 0.01 + span, "plan_id": "0512-N104-tipI1", "line": 0},
            {"target": "NGC 362", "start_jd": JD0 + 0.02}])
        t = JD0 + 0.011
        wrong_filter = book.add_entry(NewEntry(time_jd=t, target="NGC 104", filter="R", exposure_s=100), night, key)
        long_exp = book.add_entry(NewEntry(time_jd=t, target="NGC 104", filter="I", exposure_s=120), night, key)
        first = book.add_entry(NewEntry(time_jd=t, target="47 Tuc", filter="I", exposure_s=95), night, key)
        half = {v.id: v.done_entry_id for v in book.planned_visits(night)}
        second = book.add_entry(NewEntry(time_jd=t + 0.002, target="ngc104", filter="I", exposure_s=100), night, key)
        visits = {v.id: v.done_entry_id for v in book.planned_visits(night)}
        by_id = {e.id: e.visit_id for e in book.entries()}
    assert half == {ids[0]: None, ids[1]: None, ids[2]: None}  # one frame of two: not done
    assert visits == {ids[0]: None, ids[1]: second, ids[2]: None}
    assert by_id[first] == by_id[second] == ids[1]
    assert by_id[wrong_filter] is None and by_id[long_exp] is None


def test_recording_a_plan_twice_adds_nothing(tmp_path):
    rows = [{"target": "NGC 104", "filter": f, "exposure_s": 30, "start_jd": JD0, "end_jd": JD0 + 0.01,
             "plan_id": "0512-N104-hbV1", "line": n} for n, f in enumerate("VI")]
    with Logbook(tmp_path / "a.sqlite") as book:
        first = book.add_planned_visits("2027-05-12", rows)
        again = book.add_planned_visits("2027-05-12", rows)
        stored = book.planned_visits("2027-05-12")
        assert len(first) == 2 and again == [] and len(stored) == 2
        assert {v.plan_id for v in stored} == book.planned_ids("2027-05-12") == {"0512-N104-hbV1"}


def test_night_of_a_moment_is_its_local_evening_date():
    import datetime as dt

    # 2027-05-13 03:00 UTC is 23:00 on the 12th in Santiago (UTC-4 in May; tz database).
    assert night_of_jd(JD0 + 3 / 24, "America/Santiago") == dt.date(2027, 5, 12)
    # 17:00 UTC is 13:00 local on the 13th: after local noon, the night of the 13th.
    assert night_of_jd(JD0 + 17 / 24, "America/Santiago") == dt.date(2027, 5, 13)


def test_two_writers_at_once_watcher_and_manual_entries(tmp_path):
    """A watcher ingests frames as they appear while someone types entries: nothing lost, nothing doubled."""
    frames, book_path = tmp_path / "frames", tmp_path / "log.sqlite"
    frames.mkdir()
    Logbook(book_path).close()
    stop = threading.Event()
    errors = []

    def watcher():
        try:
            with Logbook(book_path) as book:
                watch_folder(book, frames, None, interval_s=0.02, should_stop=stop.is_set)
        except Exception as exc:  # pragma: no cover - reported below
            errors.append(exc)

    thread = threading.Thread(target=watcher)
    thread.start()
    n = 40
    with Logbook(book_path) as book:
        for i in range(n):
            write_invented_frame(tmp_path / "tmp.fits", _frame_cards(i), shape=(4, 4), seed=i)
            os.replace(tmp_path / "tmp.fits", frames / f"f{i:03d}.fits")  # appears whole
            book.add_entry(NewEntry(time_jd=JD0 + i / 1440, target="NGC 104", filter="V", note=f"manual {i}"))
    stop.set()
    thread.join(30)
    assert not errors and not thread.is_alive()
    with Logbook(book_path) as book:
        entries = book.entries()
        assert book.integrity_ok()
    assert sum(e.source == "manual" for e in entries) == n
    files = [e.file for e in entries if e.source == "fits"]
    assert len(files) == n and len(set(files)) == n


_CHILD = textwrap.dedent("""
    import sys
    from planner.logbook.ingest import ingest_folder
    from planner.logbook.store import Logbook
    with Logbook(sys.argv[1]) as book:
        ingest_folder(book, sys.argv[2], None)
""")


@pytest.mark.slow
def test_sigkill_at_random_moments_loses_nothing_and_doubles_nothing(tmp_path):
    n = 300
    frames, book_path = tmp_path / "frames", tmp_path / "log.sqlite"
    frames.mkdir()
    for i in range(n):
        write_invented_frame(frames / f"f{i:03d}.fits", _frame_cards(i), shape=(2, 2), seed=i)
    Logbook(book_path).close()

    def count():
        db = sqlite3.connect(book_path, timeout=30)
        try:
            return db.execute("SELECT COUNT(*) FROM entries").fetchone()[0]
        finally:
            db.close()

    # A fixed seed for the pauses before each kill, so the draws are the same every
    # run (where the kills land still depends on the machine's speed: that is the
    # point of the test).  The loop ends after 6 kills (about 6 s here); the 30-s cap
    # is only there so that a slow, loaded machine still gets its 3 kills in.
    seed = 20270513
    rng = random.Random(seed)
    kills_mid_way, started = 0, time.monotonic()
    while kills_mid_way < 6 and time.monotonic() - started < 30:
        before = count()
        if before == n:
            break
        child = subprocess.Popen([sys.executable, "-c", _CHILD, str(book_path), str(frames)])
        while child.poll() is None and count() == before:  # wait until it is writing
            time.sleep(0.005)
        time.sleep(rng.uniform(0.0, 0.025))  # a few commits in: mid-ingest
        if child.poll() is None:
            os.kill(child.pid, signal.SIGKILL)
            child.wait()
            if count() < n:
                kills_mid_way += 1
    subprocess.run([sys.executable, "-c", _CHILD, str(book_path), str(frames)], check=True, timeout=60)
    db = sqlite3.connect(book_path)
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok", f"seed {seed}"
    rows = db.execute("SELECT file, COUNT(*) FROM entries GROUP BY fingerprint").fetchall()
    db.close()
    assert kills_mid_way >= 3, f"only {kills_mid_way} kills landed mid-ingest (seed {seed})"
    assert len(rows) == n and all(c == 1 for _, c in rows), f"seed {seed}"
    assert sorted(os.path.basename(f) for f, _ in rows) == [f"f{i:03d}.fits" for i in range(n)]
