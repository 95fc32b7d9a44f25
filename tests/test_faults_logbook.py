"""Fault injection on the logbook: another program's database, a missing path, a
read-only file, an old schema, a site profile that moved.

A reading action (``log list``, ``log export``, ``log print``, ``replan``) never creates,
migrates or writes; only a writing one creates a logbook, and says so once.  Each fault
ends in one line on stderr (common practice, no source).
"""

from __future__ import annotations

import os
import sqlite3
from pathlib import Path

import pytest

from helpers.faults import digest, gcplan, one_line_error, one_line_warning
from planner.logbook.store import Logbook, LogbookError, NewEntry

JD = 2461538.5 + 0.3  # 2027-05-13T07:12Z, in the demo site's night of 2027-05-12
READERS = {
    "list": ["log", "list"],
    "export": ["log", "export", "--format", "csv", "--out", "x.csv"],
    "print": ["log", "print", "--night", "2027-05-12", "--site", "demo"],
}


def _foreign(path: Path) -> None:
    db = sqlite3.connect(path)
    db.execute("CREATE TABLE contacts (name TEXT, phone TEXT)")
    db.execute("INSERT INTO contacts VALUES ('Ada', '555')")
    db.commit()
    db.close()


@pytest.mark.parametrize("action", sorted(READERS) + ["add"])
def test_another_programs_database_is_refused_and_left_as_it_was(tmp_path, action):
    other = tmp_path / "other.db"
    _foreign(other)
    before = digest(other)
    argv = READERS.get(action) or ["log", "add", "--target", "NGC 104", "--filter", "V", "--exposure", "3"]
    one_line_error(gcplan(*argv, "--logbook", other, cwd=tmp_path), "not a gcplan logbook", "contacts")
    assert digest(other) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["other.db"]  # no x.csv, no -wal, no -shm


def test_a_file_that_is_not_sqlite_is_not_a_gcplan_logbook(tmp_path):
    text = tmp_path / "notes.db"
    text.write_text("shopping: milk\n" * 100)
    one_line_error(gcplan("log", "list", "--logbook", text), "not a gcplan logbook", "not an SQLite database")
    assert text.read_text() == "shopping: milk\n" * 100


@pytest.mark.parametrize("action", sorted(READERS))
def test_a_missing_logbook_is_an_error_for_reading_actions_and_is_not_created(tmp_path, action):
    one_line_error(gcplan(*READERS[action], "--logbook", tmp_path / "typo.sqlite", cwd=tmp_path), "no such logbook")
    assert list(tmp_path.iterdir()) == []


def test_a_writing_action_creates_the_logbook_and_says_so_once(tmp_path):
    book = tmp_path / "log.sqlite"
    argv = ["log", "note", "dome open", "--logbook", book, "--time", "2027-05-13T01:00Z"]
    first, second = gcplan(*argv), gcplan(*argv)
    assert first.returncode == second.returncode == 0
    assert first.stderr == f"gcplan: created a new logbook at {book}\n" and second.stderr == ""
    with Logbook(book) as b:
        assert [n.text for n in b.notes()] == ["dome open", "dome open"]


def test_an_empty_file_is_nothing_to_read_but_a_writer_may_start_it(tmp_path):
    empty = tmp_path / "empty.sqlite"
    empty.touch()
    one_line_error(gcplan("log", "list", "--logbook", empty), "not a gcplan logbook", "empty")
    assert empty.stat().st_size == 0
    assert gcplan("log", "note", "x", "--logbook", empty).returncode == 0


def _small_logbook(path: Path) -> Path:
    with Logbook(path) as b:
        b.add_entry(NewEntry(time_jd=JD, target="NGC 104", filter="V", exposure_s=30.0))
        b.set_meta("site", "demo")
    return path


def _read_all_three(book: Path, out: Path, run):
    listed = run("log", "list", "--logbook", book, "--json")
    assert listed.returncode == 0 and listed.stderr == "", listed.stderr
    assert '"NGC 104"' in listed.stdout
    exported = run("log", "export", "--logbook", book, "--format", "csv", "--out", out)
    assert exported.returncode == 0 and "NGC 104" in out.read_text(), exported.stderr
    printed = run("log", "print", "--logbook", book, "--night", "2027-05-12")
    assert printed.returncode == 0 and "NGC 104" in printed.stdout, printed.stderr


def test_a_logbook_we_may_not_write_is_read_without_a_file_made_beside_it(tmp_path, monkeypatch, capsys):
    """As a user without write access sees it (os.access says no; root's own check would say yes)."""
    import types

    from planner.cli import main
    from planner.logbook import store

    book = _small_logbook(tmp_path / "log.sqlite")
    before = digest(book)
    monkeypatch.setattr(store.os, "access", lambda path, mode: False)

    def run(*argv):
        code = main([str(a) for a in argv])
        out, err = capsys.readouterr()
        return types.SimpleNamespace(returncode=code, stdout=out, stderr=err)

    out = tmp_path / "out"
    out.mkdir()
    _read_all_three(book, out / "x.csv", run)
    assert digest(book) == before and sorted(p.name for p in tmp_path.iterdir()) == ["log.sqlite", "out"]


@pytest.mark.skipif(os.geteuid() == 0, reason="file modes do not bind root")
def test_a_chmod_read_only_logbook_can_be_listed_exported_and_printed(tmp_path):
    folder = tmp_path / "ro"
    folder.mkdir()
    book = _small_logbook(folder / "log.sqlite")
    before = digest(book)
    os.chmod(book, 0o444)
    os.chmod(folder, 0o555)
    try:
        _read_all_three(book, tmp_path / "x.csv", gcplan)
        one_line_error(gcplan("log", "note", "x", "--logbook", book), "logbook")  # writing: one line
        assert digest(book) == before and sorted(p.name for p in folder.iterdir()) == ["log.sqlite"]
    finally:
        os.chmod(folder, 0o755)


def test_reading_a_writable_logbook_leaves_no_files_beside_it(tmp_path):
    book = tmp_path / "log.sqlite"
    Logbook(book).close()
    assert gcplan("log", "list", "--logbook", book).returncode == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["log.sqlite"]


def test_an_old_logbook_is_read_without_being_migrated(tmp_path):
    """Schema 1 (no plan ids): a reader leaves the schema as it is; a writer migrates it."""
    from planner.logbook.store import _V1

    path = tmp_path / "old.sqlite"
    db = sqlite3.connect(path)
    db.executescript(_V1 + "CREATE TABLE schema_version (version INTEGER PRIMARY KEY, applied_utc TEXT NOT NULL);"
                     "INSERT INTO schema_version VALUES (1, '2026-01-01T00:00:00Z');"
                     f"INSERT INTO entries (time_jd, target, filter, exposure_s) VALUES ({JD}, 'NGC 104', 'V', 30);"
                     "INSERT INTO planned_visits (night, target, filter, exposure_s) "
                     "VALUES ('2027-05-12', 'NGC 104', 'V', 30);")
    db.close()
    with Logbook(path, readonly=True) as b:
        assert b.schema_version() == 1
        assert [v.target for v in b.planned_visits("2027-05-12")] == ["NGC 104"]
        assert b.planned_ids("2027-05-12") == set()
        with pytest.raises(LogbookError):
            b.add_note(JD, "no")
    r = gcplan("log", "print", "--logbook", path, "--night", "2027-05-12", "--site", "demo")
    assert r.returncode == 0 and "NGC 104" in r.stdout, r.stderr
    with Logbook(path, readonly=True) as b:
        assert b.schema_version() == 1 and b.count_entries() == 1
    with Logbook(path) as b:
        assert b.schema_version() == 3 and b.count_entries() == 1


def test_the_logbook_keeps_its_site_when_the_profile_moves(tmp_path):
    from planner.inputs.resources import site_profiles_dir

    profile = tmp_path / "ours.toml"
    profile.write_text((site_profiles_dir() / "demo.toml").read_text())
    book = tmp_path / "log.sqlite"
    add = gcplan("log", "add", "--logbook", book, "--site", profile, "--target", "NGC 104", "--filter", "V",
                 "--exposure", "30", "--time", "2027-05-13T07:12Z")
    assert add.returncode == 0, add.stderr
    profile.rename(tmp_path / "moved.toml")
    listed = gcplan("log", "list", "--logbook", book, "--night", "2027-05-12")
    one_line_warning(listed, "ours.toml", "copy kept in the logbook")
    assert "NGC 104" in listed.stdout and "1 entry" in listed.stdout
    printed = gcplan("log", "print", "--logbook", book, "--night", "2027-05-12")
    assert printed.returncode == 0 and "Cerro Ventisca" in printed.stdout


def test_an_old_logbook_learns_its_profile_text_on_the_next_write(tmp_path):
    from planner.inputs.resources import site_profiles_dir

    profile = tmp_path / "ours.toml"
    profile.write_text((site_profiles_dir() / "demo.toml").read_text())
    book = tmp_path / "log.sqlite"
    with Logbook(book) as b:  # as an older gcplan left it: the path only
        b.set_meta("site", str(profile))
    assert gcplan("log", "list", "--logbook", book).returncode == 0
    with Logbook(book, readonly=True) as b:
        assert b.get_meta("site_profile") is None  # a reader writes nothing
    assert gcplan("log", "observer", "Ada", "--night", "2027-05-12", "--logbook", book).returncode == 0
    with Logbook(book, readonly=True) as b:
        assert b.get_meta("site_profile") == profile.read_text()


def test_replan_reads_the_logbook_and_refuses_another_programs(tmp_path):
    from planner.inputs.resources import targets_dir

    other = tmp_path / "other.db"
    _foreign(other)
    before = digest(other)
    camp = targets_dir() / "demo" / "campaign.toml"
    r = gcplan("replan", "--campaign", camp, "--date", "2027-01-05", "--now", "2027-01-06T03:00Z",
               "--logbook", other, timeout=180)
    one_line_error(r, "not a gcplan logbook")
    assert digest(other) == before
