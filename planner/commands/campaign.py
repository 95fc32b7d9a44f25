"""``gcplan campaign``: every night of a campaign planned, with the coverage and recovery forecast."""

from __future__ import annotations

import textwrap

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
    import json
    from pathlib import Path

    from planner.commands.schedule import (
        campaign_from_args,
        campaign_json,
        check_seeing,
        night_sheet,
    )
    from planner.errors import OutputError
    from planner.scheduling.campaign import plan_campaign

    check_seeing(args.seeing)
    out = None
    if args.out:
        out = Path(args.out)
        if out.exists() and not out.is_dir():
            raise OutputError(f"--out {args.out!r} is a file, not a folder")
        if not out.parent.is_dir():
            raise OutputError(f"--out {args.out!r}: folder {str(out.parent)!r} does not exist")
    campaign = campaign_from_args(args)
    plan = plan_campaign(campaign, seeing_arcsec=args.seeing)
    data = campaign_json(plan)
    if args.json:
        common.print_json(data)
    else:
        print(campaign_text(plan))
    if out is not None:
        from planner.reports.schedule_plot import save_schedule_plot

        out.mkdir(exist_ok=True)
        for p in plan.nights:
            (out / f"schedule_{p.night.isoformat()}.txt").write_text(night_sheet(campaign.site, p) + "\n",
                                                                        encoding="utf-8")
            save_schedule_plot(campaign.site, p, out / f"schedule_{p.night.isoformat()}.png")
        (out / "campaign.json").write_text(json.dumps(common.to_jsonable(data), indent=2, ensure_ascii=False)
                                           + "\n", encoding="utf-8")
        if not args.json:
            print(f"\nwritten to {out}/: a night sheet and a plot per night, campaign.json")
    common.warn_all(plan.warnings)
    return 0


def campaign_text(plan) -> str:
    from planner.cautions import PLAN_CAUTION
    from planner.scheduling.visits import exposures_text
    from planner.sky.nights import local_hhmm

    c = plan.campaign
    zone = c.site.location.timezone
    lines = textwrap.wrap(f"Campaign: {c.name}", 80, subsequent_indent="  ")
    lines += [f"  {c.site.name}, {len(c.nights)} nights {c.nights[0]} to {c.nights[-1]}", ""]
    lines.append(f"  {'night':<10} {'usable':<11} {'visits':>6} {'eff.':>6} {'idle':>5}  clusters")
    for p in plan.nights:
        usable = (f"{local_hhmm(p.window_start_jd, zone)}–{local_hhmm(p.window_end_jd, zone)}"
                  if p.window_minutes > 0 else "none")
        counts: dict[str, int] = {}
        for v in p.visits:
            counts[v.target] = counts.get(v.target, 0) + 1
        text = ", ".join(f"{t} {n}" for t, n in counts.items())
        row = f"  {p.night.isoformat():<10} {usable:<11} {len(p.visits):>6} {p.efficiency * 100:>5.1f}% " \
              f"{p.idle_minutes:>4.0f}m  "
        lines.extend(textwrap.wrap(text, 79, initial_indent=row, subsequent_indent=" " * len(row)) or [row])
    deep = [v for p in plan.nights for v in p.visits if v.purpose in ("tip", "hb", "turnoff")]
    if deep:
        lines += ["", "  deep frames:"]
        for v in deep:
            lines.append(f"    {v.id:<9} {v.target:<10} {v.purpose:<5} at airmass {v.airmass_start:.2f}, "
                         f"{local_hhmm(v.start_jd, zone)} local, {exposures_text(v.exposures)}")
    if plan.coverage:
        lines += ["", f"  forecast: phase coverage ({plan.coverage['phase_bins']} bins), period recovery"]
        rec = {r["cluster"]: r for r in plan.recovery.get("clusters", [])}
        for cl in plan.coverage["clusters"]:
            r = rec.get(cl["cluster"], {})
            lines.append(f"    {cl['cluster']:<10} {cl['stars']:>3} stars {cl['visits']:>4} visits  bins median "
                         f"{cl['median_bins_covered']:g} (min {cl['min_bins_covered']})  recovered "
                         f"{100 * r.get('recovered_fraction', 0):.0f} %")
    for w in plan.warnings:
        lines.extend(textwrap.wrap(f"warning: {w}", 78, initial_indent="  ", subsequent_indent="    "))
    lines.append("")
    lines.append("  Night sheets: gcplan schedule --campaign FILE --date NIGHT (or --out DIR).")
    lines.extend("  " + part for part in textwrap.wrap(PLAN_CAUTION, 76))
    return "\n".join(line.rstrip() for line in lines)
