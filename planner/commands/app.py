"""``gcplan app``: the terminal app over a campaign (the bundled demo by default)."""

from __future__ import annotations

from planner.commands import common


def demo_campaign_path():
    """The bundled, invented demo campaign."""
    from planner.inputs.resources import targets_dir

    return targets_dir() / "demo" / "campaign.toml"


def register(sub) -> None:
    p = sub.add_parser(
        "app",
        help="the terminal app: run the night from the keyboard — act, log, re-plan",
        description="A keyboard-driven terminal app for a campaign night: the plan with the visit "
        "under way, marking visits done, partial or skipped, notes and weather closures written to the "
        "logbook beside the campaign file as they are made, re-planning from now, an exposure check "
        "under the sky now, phase coverage, the sky now, the night sheet and night log. ? lists the "
        "keys, ctrl+p every action by name, q quits. Without --campaign it opens the bundled "
        "(invented) demo campaign.",
    )
    p.add_argument("--campaign", metavar="FILE", help="campaign file (TOML); default: the bundled demo")
    p.add_argument("--date", metavar="YYYY-MM-DD",
                   help="the night's local evening date (default: the campaign night the clock is in, "
                   "or the next one)")
    p.add_argument("--seeing", type=float, metavar="FWHM", help="seeing planned for, arcsec")
    p.add_argument("--logbook", metavar="FILE",
                   help="the logbook the app reads and writes (default: logbook.sqlite beside the campaign file)")
    p.add_argument("--now", metavar="YYYY-MM-DDTHH:MM",
                   help="rehearse a night: the clock starts at this UTC time and runs on in real time "
                   "(default: the computer's clock)")
    p.set_defaults(run=run_app)


def run_app(args) -> int:
    """Run the app until q.  The campaign is read inside the app: a file that fails shows its
    one-line error there."""
    night = common.parse_night_date(args.date) if getattr(args, "date", None) else None
    seeing = getattr(args, "seeing", None)
    common.check_seeing(seeing)
    now = parse_now(args.now) if getattr(args, "now", None) else None
    from planner.tui import collector

    collector.pause()  # from before the app's imports until its first night shows (planner.tui.collector)
    from planner.tui.app import PlannerApp
    from planner.tui.clock import rehearsal_clock, system_clock

    clock = rehearsal_clock(now) if now is not None else system_clock
    path = getattr(args, "campaign", None) or demo_campaign_path()
    PlannerApp(night=night, clock=clock, seeing_arcsec=seeing, campaign_path=path,
               logbook=getattr(args, "logbook", None)).run()
    return 0


def parse_now(text: str):
    """``--now``: an ISO 8601 time, UTC unless it carries an offset."""
    return common.parse_utc_time(text, "--now", "a time YYYY-MM-DDTHH:MM (UTC), e.g. 2027-01-06T04:30")
