"""The observing log: one SQLite file that must never lose what was taken.

This is a shell module (it owns a file).  Every write is its own committed
transaction (``BEGIN IMMEDIATE`` … ``COMMIT``) on a database in WAL mode with
``synchronous=FULL``: a process killed at any moment leaves every committed
entry in place and at most the entry in flight missing, never half of one.
Frames ingested from FITS files carry a content fingerprint (SHA-256 of the
file's bytes) under a UNIQUE constraint, so a frame ingested twice — or again
after a crash — stays one entry.

Schema (version :data:`SCHEMA_VERSION`; ``schema_version`` records each
migration applied, and :data:`_MIGRATIONS` brings an older file up to date)::

    meta(key PRIMARY KEY, value)            site spec, time zone, created
    entries(id, time_jd, target, filter, exposure_s, frames, airmass,
            airmass_source 'header'|'computed', seeing_arcsec, sky_note, note,
            file, file_size, file_mtime_ns, fingerprint UNIQUE, ra_deg, dec_deg,
            source 'fits'|'manual', visit_id -> planned_visits, created_utc)
    weather(id, time_jd, state 'closed'|'open', note)
    notes(id, time_jd, text)
    observers(id, night 'YYYY-MM-DD', name, UNIQUE(night, name))
    planned_visits(id, night, target, filter, exposure_s, frames,
                   start_jd, end_jd, done_entry_id -> entries,
                   plan_id, line, UNIQUE(night, plan_id, line))
    visit_marks(id, time_jd, night, plan_id, status 'done'|'partial'|'skipped'|'planned',
                note)                   created by the first mark written (see below)

A planned visit is one line of frames (one filter) of a plan's visit: ``plan_id``
is the plan's visit id (:mod:`planner.scheduling.visit_ids`), ``line`` its
place in the visit's sequence; recording a plan again adds nothing.  An entry
is linked to the planned visit its frames are evidence for
(:func:`planner.model.evidence.line_fits`: target, filter, exposure, time), and
``done_entry_id`` is set by the entry that completes the visit's frames.

``visit_marks`` holds what the observer says of a planned visit (the app's done,
partial, skip; ``planned`` takes a mark back).  It is made by the first mark
written — ``CREATE TABLE IF NOT EXISTS`` inside that write's transaction — so a
file only ever read keeps its schema, and readers find no marks in a file
without the table.  :meth:`Logbook.events` gives the notes, weather changes and
marks of a span as one list in time order.

Times are Julian dates on the UTC scale.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import sqlite3
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Sequence

import numpy as np

from planner.errors import InputError
# Where the logbook is lives in the package (a reader with no file to read needs no more).
from planner.logbook import DEFAULT_LOGBOOK_NAME, default_logbook_path  # noqa: F401

#: The schema this code writes; files from older versions are migrated on open.
SCHEMA_VERSION = 3
#: How long a writer waits for another (a watcher and a manual entry at once), seconds.
BUSY_TIMEOUT_S = 30.0
WEATHER_STATES = ("closed", "open")
#: What the observer can say of a planned visit; ``planned`` withdraws an earlier mark.
MARK_STATES = ("done", "partial", "skipped", "planned")
_MARKS_TABLE = """CREATE TABLE IF NOT EXISTS visit_marks (
    id INTEGER PRIMARY KEY, time_jd REAL NOT NULL, night TEXT NOT NULL, plan_id TEXT NOT NULL,
    status TEXT NOT NULL CHECK (status IN ('done', 'partial', 'skipped', 'planned')), note TEXT)"""


class LogbookError(InputError):
    """A logbook file that cannot be opened or written, or a bad log entry."""


class EntryRefused(LogbookError):
    """One record the logbook's constraints refuse (the file itself is fine)."""


@dataclass(frozen=True)
class LogEntry:
    """One row of the log: a frame (or a group of ``frames`` identical frames)."""

    id: int
    time_jd: float  # UTC, start of the (first) exposure
    target: str
    filter: str | None
    exposure_s: float | None
    frames: int
    airmass: float | None
    airmass_source: str | None  # "header" | "computed" | None
    seeing_arcsec: float | None
    sky_note: str | None
    note: str | None
    file: str | None
    fingerprint: str | None
    ra_deg: float | None
    dec_deg: float | None
    source: str  # "fits" | "manual"
    visit_id: int | None


@dataclass(frozen=True)
class NewEntry:
    """An entry before it is stored (what ingestion and ``log add`` build)."""

    time_jd: float
    target: str
    filter: str | None = None
    exposure_s: float | None = None
    frames: int = 1
    airmass: float | None = None
    airmass_source: str | None = None
    seeing_arcsec: float | None = None
    sky_note: str | None = None
    note: str | None = None
    file: str | None = None
    file_size: int | None = None
    file_mtime_ns: int | None = None
    fingerprint: str | None = None
    ra_deg: float | None = None
    dec_deg: float | None = None
    source: str = "manual"


@dataclass(frozen=True)
class WeatherEvent:
    id: int
    time_jd: float
    state: str  # "closed" | "open"
    note: str | None


@dataclass(frozen=True)
class NightNote:
    id: int
    time_jd: float
    text: str


@dataclass(frozen=True)
class VisitMark:
    """The observer's word on a planned visit (``plan_id``), at ``time_jd``."""

    id: int
    time_jd: float
    night: str
    plan_id: str
    status: str  # one of MARK_STATES
    note: str | None


@dataclass(frozen=True)
class NightEvent:
    """A note, a weather change or a visit mark, as one line of the night's events.

    ``id`` names the table and row (``note-3``, ``weather-2``, ``mark-5``): each table numbers its own rows.
    """

    id: str
    time_jd: float
    kind: str  # "note" | "closed" | "open" | "done" | "partial" | "skipped" | "planned"
    text: str


@dataclass(frozen=True)
class PlannedVisit:
    id: int
    night: str  # local evening date, YYYY-MM-DD
    target: str
    filter: str | None
    exposure_s: float | None
    frames: int
    start_jd: float | None
    end_jd: float | None
    done_entry_id: int | None  # the entry that completed its frames
    plan_id: str | None = None  # the plan's visit id (None in plans recorded before ids were kept)
    line: int | None = None  # which line of the visit's sequence

    @property
    def exposures(self):
        """The visit as one line of frames (what :mod:`planner.model.evidence` reads)."""
        from planner.model.evidence import FrameLine

        return (FrameLine(self.filter, int(self.frames), float(self.exposure_s)),) if (
            self.filter is not None and self.exposure_s is not None) else ()


_V1 = """
CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE planned_visits (
    id INTEGER PRIMARY KEY, night TEXT NOT NULL, target TEXT NOT NULL, filter TEXT,
    exposure_s REAL, frames INTEGER NOT NULL DEFAULT 1, start_jd REAL, end_jd REAL,
    done_entry_id INTEGER REFERENCES entries(id));
CREATE TABLE entries (
    id INTEGER PRIMARY KEY, time_jd REAL NOT NULL, target TEXT NOT NULL, filter TEXT,
    exposure_s REAL CHECK (exposure_s IS NULL OR exposure_s >= 0),
    frames INTEGER NOT NULL DEFAULT 1 CHECK (frames >= 1),
    airmass REAL, airmass_source TEXT, seeing_arcsec REAL, sky_note TEXT, note TEXT,
    file TEXT, file_size INTEGER, file_mtime_ns INTEGER,
    fingerprint TEXT UNIQUE, ra_deg REAL, dec_deg REAL,
    source TEXT NOT NULL DEFAULT 'manual',
    visit_id INTEGER REFERENCES planned_visits(id),
    created_utc TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')));
CREATE TABLE weather (
    id INTEGER PRIMARY KEY, time_jd REAL NOT NULL,
    state TEXT NOT NULL CHECK (state IN ('closed', 'open')), note TEXT);
CREATE TABLE notes (id INTEGER PRIMARY KEY, time_jd REAL NOT NULL, text TEXT NOT NULL);
CREATE TABLE observers (
    id INTEGER PRIMARY KEY, night TEXT NOT NULL, name TEXT NOT NULL, UNIQUE (night, name));
"""
# Version 2: indexes for the night queries and the watcher's "seen already" check.
_V2 = """
CREATE INDEX entries_time ON entries(time_jd);
CREATE INDEX entries_file ON entries(file, file_size, file_mtime_ns);
CREATE INDEX visits_night ON planned_visits(night, target);
"""
# Version 3: planned visits keep the plan's visit id, so recording a plan twice adds nothing.
_V3 = """
ALTER TABLE planned_visits ADD COLUMN plan_id TEXT;
ALTER TABLE planned_visits ADD COLUMN line INTEGER;
CREATE UNIQUE INDEX visits_plan_id ON planned_visits(night, plan_id, line);
"""
_MIGRATIONS = ((1, _V1), (2, _V2), (3, _V3))
_VISIT_FIELDS = "id, night, target, filter, exposure_s, frames, start_jd, end_jd, done_entry_id, plan_id, line"


def night_of_jd(jd: float, zone: str) -> dt.date:
    """The night (local evening date) a moment belongs to: local noon to the next local noon."""
    from planner.sky.nights import jd_to_datetime

    return (jd_to_datetime(jd, zone) - dt.timedelta(hours=12)).date()


def closed_periods(events, end_jd: float) -> list[tuple[float, float]]:
    """(closed, reopened) JD pairs from weather events in time order; a closure
    never reopened runs to ``end_jd`` (the night's end)."""
    out, start = [], None
    for w in events:
        if w.state == "closed" and start is None:
            start = w.time_jd
        elif w.state == "open" and start is not None:
            out.append((start, w.time_jd))
            start = None
    if start is not None:
        out.append((start, float(end_jd)))
    return out


def _open_for_reading(p: Path) -> sqlite3.Connection:
    """A connection that never creates, migrates or writes (``log list``, ``export``, ``print``).

    A file we may write is opened as usual with ``query_only``: SQLite then tidies its WAL
    files on close as a writer does (a ``mode=ro`` connection would leave ``-wal`` and ``-shm``
    behind).  A file we may not write (read-only file or folder) is opened with ``mode=ro``;
    with ``immutable=1`` too when no WAL file is beside it (nothing is being written)."""
    if not p.exists():
        raise LogbookError("no such logbook (commands that write, such as log add or log ingest, "
                           "create one)", str(p))
    if p.is_dir():
        raise IsADirectoryError("it is a folder")
    folder = p.resolve().parent
    if os.access(p, os.W_OK) and os.access(folder, os.W_OK):
        db = sqlite3.connect(str(p), timeout=BUSY_TIMEOUT_S, isolation_level=None)
        try:
            db.execute("PRAGMA query_only=ON")
            db.execute("SELECT COUNT(*) FROM sqlite_master").fetchone()
            return db
        except sqlite3.OperationalError:  # e.g. a full disk refuses the shared-memory file
            db.close()
    uri = p.resolve().as_uri()
    if Path(f"{p}-wal").exists():  # a writer may be at work: read through its WAL
        db = sqlite3.connect(f"{uri}?mode=ro", uri=True, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        try:
            db.execute("SELECT COUNT(*) FROM sqlite_master").fetchone()
            return db
        except sqlite3.OperationalError:  # its shared-memory file cannot be opened
            db.close()
    # No WAL: every write is in the file itself, and nobody writing it (a mode=ro connection
    # here would make -wal and -shm files beside it and leave them).
    return sqlite3.connect(f"{uri}?mode=ro&immutable=1", uri=True, isolation_level=None)


def _fail(path: str, exc: BaseException) -> LogbookError:
    reason = str(exc) or type(exc).__name__
    return LogbookError(f"cannot open or write the logbook ({reason}); give a writable file "
                        "with --logbook FILE", str(path))


class Logbook:
    """An open logbook.  Use as a context manager, or call :meth:`close`.

    One instance per thread (sqlite3 connections are not shared across
    threads); any number of processes and threads may write at once.
    """

    def __init__(self, path: str | Path, create_folder: bool = False, readonly: bool = False):
        self.path = str(path)
        self.readonly = readonly
        p = Path(path)
        try:
            if readonly:
                self._db = _open_for_reading(p)
                self._check_gcplan(must_exist=True)
                have = self.schema_version()
                if have > SCHEMA_VERSION:
                    raise LogbookError(f"written by a newer gcplan (schema {have}; this one knows up to "
                                       f"{SCHEMA_VERSION}); upgrade gcplan", self.path)
            else:
                if create_folder:
                    p.parent.mkdir(parents=True, exist_ok=True)
                if p.is_dir():
                    raise IsADirectoryError("it is a folder")
                if not p.parent.is_dir():
                    raise FileNotFoundError(f"folder {str(p.parent)!r} does not exist")
                #: True when this open made the file (the command says so, once).
                self.created = not p.exists()
                # isolation_level=None: we issue BEGIN/COMMIT ourselves, one per entry.
                self._db = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
                self._check_gcplan(must_exist=False)
                self._db.execute("PRAGMA journal_mode=WAL")
                self._db.execute("PRAGMA synchronous=FULL")
                self._db.execute("PRAGMA foreign_keys=ON")
                self._migrate()
            # Logbooks older than schema 3 (read, never migrated, by readers) have no plan ids.
            columns = {r[1] for r in self._db.execute("PRAGMA table_info(planned_visits)")}
            self._visit_fields = _VISIT_FIELDS if "plan_id" in columns else _VISIT_FIELDS.replace(
                "plan_id, line", "NULL, NULL")
        except sqlite3.DatabaseError as exc:
            if "not a database" in str(exc):
                raise LogbookError("not a gcplan logbook (not an SQLite database); give gcplan's logbook "
                                   "with --logbook FILE", self.path) from None
            raise _fail(self.path, exc) from None
        except OSError as exc:
            raise _fail(self.path, exc) from None

    def _check_gcplan(self, must_exist: bool) -> None:
        """Refuse another program's database: gcplan's has ``schema_version`` beside its tables.
        An empty one is a new logbook to a writer, and nothing to read for a reader."""
        tables = {r[0] for r in self._db.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        if "schema_version" in tables and (not must_exist or {"meta", "entries"} <= tables):
            return
        if tables or must_exist:
            self._db.close()
            what = f"its tables are {', '.join(sorted(tables))}" if tables else "it is empty"
            raise LogbookError(f"not a gcplan logbook ({what}); nothing was changed in it", self.path)

    # --- plumbing ---------------------------------------------------------

    def __enter__(self) -> "Logbook":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        self._db.close()

    @contextlib.contextmanager
    def _transaction(self, what: str = "record"):
        """One committed transaction (all or nothing); SQLite errors become LogbookError."""
        try:
            self._db.execute("BEGIN IMMEDIATE")
            try:
                yield
                self._db.execute("COMMIT")
            except BaseException:
                if self._db.in_transaction:  # a Ctrl-C just after COMMIT leaves nothing to undo
                    self._db.execute("ROLLBACK")
                raise
        except sqlite3.IntegrityError as exc:
            raise EntryRefused(f"the logbook refused the {what} ({exc})", self.path) from None
        except sqlite3.Error as exc:
            raise _fail(self.path, exc) from None

    def _write(self, statements: Sequence[tuple[str, tuple]]) -> list[sqlite3.Cursor]:
        """Run statements as one committed transaction (all or nothing)."""
        with self._transaction():
            out = [self._db.execute(sql, params) for sql, params in statements]
        return out

    def _migrate(self) -> None:
        self._db.execute("BEGIN IMMEDIATE")  # also proves the file is writable
        try:
            self._db.execute("CREATE TABLE IF NOT EXISTS schema_version "
                             "(version INTEGER PRIMARY KEY, applied_utc TEXT NOT NULL)")
            have = self._db.execute("SELECT COALESCE(MAX(version), 0) FROM schema_version").fetchone()[0]
            if have > SCHEMA_VERSION:
                raise LogbookError(f"written by a newer gcplan (schema {have}; this one knows up to "
                                   f"{SCHEMA_VERSION}); upgrade gcplan", self.path)
            for version, script in _MIGRATIONS:
                if version > have:
                    for statement in filter(str.strip, script.split(";")):
                        self._db.execute(statement)
                    self._db.execute("INSERT INTO schema_version VALUES (?, strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))",
                                     (version,))
            self._db.execute("COMMIT")
        except BaseException:
            if self._db.in_transaction:
                self._db.execute("ROLLBACK")
            raise

    def schema_version(self) -> int:
        return int(self._db.execute("SELECT MAX(version) FROM schema_version").fetchone()[0])

    def integrity_ok(self) -> bool:
        return self._db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"

    # --- meta -------------------------------------------------------------

    def get_meta(self, key: str) -> str | None:
        row = self._db.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return None if row is None else row[0]

    def set_meta(self, key: str, value: str, only_if_missing: bool = False) -> None:
        verb = "INSERT OR IGNORE" if only_if_missing else "INSERT OR REPLACE"
        self._write([(f"{verb} INTO meta (key, value) VALUES (?, ?)", (key, value))])

    # --- entries ----------------------------------------------------------

    def add_entry(self, entry: NewEntry, night: str | None = None, key=None) -> int | None:
        """Store one entry in its own transaction; its id, or None if its fingerprint is stored already.

        With ``night`` (the entry's local evening date), the entry is linked, in
        the same transaction, to the planned visit of that night its frames are
        evidence for (:func:`planner.model.evidence.line_fits`; target names
        compared by ``key``, e.g. the catalog's :meth:`~planner.inputs.catalog.Catalog.key`),
        and completes it once the visit's frames are all in.
        """
        if entry.frames < 1:
            raise LogbookError(f"frames must be ≥ 1 (got {entry.frames})")
        fields = list(NewEntry.__dataclass_fields__)
        values = tuple(getattr(entry, f) for f in fields)
        with self._transaction("entry"):
            cur = self._db.execute(
                f"INSERT INTO entries ({', '.join(fields)}) VALUES ({', '.join('?' * len(fields))}) "
                "ON CONFLICT(fingerprint) DO NOTHING", values)
            new_id = cur.lastrowid if cur.rowcount == 1 else None
            if new_id is not None and night is not None:
                self._fulfil_visit(new_id, entry, night, key)
        return new_id

    def _fulfil_visit(self, entry_id: int, entry: NewEntry, night: str, key=None) -> None:
        from dataclasses import replace

        from planner.model.evidence import line_fits, outside_span_d
        from planner.model.names import normalize_name

        frame = _Frame(entry_id, entry)
        rows = [PlannedVisit(*r) for r in self._db.execute(
            f"SELECT {self._visit_fields} FROM planned_visits WHERE night = ? AND done_entry_id IS NULL", (night,))]
        # A visit recorded without times can only be matched on what it is.
        spans = [replace(v, start_jd=-np.inf if v.start_jd is None else v.start_jd,
                         end_jd=np.inf if v.end_jd is None else v.end_jd) for v in rows]
        fits = [v for v in spans if v.exposures and line_fits(v, v.exposures[0], frame, key or normalize_name)]
        if not fits:
            return
        v = min(fits, key=lambda v: (outside_span_d(v, entry.time_jd), v.start_jd, v.id))
        self._db.execute("UPDATE entries SET visit_id = ? WHERE id = ?", (v.id, entry_id))
        have = self._db.execute("SELECT COALESCE(SUM(frames), 0) FROM entries WHERE visit_id = ?",
                                (v.id,)).fetchone()[0]
        if have >= v.frames:
            self._db.execute("UPDATE planned_visits SET done_entry_id = ? WHERE id = ?", (entry_id, v.id))

    def known_files(self) -> set[tuple[str, int, int]]:
        """(path, size, mtime_ns) of every ingested frame: files a new pass need not read again."""
        rows = self._db.execute("SELECT file, file_size, file_mtime_ns FROM entries WHERE source = 'fits'")
        return {(f, s, m) for f, s, m in rows if f is not None}

    def entries(self, start_jd: float | None = None, end_jd: float | None = None) -> list[LogEntry]:
        """Entries in time order, optionally with ``start_jd <= time_jd < end_jd``."""
        fields = list(LogEntry.__dataclass_fields__)
        sql = f"SELECT {', '.join(fields)} FROM entries"
        params: tuple = ()
        if start_jd is not None and end_jd is not None:
            sql += " WHERE time_jd >= ? AND time_jd < ?"
            params = (start_jd, end_jd)
        rows = self._db.execute(sql + " ORDER BY time_jd, id", params).fetchall()
        return [LogEntry(*row) for row in rows]

    def count_entries(self) -> int:
        return int(self._db.execute("SELECT COUNT(*) FROM entries").fetchone()[0])

    # --- weather, notes, observers, plan -------------------------------------

    def add_weather(self, time_jd: float, state: str, note: str | None = None) -> int:
        if state not in WEATHER_STATES:
            raise LogbookError(f"weather state must be closed or open (got {state!r})")
        cur = self._write([("INSERT INTO weather (time_jd, state, note) VALUES (?, ?, ?)", (time_jd, state, note))])
        return int(cur[0].lastrowid)

    def weather(self, start_jd: float | None = None, end_jd: float | None = None) -> list[WeatherEvent]:
        return [WeatherEvent(*r) for r in self._between("SELECT id, time_jd, state, note FROM weather",
                                                        start_jd, end_jd)]

    def add_note(self, time_jd: float, text: str) -> int:
        if not text.strip():
            raise LogbookError("a note needs some text (got an empty one)")
        cur = self._write([("INSERT INTO notes (time_jd, text) VALUES (?, ?)", (time_jd, text.strip()))])
        return int(cur[0].lastrowid)

    def notes(self, start_jd: float | None = None, end_jd: float | None = None) -> list[NightNote]:
        return [NightNote(*r) for r in self._between("SELECT id, time_jd, text FROM notes", start_jd, end_jd)]

    def add_visit_mark(self, time_jd: float, night: dt.date | str, plan_id: str, status: str,
                       note: str | None = None) -> int:
        """Record the observer's word on visit ``plan_id`` of ``night`` (its own transaction; the
        table is made by the first mark)."""
        if status not in MARK_STATES:
            raise LogbookError(f"a visit's mark must be one of {', '.join(MARK_STATES)} (got {status!r})")
        if not str(plan_id).strip():
            raise LogbookError("a visit's mark needs the visit's id (got an empty one)")
        with self._transaction("mark"):
            self._db.execute(_MARKS_TABLE)
            cur = self._db.execute("INSERT INTO visit_marks (time_jd, night, plan_id, status, note) "
                                   "VALUES (?, ?, ?, ?, ?)", (time_jd, str(night), str(plan_id).strip(), status, note))
        return int(cur.lastrowid)

    def _has_marks(self) -> bool:
        return self._db.execute("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'visit_marks'"
                                ).fetchone() is not None

    def visit_marks(self, start_jd: float | None = None, end_jd: float | None = None) -> list[VisitMark]:
        """Marks in the order they were made (none in a file that never had one)."""
        if not self._has_marks():
            return []
        return [VisitMark(*r) for r in self._between(
            "SELECT id, time_jd, night, plan_id, status, note FROM visit_marks", start_jd, end_jd)]

    def latest_marks(self, night: dt.date | str) -> dict[str, VisitMark]:
        """Each visit's last mark on ``night`` (a later mark overrides an earlier one); ``planned``
        marks (taken back) are left out."""
        if not self._has_marks():
            return {}
        rows = self._db.execute("SELECT id, time_jd, night, plan_id, status, note FROM visit_marks "
                                "WHERE night = ? ORDER BY id", (str(night),))
        out: dict[str, VisitMark] = {}
        for r in rows:
            out[r[3]] = VisitMark(*r)
        return {k: m for k, m in out.items() if m.status != "planned"}

    def events(self, start_jd: float | None = None, end_jd: float | None = None) -> list[NightEvent]:
        """Notes, weather changes and visit marks in time order (at one instant: weather, notes, marks)."""
        out = [NightEvent(f"note-{n.id}", n.time_jd, "note", n.text) for n in self.notes(start_jd, end_jd)]
        out += [NightEvent(f"weather-{w.id}", w.time_jd, w.state, w.note or f"dome {w.state}")
                for w in self.weather(start_jd, end_jd)]
        out += [NightEvent(f"mark-{m.id}", m.time_jd, m.status,
                           f"{m.plan_id} {m.status}" + (f": {m.note}" if m.note else ""))
                for m in self.visit_marks(start_jd, end_jd)]
        order = {"closed": 0, "open": 0, "note": 1}
        return sorted(out, key=lambda e: (e.time_jd, order.get(e.kind, 2)))

    def _between(self, sql: str, start_jd, end_jd):
        if start_jd is not None and end_jd is not None:
            return self._db.execute(sql + " WHERE time_jd >= ? AND time_jd < ? ORDER BY time_jd, id",
                                    (start_jd, end_jd)).fetchall()
        return self._db.execute(sql + " ORDER BY time_jd, id").fetchall()

    def add_observer(self, night: dt.date | str, name: str) -> None:
        if not name.strip():
            raise LogbookError("an observer needs a name (got an empty one)")
        self._write([("INSERT OR IGNORE INTO observers (night, name) VALUES (?, ?)", (str(night), name.strip()))])

    def observers(self, night: dt.date | str) -> list[str]:
        rows = self._db.execute("SELECT name FROM observers WHERE night = ? ORDER BY id", (str(night),))
        return [r[0] for r in rows]

    def add_planned_visits(self, night: dt.date | str, visits: Iterable[dict]) -> list[int]:
        """Store the plan's visits for a night (keys: target, filter, exposure_s, frames, start_jd,
        end_jd, and the plan's ``plan_id`` and ``line``); the ids of the rows added.  A visit
        whose (plan_id, line) is stored for the night already is left as it is."""
        statements = [("INSERT INTO planned_visits (night, target, filter, exposure_s, frames, start_jd, end_jd, "
                       "plan_id, line) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT DO NOTHING",
                       (str(night), v["target"], v.get("filter"), v.get("exposure_s"), int(v.get("frames", 1)),
                        v.get("start_jd"), v.get("end_jd"), v.get("plan_id"), v.get("line"))) for v in visits]
        return [int(c.lastrowid) for c in self._write(statements) if c.rowcount == 1]

    def planned_visits(self, night: dt.date | str) -> list[PlannedVisit]:
        rows = self._db.execute(f"SELECT {self._visit_fields} FROM planned_visits WHERE night = ? "
                                "ORDER BY COALESCE(start_jd, 0), id", (str(night),))
        return [PlannedVisit(*r) for r in rows]

    def planned_ids(self, night: dt.date | str) -> set[str]:
        """The plan ids recorded for a night (every id a re-plan must not give again)."""
        if "plan_id" not in self._visit_fields:
            return set()
        rows = self._db.execute("SELECT DISTINCT plan_id FROM planned_visits WHERE night = ? AND plan_id IS NOT NULL",
                                (str(night),))
        return {r[0] for r in rows}


@dataclass(frozen=True)
class _Frame:
    """An entry as :mod:`planner.model.evidence` reads it."""

    id: int
    entry: NewEntry

    def __getattr__(self, name):
        return getattr(self.entry, name)
