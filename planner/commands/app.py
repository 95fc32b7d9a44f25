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
        help="the terminal app: tonight's almanac and targets, and the night's plan",
        description="A keyboard-driven terminal view of one campaign night: the almanac and each "
        "target's window, and the night's timed plan with the visit under way marked. Keys: 1/2 or "
        "tab switch screens, n/p next/previous night, ? help, q quit. Without --campaign it opens "
        "the bundled (invented) demo campaign.",
    )
    p.add_argument("--campaign", metavar="FILE", help="campaign file (TOML); default: the bundled demo")
    p.add_argument("--date", metavar="YYYY-MM-DD",
                   help="the night's local evening date (default: the campaign's first night)")
    p.add_argument("--seeing", type=float, metavar="FWHM", help="seeing planned for, arcsec")
    p.add_argument("--now", metavar="YYYY-MM-DDTHH:MM",
                   help="rehearse a night: the clock stopped at this UTC time (default: the computer's clock)")
    p.set_defaults(run=run_app)


def run_app(args) -> int:
    """Read the campaign (bad input fails here, as one line), then run the app until q."""
    from planner.inputs.campaign_file import read_campaign_file
    from planner.tui.app import PlannerApp
    from planner.tui.clock import frozen_clock, system_clock

    night = common.parse_night_date(args.date) if getattr(args, "date", None) else None
    seeing = getattr(args, "seeing", None)
    common.check_seeing(seeing)
    clock = frozen_clock(parse_now(args.now)) if getattr(args, "now", None) else system_clock
    campaign = read_campaign_file(getattr(args, "campaign", None) or demo_campaign_path())
    PlannerApp(campaign, night=night, clock=clock, seeing_arcsec=seeing).run()
    return 0


def parse_now(text: str):
    """``--now``: an ISO 8601 time, UTC unless it carries an offset."""
    return common.parse_utc_time(text, "--now", "a time YYYY-MM-DDTHH:MM (UTC), e.g. 2027-01-06T04:30")
