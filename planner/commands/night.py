"""``gcplan night``: tonight's almanac and what is up, for how long."""

from __future__ import annotations

from planner.commands import common


def register(sub) -> None:
    p = sub.add_parser(
        "night",
        help="the almanac of a night and each target's observable window",
        description="The almanac of one night (sunset, twilights, the Moon) and, for each target, "
        "transit, highest altitude, lowest airmass and observable hours under the constraints.",
    )
    common.add_site_arguments(p)
    common.add_target_arguments(p)
    p.add_argument("--date", required=True, metavar="YYYY-MM-DD", help="the night's local evening date")
    common.add_constraint_arguments(p)
    common.add_json_argument(p)
    p.add_argument("--plot", metavar="FILE.png|.pdf", help="altitude chart of the night")
    p.add_argument("--cross-check", action="store_true",
                   help="recompute the Sun, the twilights and the Moon with astroplan and show the differences")
    p.set_defaults(run=run)


def run(args) -> int:
    from planner.cache.sun_moon import default_store
    from planner.reports.night_report import night_json, night_text
    from planner.sky.night_summary import run_of_nights

    night = common.parse_night_date(args.date)
    site = common.site_from_args(args)
    common.check_night_exists(night, site)
    targets = common.targets_from_args(args)
    constraints = common.constraints_from_args(site, args)
    plot_path = common.check_output_path(args.plot, (".png", ".pdf"), "--plot") if args.plot else None
    run_ = run_of_nights(site, targets, [night], constraints, store=default_store())
    check = None
    if args.cross_check:
        from planner.reports.cross_check import cross_check

        check = cross_check(site, run_.almanac)
    if args.json:
        data = night_json(run_)
        if check is not None:
            from planner.reports.cross_check import cross_check_json

            data["cross_check"] = cross_check_json(check)
        common.print_json(data)
    else:
        print(night_text(run_))
        if check is not None:
            from planner.reports.cross_check import cross_check_text

            print("\n" + cross_check_text(check))
    if plot_path is not None:
        from planner.reports.altitude_chart import save_night_chart
        from planner.sky.night_summary import night_curves

        with common.output_file(plot_path, "--plot") as tmp:
            save_night_chart(run_, night_curves(run_), tmp)
        if not args.json:
            print(f"\nchart written to {plot_path}")
    common.warn_all(run_.warnings)
    return 0
