"""``gcplan schedule``: one night's timed plan, from a campaign file or ad hoc.

The night sheet, the plan's JSON and its ECSV table are written by
:mod:`planner.reports.schedule_report`, shared with ``gcplan campaign`` and
``gcplan replan``.
"""

from __future__ import annotations

import math
import sys

from planner.commands import common
from planner.commands.common import OptionError


def register(sub) -> None:
    p = sub.add_parser(
        "schedule",
        help="a timed plan of one night: visits, overheads, idle gaps",
        description="Plan one night minute by minute: from a campaign file (--campaign) or, ad hoc, "
        "every target of a list once with the visit given by --visit. Every visit keeps to its "
        "constraints over its whole duration, slews, settling, acquisition, filter changes and "
        "readouts included.",
    )
    p.add_argument("--campaign", metavar="FILE", help="campaign file (TOML)")
    common.add_site_arguments(p, required=False)
    common.add_target_arguments(p, required=False)
    p.add_argument("--date", required=True, metavar="YYYY-MM-DD", help="the night's local evening date")
    p.add_argument("--visit", metavar="SPEC", help='ad hoc: the visit of every target, e.g. '
                   '"filter=V,frames=2,exposure=300" (several filters joined with ;)')
    common.add_constraint_arguments(p)
    p.add_argument("--seeing", type=float, metavar="FWHM", help="seeing planned for, arcsec (campaign form)")
    common.add_json_argument(p)
    p.add_argument("--out", metavar="FILE.ecsv", help="write the visits as an ECSV table")
    p.add_argument("--record", action="store_true",
                   help="store the night's planned visits in the logbook, so ingested frames mark them done")
    p.add_argument("--logbook", metavar="FILE",
                   help="logbook for --record (default: logbook.sqlite beside the campaign file)")
    p.add_argument("--plot", metavar="FILE.png|.pdf", help="the night's visits over the altitude curves")
    p.set_defaults(run=run)


def run(args) -> int:
    from planner.reports.schedule_report import night_sheet, schedule_json, write_plan_ecsv

    night = common.parse_night_date(args.date)
    common.check_seeing(args.seeing)
    out_path = common.check_output_path(args.out, (".ecsv",), "--out") if args.out else None
    plot_path = common.check_output_path(args.plot, (".png", ".pdf"), "--plot") if args.plot else None
    warnings: list[str] = []
    if args.campaign:
        if args.site or args.targets or args.target or args.visit:
            raise OptionError("--campaign takes the site, targets and visits from the campaign file; "
                              "leave out --site, --targets, --target and --visit")
        site, plan = _campaign_plan(args, night)
        warnings += _campaign_night_warnings(plan)
    else:
        if not args.site or not (args.targets or args.target) or not args.visit:
            raise OptionError("give --campaign FILE, or --site, --targets (or --target) and --visit "
                              "for an ad-hoc plan")
        site, plan = _ad_hoc_plan(args, night)
    common.check_night_exists(night, site)
    warnings += list(plan.warnings)
    if args.json:
        common.print_json(schedule_json(site, plan))
    else:
        print(night_sheet(site, plan))
    if out_path is not None:
        with common.output_file(out_path, "--out") as tmp:
            write_plan_ecsv(site, plan, tmp)
    if args.record:
        record_plan(args, plan, night)
    if plot_path is not None:
        from planner.reports.schedule_plot import save_schedule_plot

        from planner.cache.sun_moon import default_store

        with common.output_file(plot_path, "--plot") as tmp:
            save_schedule_plot(site, plan, tmp, store=default_store())
    if not args.json and (out_path or plot_path):
        print("\n" + "\n".join(f"written: {p}" for p in (out_path, plot_path) if p))
    common.warn_all(warnings)
    return 0


def _campaign_plan(args, night):
    """The campaign file's site and its plan of ``night`` (earlier nights' progress counts)."""
    from planner.cache.plans import plan_cache_for
    from planner.cache.sun_moon import default_store
    from planner.scheduling.campaign import plan_campaign_night

    campaign = common.campaign_from_args(args)
    common.check_campaign_night(campaign, night)
    plan, _requests = plan_campaign_night(campaign, night, args.seeing, cache=plan_cache_for(campaign.source),
                                          store=default_store())
    return campaign.site, plan


def _ad_hoc_plan(args, night):
    """The site and the plan of every target once with the visit of ``--visit``."""
    from planner.cache.sun_moon import default_store
    from planner.scheduling.night_sky import night_sky, requests_for_targets
    from planner.scheduling.night import plan_night
    from planner.scheduling.visits import body_s, parse_visit_spec

    site = common.site_from_args(args)
    targets = common.targets_from_args(args)
    constraints = common.constraints_from_args(site, args)
    exposures = parse_visit_spec(args.visit, site, "--visit")
    requests = requests_for_targets(targets, exposures)
    frame = night_sky(site, [night], constraints, store=default_store())
    w0, w1 = float(frame.window_start_jd[0]), float(frame.window_end_jd[0])
    need = body_s(site, exposures)
    if math.isfinite(w0) and need > (w1 - w0) * 86400.0:
        raise OptionError(f"--visit {args.visit!r} takes {need / 60:.0f} min with its overheads, "
                          f"longer than the usable night of {night} ({(w1 - w0) * 1440:.0f} min)")
    return site, plan_night(site, constraints, requests, night, w0, w1, frame.ephemeris, seeing_arcsec=args.seeing)


def record_plan(args, plan, night) -> None:
    """Store the plan's visits in the logbook: one planned visit per filter of each visit."""
    from planner.logbook.store import Logbook, default_logbook_path

    if not (args.logbook or args.campaign):
        raise OptionError("--record needs --logbook FILE (or --campaign, whose folder holds the logbook)")
    path = args.logbook or default_logbook_path(args.campaign)
    rows = [
        {"target": v.target, "filter": e.filter, "exposure_s": e.exposure_s, "frames": e.frames,
         "start_jd": v.start_jd, "end_jd": v.end_jd, "plan_id": v.id, "line": n}
        for v in plan.visits for n, e in enumerate(v.exposures)
    ]
    with Logbook(path) as book:
        if book.created:
            print(f"gcplan: created a new logbook at {book.path}", file=sys.stderr)
        added = book.add_planned_visits(night, rows)
    if not args.json:
        kept = len(rows) - len(added)
        print(f"\n{len(added)} planned visit(s) recorded in {path}"
              + (f"; {kept} recorded already, left as they were" if kept else ""))


def _campaign_night_warnings(plan):
    return [f"{u.target} ({u.purpose}): {u.reason}" for u in plan.unplanned if u.planned == 0
            and u.reason.startswith("never")]
