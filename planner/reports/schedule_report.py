"""One night's plan as the observer follows it (the night sheet, text), as JSON and as an
ECSV table of its visits: ``gcplan schedule``, ``campaign`` and ``replan`` write these."""

from __future__ import annotations

import textwrap

import numpy as np

from planner.cautions import PLAN_CAUTION
from planner.scheduling.night_plan import FILL_SUFFIX
from planner.reports.night_report import constraints_json, rounded, site_json, utc_offset_label
from planner.sky.nights import iso_utc, local_hhmm, utc_hhmm


# ----------------------------------------------------------------- JSON


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
        "airmass_start": rounded(v.airmass_start, 3),
        "airmass_end": rounded(v.airmass_end, 3),
        "moon_separation_deg": rounded(v.moon_separation_deg, 1),
        "slew_deg": rounded(v.slew_deg, 2),
        "duration_s": round(v.duration_s, 1),
        "shutter_s": round(v.shutter_s, 2),
        "priority": v.priority,
        "best_airmass": rounded(v.best_airmass, 3),
        "snr_planned": None if v.snr_planned is None else round(float(v.snr_planned), 1),
        "status": v.status,
        "status_source": v.status_source,
        "fill": v.request_key.endswith(FILL_SUFFIX),  # spare-time work of a campaign, not its goals
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
        "mean_airmass": rounded(plan.mean_airmass, 3),
        "bound": bound_json(plan),
        "spare_value": round(plan.spare_value, 4),
        "method": plan.method,
        "warnings": list(plan.warnings),
        "caution": PLAN_CAUTION,
    }


def bound_json(plan) -> dict | None:
    """The upper bound on the plan's value (planner.scheduling.bound) and the share it misses."""
    if not np.isfinite(plan.bound_value):
        return None
    return {"value": round(plan.bound_value, 4), "gap_fraction": round(plan.gap_fraction, 4),
            "method": plan.bound_method}


def bound_line(plan) -> str | None:
    """One line for the night sheet: how close the plan comes to the best any plan could do."""
    if not np.isfinite(plan.bound_value) or plan.bound_value <= 0:
        return None
    x = f", mean airmass {plan.mean_airmass:.2f}" if np.isfinite(plan.mean_airmass) else ""
    what = "the goals' visits reach" if plan.spare_value > 0 else "plan reaches"
    spare = f"; spare-time work adds {plan.spare_value:.3g} more" if plan.spare_value > 0 else ""
    return (f"{what} {100 * (1 - plan.gap_fraction):.1f} % of the most any plan of these visits "
            f"could ({plan.value:.3g} of {plan.bound_value:.3g} priority × shutter hours at each target's "
            f"best sky; LP bound{spare}){x}")


# ----------------------------------------------------------------- ECSV


def write_plan_ecsv(site, plan, path, option: str = "--out") -> None:
    from astropy.table import Table

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
    t.write(path, format="ascii.ecsv", overwrite=True)  # the command writes through common.output_file


# ----------------------------------------------------------------- the night sheet

#: How the night sheet names each gap reason (a campaign's gaps carry the last two).
GAP_WORDS = {"closed": "closed (weather)",
             "nothing observable": "idle: nothing wanted holds the limits here",
             "goals met": "idle: targets up, nothing more wanted"}


def night_sheet(site, plan) -> str:
    """The plan as the observer follows it, at 80 columns: local and UTC times, target,
    filters × frames × seconds, airmass, notes, idle gaps, the caution."""
    from planner.scheduling.replan import STATUS_SOURCE_WORDS
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
    off0, off1 = utc_offset_label(w0, zone), utc_offset_label(w1, zone)
    local = (f"{local_hhmm(w0, zone)}–{local_hhmm(w1, zone)} local ({off0})" if off0 == off1 else  # the clocks
             f"{local_hhmm(w0, zone)} ({off0})–{local_hhmm(w1, zone)} ({off1}) local")  # changed in the night
    lines.append(f"  usable ({c.twilight}): {local}, {utc_hhmm(w0)}–{utc_hhmm(w1)} UTC, {(w1 - w0) * 24:.1f} h")
    lines.extend(textwrap.wrap(f"limits: {c.describe()}; Moon {plan.moon_illumination * 100:.0f}% lit; seeing "
                               f"{plan.seeing_arcsec:g}″ planned", 78, initial_indent="  ", subsequent_indent="    "))
    lines.append(f"  {len(plan.visits)} visits, shutter open {plan.shutter_s / 60:.1f} min (efficiency "
                 f"{plan.efficiency * 100:.1f} %), idle {plan.idle_minutes:.0f} min"
                 + (f", closed {plan.closed_minutes:.0f} min" if plan.closed_minutes else ""))
    line = bound_line(plan)
    if line:
        lines.extend(textwrap.wrap(line, 78, initial_indent="  ", subsequent_indent="    "))
    lines.append("")
    # The visit column is the id without the night (what `replan --done` takes); it says
    # what the visit is for (var, tipI, hbV, toV...), so no purpose column is needed.
    lines.append(f"  {'visit':<11} {'start':>5} {'':>5} {'end':>5} {'target':<10} "
                 f"{'filter frames×s':<16} {'airmass':<9} {'moon':>4}")
    lines.append(f"  {'':<11} {'local':>5} {'UTC':>5} {'local':>5}")
    events = [(v.start_jd, 0, v) for v in plan.visits] + [(g.start_jd, 1, g) for g in plan.gaps]
    for _, kind, item in sorted(events, key=lambda e: (e[0], e[1])):
        if kind == 1:
            what = GAP_WORDS.get(item.reason, f"idle: {item.reason}")
            lines.append(f"  {'':<7} {local_hhmm(item.start_jd, zone):>5} {utc_hhmm(item.start_jd):>5} "
                         f"{local_hhmm(item.end_jd, zone):>5} — {what}, {item.minutes:.0f} min")
            continue
        v = item
        name = v.target if len(v.target) <= 10 else v.target[:9] + "…"
        exp = exposures_text(v.exposures)
        parts = textwrap.wrap(exp, 16) or [""]
        x = f"{v.airmass_start:.2f}-{v.airmass_end:.2f}" if np.isfinite(v.airmass_start) else "—"
        vid = v.id.split("-", 1)[1] if v.id.count("-") >= 2 else v.id
        lines.append(f"  {vid[-11:]:<11} {local_hhmm(v.start_jd, zone):>5} {utc_hhmm(v.start_jd):>5} "
                     f"{local_hhmm(v.end_jd, zone):>5} {name:<10} {parts[0]:<16} {x:<9} "
                     f"{v.moon_separation_deg:>3.0f}°")
        for more in parts[1:]:
            lines.append(f"  {'':<36}{more}")
        notes = list(v.notes)
        if v.status != "planned":
            notes.insert(0, v.status + (f" ({STATUS_SOURCE_WORDS[v.status_source]})" if v.status_source else ""))
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
