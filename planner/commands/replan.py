"""``gcplan replan``: the rest of a campaign night planned again from a moment."""

from __future__ import annotations

from planner.commands import common


def register(sub) -> None:
    p = sub.add_parser(
        "replan",
        help="plan the rest of a night again after weather, seeing or progress changed",
        description="Plan the rest of a campaign night again from --now: visits before then stay as "
        "they were; what is done comes from the logbook beside the campaign file (if any) and --done; "
        "closed periods (weather) get no visit; a new seeing recomputes the exposures. With nothing "
        "changed, the plan stays the same.",
    )
    p.add_argument("--campaign", required=True, metavar="FILE", help="campaign file (TOML)")
    p.add_argument("--date", required=True, metavar="YYYY-MM-DD", help="the night's local evening date")
    p.add_argument("--now", required=True, metavar="ISO",
                   help="the moment to plan from: ISO 8601 with a zone (2027-01-06T03:10Z) or local HH:MM")
    p.add_argument("--closed", action="append", default=[], metavar="START/END|HH:MM-HH:MM",
                   help="a closed period (weather): ISO 8601 START/END, or local HH:MM-HH:MM (repeatable)")
    p.add_argument("--done", nargs="+", action="extend", default=[], metavar="VISIT",
                   help="visits done (visit ids such as 0105-03, or target names)")
    p.add_argument("--seeing", type=float, metavar="FWHM", help="the seeing now, arcsec")
    p.add_argument("--logbook", metavar="FILE", help="logbook file (default: logbook.sqlite beside the campaign)")
    common.add_json_argument(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from planner.commands.schedule import (
        campaign_from_args,
        check_seeing,
        night_index,
        night_sheet,
        schedule_json,
    )
    from planner.scheduling.replan import parse_closed, parse_now, replan_night

    night = common.parse_night_date(args.date)
    check_seeing(args.seeing)
    campaign = campaign_from_args(args)
    night_index(campaign, night)
    zone = campaign.site.location.timezone
    now = parse_now(args.now, night, zone)
    closed = tuple(parse_closed(text, night, zone) for text in args.closed)
    logged, log_closed, note = read_logbook_night(campaign, night, args.logbook)
    closed = closed + log_closed
    result = replan_night(campaign, night, now, closed=closed, done=tuple(args.done), logged=logged,
                          seeing_arcsec=args.seeing)
    if args.json:
        data = schedule_json(campaign.site, result.plan)
        data["replan"] = result.summary()
        if note:
            data["replan"]["logbook"] = note
        common.print_json(data)
    else:
        print(night_sheet(campaign.site, result.plan))
        print("")
        for line in result.summary_lines():
            print(f"  {line}")
        if note:
            print(f"  {note}")
    common.warn_all(result.plan.warnings)
    return 0


def read_logbook_night(campaign, night, path: str | None = None):
    """What the logbook says of a night: (target, time_jd) of its frames, its closed
    periods ('closed' until the next 'open', or the night's end), and a note on the
    source.  The file is ``path``, else ``logbook.sqlite`` beside the campaign file;
    with neither present, nothing is known from it."""
    import datetime as dt
    from pathlib import Path

    from planner.logbook.store import (
        Logbook,
        LogbookError,
        closed_periods,
        default_logbook_path,
    )
    from planner.sky.nights import local_noon_jd

    p = Path(path) if path else default_logbook_path(campaign.source)
    if not p.is_file():
        if path:
            raise LogbookError(f"--logbook {path!r}: no such file")
        return (), (), None
    zone = campaign.site.location.timezone
    a, b = local_noon_jd(night, zone), local_noon_jd(night + dt.timedelta(days=1), zone)
    with Logbook(p) as book:
        frames = tuple((e.target, e.time_jd) for e in book.entries(a, b))
        events = sorted(book.weather(a, b), key=lambda e: e.time_jd)
    return frames, tuple(closed_periods(events, b)), f"done visits and closures read from the logbook {p}"
