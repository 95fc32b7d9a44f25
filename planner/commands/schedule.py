"""``gcplan schedule``: one night's timed plan, from a campaign file or ad hoc.

Also home of the night sheet (text) and the plan's JSON, shared by ``gcplan
campaign`` and ``gcplan replan``.
"""

from __future__ import annotations

import textwrap

import numpy as np

from planner.cautions import PLAN_CAUTION
from planner.commands import common
from planner.commands.night import (
    add_constraint_arguments,
    constraints_from_args,
    constraints_json,
    site_json,
)
from planner.errors import InputError
from planner.sky.nights import iso_utc, local_hhmm, utc_hhmm


class ScheduleOptionError(InputError):
    """Command-line options of the scheduling commands that do not go together."""


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
    add_constraint_arguments(p)
    p.add_argument("--seeing", type=float, metavar="FWHM", help="seeing planned for, arcsec (campaign form)")
    common.add_json_argument(p)
    p.add_argument("--out", metavar="FILE.ecsv", help="write the visits as an ECSV table")
    p.add_argument("--record", action="store_true",
                   help="store the night's planned visits in the logbook, so ingested frames mark them done")
    p.add_argument("--logbook", metavar="FILE",
                   help="logbook for --record (default: logbook.sqlite beside the campaign file)")
    p.add_argument("--plot", metavar="FILE.png|.pdf", help="the night's visits over the altitude curves")
    p.set_defaults(run=run)


def check_seeing(value, option="--seeing"):
    if value is not None and not 0.1 <= value <= 10.0:
        raise ScheduleOptionError(f"{option} must be a FWHM between 0.1 and 10 arcsec (got {value:g})")


def campaign_from_args(args):
    from planner.inputs.campaign_file import read_campaign_file

    return read_campaign_file(args.campaign)


def night_index(campaign, night) -> int:
    if night not in campaign.nights:
        raise ScheduleOptionError(f"--date {night} is not a night of campaign {campaign.source!r} "
                                  f"({campaign.nights[0]} to {campaign.nights[-1]})")
    return campaign.nights.index(night)


def plan_campaign_night(campaign, night, seeing=None):
    """The campaign planned up to ``night`` (earlier nights' progress counts); that night's plan."""
    from planner.scheduling.campaign import plan_through_night

    night_index(campaign, night)
    plan, requests, _ = plan_through_night(campaign, night, seeing)
    return plan, requests, ()


def run(args) -> int:
    from planner.scheduling.frame import night_frame, requests_for_targets
    from planner.scheduling.night import plan_night
    from planner.scheduling.visits import body_s, parse_visit_spec

    night = common.parse_night_date(args.date)
    check_seeing(args.seeing)
    out_path = common.check_output_path(args.out, (".ecsv",), "--out") if args.out else None
    plot_path = common.check_output_path(args.plot, (".png", ".pdf"), "--plot") if args.plot else None
    warnings: list[str] = []
    if args.campaign:
        if args.site or args.targets or args.target or args.visit:
            raise ScheduleOptionError("--campaign takes the site, targets and visits from the campaign file; "
                                      "leave out --site, --targets, --target and --visit")
        campaign = campaign_from_args(args)
        site = campaign.site
        plan, requests, _ = plan_campaign_night(campaign, night, args.seeing)
        warnings += [w for w in _campaign_night_warnings(plan)]
    else:
        if not args.site or not (args.targets or args.target) or not args.visit:
            raise ScheduleOptionError("give --campaign FILE, or --site, --targets (or --target) and --visit "
                                      "for an ad-hoc plan")
        site = common.site_from_args(args)
        targets = common.targets_from_args(args)
        constraints = constraints_from_args(site, args)
        exposures = parse_visit_spec(args.visit, site)
        requests = requests_for_targets(targets, exposures)
        frame = night_frame(site, [night], constraints)
        w0, w1 = float(frame.window_start_jd[0]), float(frame.window_end_jd[0])
        need = body_s(site, exposures)
        if np.isfinite(w0) and need > (w1 - w0) * 86400.0:
            raise ScheduleOptionError(f"--visit {args.visit!r} takes {need / 60:.0f} min with its overheads, "
                                      f"longer than the usable night of {night} ({(w1 - w0) * 1440:.0f} min)")
        plan = plan_night(site, constraints, requests, night, w0, w1, frame.ephemeris, seeing_arcsec=args.seeing)
    warnings += list(plan.warnings)
    if args.json:
        common.print_json(schedule_json(site, plan))
    else:
        print(night_sheet(site, plan))
    if out_path is not None:
        write_plan_ecsv(site, plan, out_path)
    if args.record:
        record_plan(args, plan, night)
    if plot_path is not None:
        from planner.reports.schedule_plot import save_schedule_plot

        save_schedule_plot(site, plan, plot_path)
    if not args.json and (out_path or plot_path):
        print("\n" + "\n".join(f"written: {p}" for p in (out_path, plot_path) if p))
    common.warn_all(warnings)
    return 0


def record_plan(args, plan, night) -> None:
    """Store the plan's visits in the logbook: one planned visit per filter of each visit."""
    from planner.logbook.store import Logbook, default_logbook_path

    if not (args.logbook or args.campaign):
        raise ScheduleOptionError("--record needs --logbook FILE (or --campaign, whose folder holds the logbook)")
    path = args.logbook or default_logbook_path(args.campaign)
    rows = [
        {"target": v.target, "filter": e.filter, "exposure_s": e.exposure_s, "frames": e.frames,
         "start_jd": v.start_jd, "end_jd": v.end_jd}
        for v in plan.visits for e in v.exposures
    ]
    with Logbook(path) as book:
        book.add_planned_visits(night, rows)
    if not args.json:
        print(f"\n{len(rows)} planned visit(s) recorded in {path}")


def _campaign_night_warnings(plan):
    return [f"{u.target} ({u.purpose}): {u.reason}" for u in plan.unplanned if u.planned == 0
            and u.reason.startswith("never")]


# ----------------------------------------------------------------- JSON


def _r(x, nd):
    x = float(x)
    return round(x, nd) if np.isfinite(x) else None


def visit_json(v) -> dict:
    return {
        "id": v.id,
        "target": v.target,
        "ra_deg": v.ra_deg,
        "dec_deg": v.dec_deg,
        "start": iso_utc(v.start_jd),
        "science_start": iso_utc(v.science_start_jd),
        "end": iso_utc(v.end_jd),
        "purpose": v.purpose,
        "exposures": [{"filter": e.filter, "frames": e.frames, "exposure_s": e.exposure_s} for e in v.exposures],
        "airmass_start": _r(v.airmass_start, 3),
        "airmass_end": _r(v.airmass_end, 3),
        "moon_separation_deg": _r(v.moon_separation_deg, 1),
        "slew_deg": _r(v.slew_deg, 2),
        "duration_s": round(v.duration_s, 1),
        "shutter_s": round(v.shutter_s, 2),
        "priority": v.priority,
        "status": v.status,
        "notes": list(v.notes),
    }


def schedule_json(site, plan) -> dict:
    return {
        "site": site_json(site),
        "night": {"date": plan.night.isoformat(), "start": iso_utc(plan.window_start_jd),
                  "end": iso_utc(plan.window_end_jd)},
        "constraints": constraints_json(plan.constraints),
        "visits": [visit_json(v) for v in plan.visits],
        "idle_minutes": round(plan.idle_minutes, 1),
        "closed_minutes": round(plan.closed_minutes, 1),
        "efficiency": round(plan.efficiency, 4),
        "gaps": [{"start": iso_utc(g.start_jd), "end": iso_utc(g.end_jd), "minutes": round(g.minutes, 1),
                  "reason": g.reason} for g in plan.gaps],
        "unplanned": [{"key": u.key, "target": u.target, "purpose": u.purpose, "wanted": u.wanted,
                       "planned": u.planned, "reason": u.reason} for u in plan.unplanned],
        "closed": [{"start": iso_utc(a), "end": iso_utc(b)} for a, b in plan.closed],
        "seeing_arcsec": plan.seeing_arcsec,
        "moon_illumination": round(plan.moon_illumination, 3),
        "value": round(plan.value, 4),
        "method": plan.method,
        "warnings": list(plan.warnings),
        "caution": PLAN_CAUTION,
    }


def campaign_json(cplan) -> dict:
    c = cplan.campaign
    return {
        "campaign": {"name": c.name, "source": c.source, "invented": c.invented,
                     "first_night": c.nights[0].isoformat(), "last_night": c.nights[-1].isoformat()},
        "site": site_json(c.site),
        "nights": [schedule_json(c.site, p) for p in cplan.nights],
        "coverage": cplan.coverage,
        "recovery": cplan.recovery,
        "warnings": list(cplan.warnings),
    }


# ----------------------------------------------------------------- ECSV


def write_plan_ecsv(site, plan, path) -> None:
    from astropy.table import Table

    from planner.errors import OutputError
    from planner.scheduling.visits import exposures_text

    v = plan.visits
    t = Table({
        "id": [x.id for x in v], "target": [x.target for x in v],
        "ra_deg": [x.ra_deg for x in v], "dec_deg": [x.dec_deg for x in v],
        "start_utc": [iso_utc(x.start_jd) for x in v], "end_utc": [iso_utc(x.end_jd) for x in v],
        "start_jd": [x.start_jd for x in v], "end_jd": [x.end_jd for x in v],
        "purpose": [x.purpose for x in v], "exposures": [exposures_text(x.exposures) for x in v],
        "airmass_start": [x.airmass_start for x in v], "airmass_end": [x.airmass_end for x in v],
        "moon_separation_deg": [x.moon_separation_deg for x in v], "status": [x.status for x in v],
    })
    t.meta["night"] = plan.night.isoformat()
    t.meta["site"] = site.name
    t.meta["method"] = plan.method
    try:
        t.write(path, format="ascii.ecsv", overwrite=True)
    except OSError as exc:
        raise OutputError(f"--out {str(path)!r} cannot be written ({exc.strerror or exc})") from None


# ----------------------------------------------------------------- the night sheet


def night_sheet(site, plan) -> str:
    """The plan as the observer follows it, at 80 columns: local and UTC times, target,
    filters × frames × seconds, airmass, notes, idle gaps, the caution."""
    from planner.commands.night import utc_offset_label
    from planner.scheduling.visits import exposures_text

    loc = site.location
    zone = loc.timezone
    c = plan.constraints
    lines = [f"Plan for the night of {plan.night:%a %Y-%m-%d} at {loc.name}"]
    if not np.isfinite(plan.window_start_jd):
        lines.append(f"  no {c.twilight} darkness tonight: nothing planned")
        lines.extend("  " + part for part in textwrap.wrap(PLAN_CAUTION, 76))
        return "\n".join(lines)
    w0, w1 = plan.window_start_jd, plan.window_end_jd
    lines.append(f"  usable ({c.twilight}): {local_hhmm(w0, zone)}–{local_hhmm(w1, zone)} local "
                 f"({utc_offset_label(w0, zone)}), {utc_hhmm(w0)}–{utc_hhmm(w1)} UTC, {(w1 - w0) * 24:.1f} h")
    lines.extend(textwrap.wrap(f"limits: {c.describe()}; Moon {plan.moon_illumination * 100:.0f}% lit; seeing "
                               f"{plan.seeing_arcsec:g}″ planned", 78, initial_indent="  ", subsequent_indent="    "))
    lines.append(f"  {len(plan.visits)} visits, shutter open {plan.shutter_s / 60:.1f} min (efficiency "
                 f"{plan.efficiency * 100:.1f} %), idle {plan.idle_minutes:.0f} min"
                 + (f", closed {plan.closed_minutes:.0f} min" if plan.closed_minutes else ""))
    lines.append("")
    lines.append(f"  {'visit':<7} {'start':>5} {'':>5} {'end':>5} {'target':<10} {'purpose':<9} "
                 f"{'filter frames×s':<16} {'airmass':<9} {'moon':>4}")
    lines.append(f"  {'':<7} {'local':>5} {'UTC':>5} {'local':>5}")
    events = [(v.start_jd, 0, v) for v in plan.visits] + [(g.start_jd, 1, g) for g in plan.gaps]
    for _, kind, item in sorted(events, key=lambda e: (e[0], e[1])):
        if kind == 1:
            what = "closed (weather)" if item.reason == "closed" else "idle: nothing observable fits"
            lines.append(f"  {'':<7} {local_hhmm(item.start_jd, zone):>5} {utc_hhmm(item.start_jd):>5} "
                         f"{local_hhmm(item.end_jd, zone):>5} — {what}, {item.minutes:.0f} min")
            continue
        v = item
        name = v.target if len(v.target) <= 10 else v.target[:9] + "…"
        exp = exposures_text(v.exposures)
        parts = textwrap.wrap(exp, 16) or [""]
        x = f"{v.airmass_start:.2f}-{v.airmass_end:.2f}" if np.isfinite(v.airmass_start) else "—"
        vid = v.id[-7:]
        lines.append(f"  {vid:<7} {local_hhmm(v.start_jd, zone):>5} {utc_hhmm(v.start_jd):>5} "
                     f"{local_hhmm(v.end_jd, zone):>5} {name:<10} {v.purpose[:9]:<9} {parts[0]:<16} {x:<9} "
                     f"{v.moon_separation_deg:>3.0f}°")
        for more in parts[1:]:
            lines.append(f"  {'':<42}{more}")
        notes = list(v.notes)
        if v.status != "planned":
            notes.insert(0, v.status)
        if v.slew_deg > 0.05:
            notes.append(f"slew {v.slew_deg:.0f}°")
        if notes:
            lines.extend(textwrap.wrap("; ".join(notes), 68, initial_indent=" " * 12, subsequent_indent=" " * 12))
    if plan.unplanned:
        lines.append("")
        lines.append("  not planned:")
        for u in plan.unplanned:
            lines.extend(textwrap.wrap(f"{u.target} ({u.purpose}, {u.planned} of {u.wanted}): {u.reason}", 76,
                                       initial_indent="    ", subsequent_indent="      "))
    for w in plan.warnings:
        lines.extend(textwrap.wrap(f"warning: {w}", 78, initial_indent="  ", subsequent_indent="    "))
    lines.append("")
    lines.append("  Times: the slew starts at 'start'; overheads (slew, settle, acquisition,")
    lines.append("  filter changes, readout) are inside each visit. Airmass: first and last frame.")
    lines.extend("  " + part for part in textwrap.wrap(PLAN_CAUTION, 76))
    return "\n".join(line.rstrip() for line in lines)
