"""``gcplan replan``: the rest of a campaign night planned again from a moment."""

from __future__ import annotations

import datetime as dt
import re
import textwrap
from zoneinfo import ZoneInfo

from planner.commands import common
from planner.errors import DateError

_HHMM = re.compile(r"^\s*(\d{1,2}):(\d{2})\s*$")


def register(sub) -> None:
    p = sub.add_parser(
        "replan",
        help="plan the rest of a night again after weather, seeing or progress changed",
        description="Plan the rest of a campaign night again from --now: visits before then stay as "
        "they were; a visit is done when the logbook beside the campaign file holds its frames (same "
        "cluster and filter, exposure within 10 %, inside the visit's time) or --done names it; with "
        "some of its frames it is partial and the rest are planned again; with nothing known it is "
        "unknown (--assume-done counts those done). Closed periods (weather) get no visit; a new seeing "
        "recomputes the exposures. With nothing changed, the plan stays the same.",
    )
    p.add_argument("--campaign", required=True, metavar="FILE", help="campaign file (TOML)")
    p.add_argument("--date", required=True, metavar="YYYY-MM-DD", help="the night's local evening date")
    p.add_argument("--now", required=True, metavar="ISO",
                   help="the moment to plan from: ISO 8601 with a zone (2027-01-06T03:10Z) or local HH:MM")
    p.add_argument("--closed", action="append", default=[], metavar="START/END|HH:MM-HH:MM",
                   help="a closed period (weather): ISO 8601 START/END, or local HH:MM-HH:MM (repeatable)")
    p.add_argument("--done", nargs="+", action="extend", default=[], metavar="VISIT",
                   help="visits done: their ids as the night sheet shows them (N1851-var3, or 0105-N1851-var3), "
                   "or target names (every visit of that target before --now)")
    p.add_argument("--assume-done", action="store_true",
                   help="count visits before --now that nothing says anything about as done")
    p.add_argument("--seeing", type=float, metavar="FWHM", help="the seeing now, arcsec")
    p.add_argument("--logbook", metavar="FILE", help="logbook file (default: logbook.sqlite beside the campaign)")
    common.add_json_argument(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from planner.reports.schedule_report import night_sheet, schedule_json
    from planner.cache.plans import plan_cache_for
    from planner.cache.sun_moon import default_store
    from planner.config import skip_final_collection
    from planner.inputs.catalog import load_catalog
    from planner.scheduling.replan import replan_night

    skip_final_collection()  # a re-plan at the telescope: every ms counts, the exit's too
    night = common.parse_night_date(args.date)
    common.check_seeing(args.seeing)
    catalog = load_catalog()  # read once: the campaign's names and the logbook's
    campaign = common.campaign_from_args(args, catalog)
    common.check_campaign_night(campaign, night)
    zone = campaign.site.location.timezone
    now = parse_now(args.now, night, zone)
    closed = tuple(parse_closed(text, night, zone) for text in args.closed)
    record = read_logbook_night(campaign, night, args.logbook)
    note = record.note()
    # The observer's marks in the logbook (the app's done, partial and skip) count as --done does;
    # names are compared as the catalog's aliases make them one cluster ("M 3" = "NGC 5272").
    result = replan_night(campaign, night, now, closed=closed, done=tuple(args.done) + record.ids_marked("done"),
                          logged=record.frames, seeing_arcsec=args.seeing, key=catalog.key,
                          logged_closed=record.closed, assume_done=args.assume_done,
                          used_ids=record.recorded_ids, skipped=record.ids_marked("skipped"),
                          stopped=record.ids_marked("partial"), cache=plan_cache_for(campaign.source),
                          store=default_store())
    if args.json:
        data = schedule_json(campaign.site, result.plan)
        data["replan"] = result.summary()
        if note:
            data["replan"]["logbook"] = note
        common.print_json(data)
    else:
        print(night_sheet(campaign.site, result.plan))
        print("")
        for line in result.summary_lines() + ([note] if note else []):
            print(textwrap.fill(line, 78, initial_indent="  ", subsequent_indent="    ", break_on_hyphens=False))
    common.warn_all(result.plan.warnings)
    return 0


def _local_clock(hh: int, mm: int, night: dt.date, zone: str, option: str, text: str) -> float:
    from planner.sky.nights import datetime_to_jd

    if not (0 <= hh <= 23 and 0 <= mm <= 59):
        raise DateError(f"{option} {text!r}: {hh:02d}:{mm:02d} is not a clock time (00:00..23:59)")
    day = night if hh >= 12 else night + dt.timedelta(days=1)  # the night runs from noon to noon
    return datetime_to_jd(dt.datetime.combine(day, dt.time(hh, mm), tzinfo=ZoneInfo(zone)))


def parse_moment(text: str, night: dt.date, zone: str, option: str = "--now") -> float:
    """JD (UTC) of ``text``: ISO 8601 with a zone (``2027-01-06T03:10Z``, ``...-03:00``), an ISO
    date-time without one (the site's local time), or a local clock time ``HH:MM`` on the night."""
    from planner.sky.nights import datetime_to_jd

    m = _HHMM.match(text)
    if m:
        return _local_clock(int(m[1]), int(m[2]), night, zone, option, text)
    try:
        moment = dt.datetime.fromisoformat(text.strip().replace("Z", "+00:00").replace("z", "+00:00"))
    except ValueError:
        raise DateError(f"{option} {text!r} is not a moment: give ISO 8601 such as 2027-01-06T03:10Z "
                        "(or with an offset, or local time without one) or a local HH:MM") from None
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=ZoneInfo(zone))
    return datetime_to_jd(moment)


def parse_now(text: str, night: dt.date, zone: str) -> float:
    from planner.sky.nights import local_noon_jd

    jd = parse_moment(text, night, zone, "--now")
    start, end = local_noon_jd(night, zone), local_noon_jd(night + dt.timedelta(days=1), zone)
    if not start <= jd <= end:
        raise DateError(f"--now {text!r} is not in the night of {night} (local noon to noon)")
    return jd


def parse_closed(text: str, night: dt.date, zone: str) -> tuple[float, float]:
    """``START/END`` (ISO 8601, as :func:`parse_moment`) or local ``HH:MM-HH:MM``."""
    from planner.sky.nights import iso_utc

    m = re.fullmatch(r"\s*(\d{1,2}:\d{2})\s*-\s*(\d{1,2}:\d{2})\s*", text)
    if m:
        a, b = (parse_moment(x, night, zone, "--closed") for x in (m[1], m[2]))
    elif "/" in text:
        left, _, right = text.partition("/")
        a, b = parse_moment(left, night, zone, "--closed"), parse_moment(right, night, zone, "--closed")
    else:
        raise DateError(f"--closed {text!r}: give START/END in ISO 8601 (2027-01-06T02:00Z/2027-01-06T03:30Z) "
                        "or local HH:MM-HH:MM (23:10-00:40)")
    if b <= a:
        raise DateError(f"--closed {text!r}: the end ({iso_utc(b)}) is not after the start ({iso_utc(a)})")
    return a, b


def read_logbook_night(campaign, night, path: str | None = None):
    """What the logbook says of a night (:func:`planner.logbook.night_record.read_night_record`,
    the app's reader too): the file is ``path``, else ``logbook.sqlite`` beside the campaign file;
    with neither present, nothing is known from it."""
    from pathlib import Path

    from planner.logbook import default_logbook_path
    from planner.logbook.night_record import read_night_record

    p = Path(path) if path else default_logbook_path(campaign.source)
    if path and not p.is_file():
        from planner.logbook.store import LogbookError

        raise LogbookError(f"--logbook {path!r}: no such file")
    return read_night_record(p, night, campaign.site.location.timezone)
