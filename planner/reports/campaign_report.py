"""A whole campaign's plan: the summary of its nights, deep frames and forecast (text,
``gcplan campaign``) and the JSON of every night with the coverage and recovery forecast."""

from __future__ import annotations

import textwrap

from planner.cautions import PLAN_CAUTION
from planner.scheduling.campaign import is_fill
from planner.reports.night_report import site_json
from planner.reports.schedule_report import schedule_json
from planner.sky.nights import local_hhmm


def campaign_json(cplan) -> dict:
    c = cplan.campaign
    return {
        "campaign": {"name": c.name, "source": c.source, "invented": c.invented,
                     "first_night": c.nights[0].isoformat(), "last_night": c.nights[-1].isoformat()},
        "site": site_json(c.site),
        "fill": c.fill,
        "usable_hours": round(cplan.usable_hours, 2),
        "required_hours": round(cplan.required_hours, 2),
        "spare_hours": round(cplan.spare_hours, 2),
        "fill_hours": round(cplan.fill_hours, 2),
        "nights": [schedule_json(c.site, p) for p in cplan.nights],
        "coverage": cplan.coverage,
        "recovery": cplan.recovery,
        "warnings": list(cplan.warnings),
    }


def _time_line(plan) -> str:
    """The campaign's time in one sentence: usable, taken by the goals, spare and its use."""
    use = {"none": 'left idle (fill = "none")', "cadence": "extra cadence epochs",
           "depth": "extra depth frames"}.get(plan.campaign.fill, "extra cadence epochs and depth frames")
    text = (f"time: {plan.usable_hours:.1f} h usable; the goals take {plan.required_hours:.1f} h, "
            f"{plan.spare_hours:.1f} h spare")
    if plan.campaign.fill == "none":
        return f"{text}, {use}."
    return f"{text}; {plan.fill_hours:.1f} h of it planned with {use} (marked extra)."


def campaign_text(plan) -> str:
    from planner.scheduling.visits import exposures_text

    c = plan.campaign
    zone = c.site.location.timezone
    lines = textwrap.wrap(f"Campaign: {c.name}", 80, subsequent_indent="  ")
    lines += [f"  {c.site.name}, {len(c.nights)} nights {c.nights[0]} to {c.nights[-1]}"]
    lines.extend(textwrap.wrap(_time_line(plan), 78, initial_indent="  ", subsequent_indent="    "))
    lines.append("")
    lines.append(f"  {'night':<10} {'usable':<11} {'visits':>6} {'extra':>5} {'eff.':>6} {'idle':>5}  clusters")
    for p in plan.nights:
        usable = (f"{local_hhmm(p.window_start_jd, zone)}–{local_hhmm(p.window_end_jd, zone)}"
                  if p.window_minutes > 0 else "none")
        counts: dict[str, int] = {}
        for v in p.visits:
            counts[v.target] = counts.get(v.target, 0) + 1
        text = ", ".join(f"{t} {n}" for t, n in counts.items())
        extra = sum(1 for v in p.visits if is_fill(v))
        row = f"  {p.night.isoformat():<10} {usable:<11} {len(p.visits) - extra:>6} {extra:>5} " \
              f"{p.efficiency * 100:>5.1f}% {p.idle_minutes:>4.0f}m  "
        lines.extend(textwrap.wrap(text, 79, initial_indent=row, subsequent_indent=" " * len(row)) or [row])
    deep = [v for p in plan.nights for v in p.visits if v.purpose in ("tip", "hb", "turnoff") and not is_fill(v)]
    if deep:
        lines += ["", "  deep frames of the goals (extra ones: in the night sheets):"]
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
