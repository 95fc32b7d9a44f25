"""``gcplan campaign``: every night of a campaign planned, with the coverage and recovery forecast."""

from __future__ import annotations

from planner.commands import common


def register(sub) -> None:
    p = sub.add_parser(
        "campaign",
        help="plan every night of a campaign and forecast phase coverage and period recovery",
        description="Plan each night of a campaign file: which clusters, when the deep frames go, "
        "the variable-star cadence; then forecast the phase coverage and the RR Lyrae period "
        "recovery at the planned times.",
    )
    p.add_argument("--campaign", required=True, metavar="FILE", help="campaign file (TOML)")
    p.add_argument("--seeing", type=float, metavar="FWHM", help="seeing planned for, arcsec")
    common.add_json_argument(p)
    p.add_argument("--out", metavar="DIR", help="write a night sheet per night, the JSON and a plot per night here")
    p.set_defaults(run=run)


def run(args) -> int:
    from pathlib import Path

    from planner.errors import OutputError
    from planner.cache.plans import plan_cache_for
    from planner.cache.sun_moon import default_store
    from planner.reports.campaign_report import campaign_json, campaign_text
    from planner.reports.schedule_report import night_sheet
    from planner.scheduling.campaign import plan_campaign

    common.check_seeing(args.seeing)
    out = None
    if args.out:
        out = Path(args.out)
        if out.exists() and not out.is_dir():
            raise OutputError(f"--out {args.out!r} is a file, not a folder")
        if not out.parent.is_dir():
            raise OutputError(f"--out {args.out!r}: folder {str(out.parent)!r} does not exist")
    campaign = common.campaign_from_args(args)
    store = default_store()
    plan = plan_campaign(campaign, seeing_arcsec=args.seeing, cache=plan_cache_for(campaign.source), store=store)
    data = campaign_json(plan)
    if args.json:
        common.print_json(data)
    else:
        print(campaign_text(plan))
    if out is not None:
        from planner.reports.schedule_plot import save_schedule_plot

        try:
            out.mkdir(exist_ok=True)
        except OSError as exc:
            raise OutputError(f"--out {args.out!r}: cannot make the folder ({exc.strerror or exc})") from None
        for p in plan.nights:
            with common.output_file(out / f"schedule_{p.night.isoformat()}.txt", "--out") as tmp:
                tmp.write_text(night_sheet(campaign.site, p) + "\n", encoding="utf-8")
            with common.output_file(out / f"schedule_{p.night.isoformat()}.png", "--out") as tmp:
                save_schedule_plot(campaign.site, p, tmp, store=store)
        common.write_json(out / "campaign.json", data)
        if not args.json:
            print(f"\nwritten to {out}/: a night sheet and a plot per night, campaign.json")
    common.warn_all(plan.warnings)
    return 0
