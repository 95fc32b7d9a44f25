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
    from planner.commands.schedule import campaign_from_args, check_seeing, night_index, night_sheet, schedule_json
    from planner.scheduling.replan import (closed_from_logbook, done_from_logbook, parse_closed, parse_now,
                                          replan_night)

    night = common.parse_night_date(args.date)
    check_seeing(args.seeing)
    campaign = campaign_from_args(args)
    night_index(campaign, night)
    zone = campaign.site.location.timezone
    now = parse_now(args.now, night, zone)
    closed = tuple(parse_closed(text, night, zone) for text in args.closed)
    logged, note = done_from_logbook(campaign, night, args.logbook)
    closed = closed + closed_from_logbook(campaign, night, args.logbook)
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
