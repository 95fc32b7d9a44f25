"""``gcplan observability``: hours observable per night per target over a date range."""

from __future__ import annotations

from planner.commands import common


def register(sub) -> None:
    p = sub.add_parser(
        "observability",
        help="hours observable per night for each target over a range of nights",
        description="Observable hours per night for each target between two nights (inclusive), "
        "the best night and the best months: the basis of a semester's time request.",
    )
    common.add_site_arguments(p)
    common.add_target_arguments(p)
    p.add_argument("--start", required=True, metavar="YYYY-MM-DD", help="first night (local evening date)")
    p.add_argument("--end", required=True, metavar="YYYY-MM-DD", help="last night (inclusive)")
    common.add_constraint_arguments(p)
    common.add_json_argument(p)
    p.add_argument("--plot", metavar="FILE.png|.pdf", help="chart of hours per night")
    p.set_defaults(run=run)


def run(args) -> int:
    from planner.cache.sun_moon import default_store
    from planner.reports.observability_report import (
        observability_json,
        observability_json_pieces,
        observability_text,
    )
    from planner.sky.night_summary import run_of_nights, seasons

    start = common.parse_night_date(args.start, "--start")
    end = common.parse_night_date(args.end, "--end")
    nights = common.date_range(start, end)
    site = common.site_from_args(args)
    targets = common.targets_from_args(args)
    constraints = common.constraints_from_args(site, args)
    plot_path = common.check_output_path(args.plot, (".png", ".pdf"), "--plot") if args.plot else None
    run_ = run_of_nights(site, targets, nights, constraints, store=default_store())
    summary = seasons(run_)
    if args.json:
        # Written as it is made: a large run's JSON is never held whole in memory.
        common.print_json_pieces(observability_json_pieces(run_, summary, common.compact_json),
                                 lambda: observability_json(run_, summary))
    else:
        print(observability_text(run_, summary))
    if plot_path is not None:
        from planner.reports.hours_chart import save_observability_chart

        with common.output_file(plot_path, "--plot") as tmp:
            save_observability_chart(run_, tmp)
        if not args.json:
            print(f"\nchart written to {plot_path}")
    common.warn_all(run_.warnings)
    return 0
