"""``gcplan phases``: pulsation phases of variable stars at given times, and their coverage."""

from __future__ import annotations

from planner.commands import common


def register(sub) -> None:
    from planner.model.variable import DEFAULT_MAX_DRIFT_PER_DAY

    p = sub.add_parser(
        "phases",
        help="pulsation phases and phase coverage of variable stars at a set of times",
        description="Phases (0 = maximum light) of each variable at each time, the phase bins "
        "covered, the largest gap, whether the RRab rising branch and minimum light are "
        "sampled, and a warning for periods whose phase barely drifts from night to night.",
    )
    p.add_argument("--variables", required=True, metavar="FILE",
                   help="variables table (ECSV/CSV): id, period_d, epoch_hjd (or epoch_bjd_tdb) and ra_deg, dec_deg or cluster")
    p.add_argument("--times", required=True, metavar="FILE",
                   help="observation times (ECSV/CSV): a time_utc (ISO 8601) or jd_utc column")
    p.add_argument("--bins", type=int, default=20, metavar="N", help="phase bins (default 20)")
    p.add_argument("--alias-drift", type=float, default=DEFAULT_MAX_DRIFT_PER_DAY, metavar="CYCLES",
                   help="warn when the phase drifts less than this many cycles per day "
                   f"(default {DEFAULT_MAX_DRIFT_PER_DAY})")
    common.add_json_argument(p)
    p.add_argument("--plot", metavar="FILE.png|.pdf", help="phase-coverage strips, one per star")
    p.set_defaults(run=run)


def check_options(args) -> None:
    from planner.inputs.variable_files import VariablesOptionError

    if not 1 <= args.bins <= 1000:
        raise VariablesOptionError(f"--bins must be between 1 and 1000 (got {args.bins})")
    if not 0.0 <= args.alias_drift <= 0.5:
        raise VariablesOptionError(f"--alias-drift must be between 0 and 0.5 cycles per day (got {args.alias_drift:g})")


def run(args) -> int:
    from planner.inputs.variable_files import read_times, read_variables
    from planner.reports.phases_report import phase_report, report_json, report_text

    check_options(args)
    plot_path = common.check_output_path(args.plot, (".png", ".pdf"), "--plot") if args.plot else None
    variables = read_variables(args.variables)
    times = read_times(args.times)
    report = phase_report(variables, times, args.bins, args.alias_drift)
    if args.json:
        common.print_json(report_json(variables, report))
    else:
        print(report_text(variables, report))
    if plot_path is not None:
        from planner.reports.phase_plot import MAX_STRIPS, phase_coverage_axes

        ax = phase_coverage_axes(report["ids"], report["periods"], report["phase"], report["types"], args.bins)
        if len(report["ids"]) > MAX_STRIPS:
            common.warn_all([f"--plot draws {MAX_STRIPS} of {len(report['ids'])} stars, those with the fewest "
                             "phase bins covered; the text and JSON give every star"])
        import io

        buffer = io.BytesIO()  # drawn in memory, then written (a full disk part-way upsets matplotlib's PDF)
        ax.figure.savefig(buffer, dpi=120, format=plot_path.suffix.lstrip(".").lower())
        with common.output_file(plot_path, "--plot") as tmp:
            tmp.write_bytes(buffer.getvalue())
        if not args.json:
            print(f"\nphase-coverage plot written to {plot_path}")
    return 0
