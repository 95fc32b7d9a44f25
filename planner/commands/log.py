"""``gcplan log``: the observing log — ingest frames, add entries, list, export, print.

Every sub-command takes ``--logbook FILE`` (default: ``logbook.sqlite`` in the
user's data folder, from platformdirs).  The site (``--site``) is remembered
in the logbook on first use, so later commands need not repeat it; it is
needed where something is computed (airmass on ingest, the almanac of the
printed log, which night an entry belongs to).
"""

from __future__ import annotations

import datetime as dt
import sys
from pathlib import Path

from planner.commands import common
from planner.errors import DateError


def register(sub) -> None:
    p = sub.add_parser("log", help="the observing log: ingest FITS frames, add entries, list, export, print",
                       description="The observing log, one SQLite file: crash-safe, filled from FITS "
                       "headers or by hand, printed as a night log.")
    logsub = p.add_subparsers(dest="log_command", metavar="ACTION", required=True, parser_class=p.__class__)

    def action(name, help_text, func, site=True):
        q = logsub.add_parser(name, help=help_text, description=help_text)
        q.add_argument("--logbook", metavar="FILE", help="the logbook file (default: logbook.sqlite beside "
                       "--campaign, else in the user's data folder)")
        q.add_argument("--campaign", metavar="FILE", help="use the logbook beside this campaign file")
        if site:
            common.add_site_arguments(q, required=False)
        q.set_defaults(run=func)
        return q

    q = action("ingest", "read new FITS frames' headers in DIR into the log", run_ingest)
    q.add_argument("folder", metavar="DIR", help="folder with the frames (searched recursively)")
    q.add_argument("--watch", action="store_true", help="keep watching for new frames until Ctrl-C")
    q.add_argument("--interval", type=float, default=5.0, metavar="S", help="seconds between passes with --watch (default 5)")
    common.add_json_argument(q)

    q = action("add", "add an entry by hand; prints its id", run_add)
    q.add_argument("--target", required=True, metavar="NAME")
    q.add_argument("--filter", required=True, metavar="F")
    q.add_argument("--exposure", required=True, type=float, metavar="S", help="exposure time per frame, seconds")
    q.add_argument("--frames", type=int, default=1, metavar="K", help="number of frames (default 1)")
    q.add_argument("--time", metavar="ISO", help="start, ISO 8601 (UTC unless an offset is given; default now)")
    q.add_argument("--note", metavar="TEXT")
    q.add_argument("--seeing", type=float, metavar="FWHM", help="seeing FWHM, arcsec")
    q.add_argument("--sky", metavar="TEXT", help="sky note (e.g. 'thin cirrus')")

    q = action("note", "add a note to the log", run_note, site=False)
    q.add_argument("text", metavar="TEXT")
    q.add_argument("--time", metavar="ISO", help="when, ISO 8601 (default now)")

    q = action("weather", "record the dome closing or opening for weather", run_weather, site=False)
    q.add_argument("state", choices=("closed", "open"))
    q.add_argument("--time", metavar="ISO", help="when, ISO 8601 (default now)")
    q.add_argument("--note", metavar="TEXT", help="why (e.g. 'humidity 90 %%')")

    q = action("observer", "record an observer for a night", run_observer)
    q.add_argument("name", metavar="NAME")
    q.add_argument("--night", metavar="YYYY-MM-DD", help="the night (default: the night under way)")

    q = action("list", "list the log's entries", run_list)
    q.add_argument("--night", metavar="YYYY-MM-DD", help="only this night (local evening date)")
    common.add_json_argument(q)

    q = action("export", "export the entries as CSV or ECSV", run_export)
    q.add_argument("--format", required=True, choices=("csv", "ecsv"))
    q.add_argument("--out", required=True, metavar="FILE")
    q.add_argument("--night", metavar="YYYY-MM-DD", help="only this night")

    q = action("print", "the night log as text, or as a PDF to print", run_print)
    q.add_argument("--night", required=True, metavar="YYYY-MM-DD")
    q.add_argument("--pdf", metavar="FILE.pdf", help="write the printable night log here")
    q.add_argument("--paper", choices=("a4", "letter"), default="a4", help="paper size (default a4)")
    common.add_json_argument(q)


# --- shared -------------------------------------------------------------------


def open_logbook(args, write: bool = True):
    """The logbook of ``--logbook`` (else beside ``--campaign``, else the user's).  Only a writing
    action creates one, and says so; a reading one needs it to exist and never changes it."""
    from planner.logbook.store import Logbook, default_logbook_path

    if args.logbook:
        path, folder = args.logbook, False
    elif getattr(args, "campaign", None):
        path, folder = default_logbook_path(args.campaign), False
    else:
        path, folder = default_logbook_path(), write
    book = Logbook(path, create_folder=folder, readonly=not write)
    if write and book.created:
        print(f"gcplan: created a new logbook at {book.path}", file=sys.stderr)
    return book


def site_for(args, book, required: bool):
    """--site if given (remembered in the logbook if it has none), else the remembered one.

    A profile file is remembered by its absolute path and by its text, so the logbook
    still knows its site once the file moves; a reading action remembers nothing."""
    from planner.inputs.sites import resolve_site
    from planner.logbook.store import LogbookError

    spec, zone = getattr(args, "site", None), getattr(args, "timezone", None)
    if spec:
        site = resolve_site(spec, zone)  # validate before remembering
        if not book.readonly and book.get_meta("site") is None:
            path = Path(spec)
            book.set_meta("site", str(path.resolve()) if path.is_file() else spec, only_if_missing=True)
            _keep_profile_text(book, path)
            if zone:
                book.set_meta("timezone", zone, only_if_missing=True)
        return site
    stored = book.get_meta("site")
    if stored:
        return _remembered_site(book, stored, book.get_meta("timezone"))
    if required:
        raise LogbookError("no site: give --site (a profile, a bundled name or LAT,LON); the logbook "
                           "remembers it for later commands", book.path)
    return None


def _keep_profile_text(book, path: Path) -> None:
    """The profile's text beside its path (a logbook that knew only the path learns it on a write)."""
    if book.readonly or not path.is_file() or book.get_meta("site_profile") is not None:
        return
    try:
        book.set_meta("site_profile", path.read_text(encoding="utf-8"), only_if_missing=True)
    except (OSError, UnicodeDecodeError):
        pass  # resolve_site read it a moment ago; the path is still remembered


def _remembered_site(book, stored: str, zone: str | None):
    from planner.inputs.sites import resolve_site, site_from_text

    text = book.get_meta("site_profile")
    try:
        gone = text is not None and not Path(stored).is_file()
    except (OSError, ValueError):
        gone = False
    if not gone:
        site = resolve_site(stored, zone)
        _keep_profile_text(book, Path(stored))
        return site
    common.warn_all([f"site profile {stored} is no longer there; using the copy kept in the logbook"])
    return site_from_text(text, stored, zone)


def parse_time(text: str | None, option: str = "--time") -> float:
    """JD (UTC) of an ISO 8601 time (naive = UTC); now if not given."""
    from planner.sky.nights import datetime_to_jd

    if text is None:
        return datetime_to_jd(dt.datetime.now(dt.timezone.utc))
    return datetime_to_jd(common.parse_utc_time(text, option, "an ISO 8601 time such as 2027-05-13T02:15:00Z"))


def night_bounds(site, night: dt.date) -> tuple[float, float]:
    from planner.sky.nights import night_spans_jd

    start, end = night_spans_jd([night], site.location.timezone if site else "UTC")
    return float(start[0]), float(end[0])


# --- actions -----------------------------------------------------------------


def run_ingest(args) -> int:
    from planner.inputs.catalog import load_catalog
    from planner.logbook.ingest import ingest_folder, watch_folder

    if args.watch:  # checked before the logbook is opened (or made)
        if not Path(args.folder).is_dir():
            from planner.logbook.store import LogbookError

            raise LogbookError(f"frame folder {args.folder!r} does not exist or is not a folder")
        if not 0 < args.interval <= 86400:  # nan would spin, inf never scan again
            raise DateError(f"--interval must be a number of seconds, 0 < S ≤ 86400 (got {args.interval:g})")
    with open_logbook(args) as book:
        site = site_for(args, book, required=True)
        catalog = load_catalog()
        if not args.watch:
            # No future-date check from the command line: rehearsals ingest frames dated ahead of the
            # computer's clock (the demo's invented night), and their airmass is wanted.
            report = ingest_folder(book, args.folder, site, catalog)
        else:
            warned: dict[str, str] = {}

            def on_pass(r):
                for file, reason in r.skipped:
                    if warned.get(file) != reason:  # say it once, not every pass
                        common.warn_all([f"skipped {file}: {reason} (will retry)"])
                        warned[file] = reason
                common.warn_all(r.warnings)
                if r.added and not args.json:
                    print(f"added {len(r.added)} entr{'y' if len(r.added) == 1 else 'ies'}", flush=True)

            if not args.json:
                print(f"watching {args.folder} every {args.interval:g} s; Ctrl-C to stop", flush=True)
            report = watch_folder(book, args.folder, site, catalog, args.interval, on_pass)
    if args.json:
        common.print_json({"added": len(report.added), "added_ids": list(report.added),
                           "already": report.already,
                           "skipped": [{"file": f, "reason": r} for f, r in report.skipped],
                           "warnings": list(report.warnings)})
    else:
        if not args.watch:
            for file, reason in report.skipped:
                common.warn_all([f"skipped {file}: {reason} (will retry next pass)"])
            common.warn_all(report.warnings)
        print(f"added {len(report.added)}, already in the log {report.already}, skipped {len(report.skipped)}")
    return 0


#: Frames in one entry: a night of the shortest frames (0.1 s, 12 h, common practice, no source)
#: is about 432,000; far below SQLite's integer limit (2⁶³ − 1).
MAX_FRAMES = 1_000_000


def run_add(args) -> int:
    from planner.logbook.store import LogbookError, NewEntry, night_of_jd

    # One entry is one sequence of frames: no exposure, and no sequence, outlasts a day.
    if not (0 <= args.exposure <= 86400):
        raise LogbookError(f"--exposure must be 0..86400 seconds, at most a day (got {args.exposure:g})")
    if not 1 <= args.frames <= MAX_FRAMES:
        raise LogbookError(f"--frames must be 1..{MAX_FRAMES} (got {args.frames})")
    if args.exposure * args.frames > 86400:
        raise LogbookError(f"--frames {args.frames} × --exposure {args.exposure:g} s is more than a day "
                           "in one sequence; log the night's sequences one by one")
    if args.seeing is not None and not (0 < args.seeing <= 30):
        raise LogbookError(f"--seeing must be a FWHM in arcsec, 0 < FWHM ≤ 30 (got {args.seeing:g})")
    if not args.target.strip():
        raise LogbookError("--target must not be empty")
    time_jd = parse_time(args.time)
    with open_logbook(args) as book:
        site = site_for(args, book, required=False)
        airmass, ra, dec = _manual_airmass(site, args.target, time_jd, args.exposure * args.frames)
        entry = NewEntry(time_jd=time_jd, target=args.target.strip(), filter=args.filter.strip() or None,
                         exposure_s=args.exposure, frames=args.frames, airmass=airmass,
                         airmass_source="computed" if airmass is not None else None,
                         seeing_arcsec=args.seeing, sky_note=args.sky, note=args.note, ra_deg=ra, dec_deg=dec)
        night = str(night_of_jd(time_jd, site.location.timezone)) if site else None
        from planner.inputs.catalog import load_catalog

        print(book.add_entry(entry, night=night, key=load_catalog().key))
    return 0


def _manual_airmass(site, target, time_jd, total_s):
    """Airmass at mid-sequence for a catalog cluster when the site is known; else nothing."""
    if site is None:
        return None, None, None
    from planner.inputs.catalog import load_catalog
    from planner.logbook.ingest import airmass_at

    hit = load_catalog().lookup(target)
    if hit is None:
        return None, None, None
    x = float(airmass_at(site, [hit.ra_deg], [hit.dec_deg], [time_jd + total_s / 2 / 86400.0])[0])
    return (x if x == x else None), hit.ra_deg, hit.dec_deg


def run_note(args) -> int:
    when = parse_time(args.time)  # bad input is refused before a logbook is made
    with open_logbook(args) as book:
        print(book.add_note(when, args.text))
    return 0


def run_weather(args) -> int:
    when = parse_time(args.time)
    with open_logbook(args) as book:
        print(book.add_weather(when, args.state, args.note))
    return 0


def run_observer(args) -> int:
    from planner.logbook.store import night_of_jd

    given = common.parse_night_date(args.night, "--night") if args.night else None
    with open_logbook(args) as book:
        site = site_for(args, book, required=False)
        if given:
            night = given
        else:
            night = night_of_jd(parse_time(None), site.location.timezone if site else "UTC")
        book.add_observer(night, args.name)
        print(f"{args.name.strip()} observing on the night of {night}")
    return 0


def _selected_entries(args, events: bool = False):
    """The logbook, its site, the entries of ``--night`` (or all), and with ``events`` the
    night's events (notes, weather, the observer's marks) too."""
    night = common.parse_night_date(args.night, "--night") if args.night else None
    with open_logbook(args, write=False) as book:
        site = site_for(args, book, required=False)
        span = (None, None) if night is None else night_bounds(site, night)
        entries = book.entries() if night is None else book.entries(*span)
        if events:
            return book, site, entries, book.events(*span)
        return book, site, entries


def run_list(args) -> int:
    from planner.reports.nightlog_json import entry_json, event_json
    from planner.sky.nights import iso_utc

    book, site, entries, events = _selected_entries(args, events=True)
    if args.json:
        common.print_json({"logbook": str(book.path), "night": args.night,
                           "entries": [entry_json(e) for e in entries],
                           "events": [event_json(e) for e in events]})
        return 0
    if args.night and site is None:
        common.warn_all(["no site known: the night is taken as noon to noon UTC"])
    print(f"{'id':>5}  {'time (UTC)':20}  {'target':14} {'filter':6} {'exp s':>7} {'n':>3} {'airmass':>7}  file / note")
    for e in entries:
        x = "" if e.airmass is None else f"{e.airmass:.3f}"
        exp = "" if e.exposure_s is None else f"{e.exposure_s:g}"
        tail = Path(e.file).name if e.file else ""
        if e.note:
            tail = f"{tail}  {e.note}" if tail else e.note
        print(f"{e.id:>5}  {iso_utc(e.time_jd):20}  {e.target[:14]:14} {(e.filter or '')[:6]:6} {exp:>7} "
              f"{e.frames:>3} {x:>7}  {tail}")
    print(f"{len(entries)} entr{'y' if len(entries) == 1 else 'ies'}")
    return 0


EXPORT_COLUMNS = ("id", "time", "time_jd", "target", "filter", "exposure_s", "frames", "airmass",
                  "airmass_source", "seeing_arcsec", "sky_note", "note", "file", "fingerprint", "visit_id", "source")


def export_rows(entries) -> list[dict]:
    from planner.reports.nightlog_json import entry_json

    rows = []
    for e in entries:
        row = entry_json(e)
        row["time_jd"] = e.time_jd
        rows.append({k: row.get(k) for k in EXPORT_COLUMNS})
    return rows


def run_export(args) -> int:
    suffix = ".csv" if args.format == "csv" else ".ecsv"
    out = common.check_output_path(args.out, (suffix,), "--out")
    _, _, entries = _selected_entries(args)
    with common.output_file(out, "--out") as tmp:
        write_export(export_rows(entries), tmp, args.format)
    print(f"{len(entries)} entries written to {out}")
    return 0


def write_export(rows: list[dict], path: Path, fmt: str) -> None:
    """The rows as CSV or ECSV at ``path`` (the command writes through common.output_file)."""
    if fmt == "csv":
        import csv

        with open(path, "w", newline="", encoding="utf-8") as f:
            w = csv.DictWriter(f, fieldnames=EXPORT_COLUMNS)
            w.writeheader()
            w.writerows({k: "" if v is None else v for k, v in r.items()} for r in rows)
        return
    from astropy.table import MaskedColumn, Table

    numeric = {"id": int, "time_jd": float, "exposure_s": float, "frames": int, "airmass": float,
               "seeing_arcsec": float, "visit_id": int}
    table = Table()
    for k in EXPORT_COLUMNS:
        values = [r[k] for r in rows]
        mask = [v is None for v in values]
        kind = numeric.get(k, str)
        fill = 0 if kind is int else 0.0 if kind is float else ""
        table[k] = MaskedColumn([fill if v is None else v for v in values], mask=mask,
                                dtype=kind if kind is not str else str)
    table["exposure_s"].unit = "s"
    table["seeing_arcsec"].unit = "arcsec"
    table.meta["comments"] = ["gcplan observing log export; times UTC (ISO 8601 and JD)"]
    table.write(path, format="ascii.ecsv", overwrite=True)


def run_print(args) -> int:
    from planner.reports.nightlog import (
        collect_night_log,
        night_log_text,
        write_night_log_pdf,
    )

    night = common.parse_night_date(args.night, "--night")
    pdf = common.check_output_path(args.pdf, (".pdf",), "--pdf") if args.pdf else None
    with open_logbook(args, write=False) as book:
        site = site_for(args, book, required=True)
        common.check_night_exists(night, site, "--night")
        log = collect_night_log(book, site, night)
    if pdf is not None:
        with common.output_file(pdf, "--pdf") as tmp:
            write_night_log_pdf(log, tmp, args.paper)
    if args.json:
        from planner.reports.nightlog_json import night_log_json

        common.print_json(night_log_json(log))
    elif pdf is None:
        print(night_log_text(log))
    else:
        print(f"night log written to {pdf} ({args.paper}, {len(log.entries)} entries)")
    return 0
