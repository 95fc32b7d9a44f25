"""The time request (``gcplan proposal``) as text, JSON, Markdown, CSV and LaTeX.

Every table is built once (:func:`target_table`, :func:`request_table`,
:func:`recovery_table`) as rows of strings, and each format writes those rows, so
the Markdown, CSV and LaTeX say the same thing.  The sources and the assumptions
go with every table.
"""

from __future__ import annotations

import csv
import io
import textwrap

from planner.cautions import PLAN_CAUTION
from planner.reports.night_report import constraints_json, site_json
from planner.reports.observability_report import month_ranges

LEVEL_WORDS = {"tip": "RGB tip", "hb": "HB", "turnoff": "turnoff", "variables": "RR Lyrae cadence"}


def _f(x, fmt: str = ".1f", none: str = "—") -> str:
    return none if x is None else format(x, fmt)


def _ranges(runs) -> str:
    if not runs:
        return "—"
    return ", ".join(f"{a:%d %b}" if a == b else f"{a:%d %b}–{b:%d %b}" for a, b in runs)


def assumptions(p) -> list[str]:
    """The choices behind the numbers, one sentence each."""
    from planner.scheduling.proposal import (
        DARK_MAX_ILLUMINATION,
        GREY_MAX_ILLUMINATION,
        MOON_ALTITUDE_DEG,
        MOON_SEPARATION_DEG,
        WINDOW_NIGHTS,
    )
    from planner.scheduling.proposal_forecast import RECOVERY_GOAL

    c = p.campaign
    seeing = c.seeing_arcsec or c.site.sky.typical_seeing_arcsec
    return [
        f"Moon classes by the illuminated fraction at the middle of the night: dark < {DARK_MAX_ILLUMINATION:.2f}, "
        f"grey ≤ {GREY_MAX_ILLUMINATION:.2f}, bright above (common practice; the bounds are our choice).",
        f"A night serves a target when it is observable ({c.constraints.describe()}; {c.constraints.twilight} "
        "twilight) for at least the hours its goals need in one night: its longest visit, or the cadence's "
        "visits at the minimum spacing.",
        f"Recommended window: the {WINDOW_NIGHTS} nights whose serving hours add up most, dark hours counting "
        "1, grey 0.5, bright 0.25.",
        f"Frames from the exposure core at the least airmass the target reaches on the window's serving nights "
        f"(mean), seeing {seeing:g}″; dark-time goals with the Moon down, the others with the window's median "
        f"illumination, the Moon {MOON_SEPARATION_DEG:g}° away and {MOON_ALTITUDE_DEG:g}° up.",
        "Time per visit by the scheduler's visit model: slew (the mean separation of the campaign's targets) "
        "and settle, acquisition, a filter change, every frame with its readout.",
        f"Cadence nights: the fewest of the forecast's that recover {RECOVERY_GOAL:.0%} of the periods "
        "(simulated light curves, Lomb–Scargle); a single site's daily gaps leave one-day aliases "
        "(1/P ± 1 d⁻¹), counted apart.",
        "Over nights: the nights a target's visits are spread over (the cadence's, or the depth frames' at "
        "the window's hours a night); full nights are the hours over the mean usable night.",
        "S/N at the RGB tip and the HB: the best any of the target's frames reach there (in each frame's "
        "band), among frames that keep those stars linear.",
        f"Nights: hours over the mean usable night of the range ({p.mean_night_hours:.1f} h). "
        f"Weather: hours / (1 − {p.weather_loss_fraction:g}), the loss from {p.weather_loss_source}.",
    ]


def target_table(p) -> tuple[list[str], list[list[str]]]:
    head = ["Target", "Best months", "Nights d/g/b", "Dark h av.", "Grey h av.", "Window", "Airmass",
            "S/N tip", "S/N HB", "Over nights", "Hours"]
    rows = []
    for t in p.targets:
        if t.reason:
            rows.append([t.name, month_ranges(t.best_months), "/".join(str(t.nights_serving[c]) for c in
                         ("dark", "grey", "bright")), _f(t.hours_available["dark"]), _f(t.hours_available["grey"]),
                         "not requested: " + t.reason, "—", "—", "—", "0", "0.0"])
            continue
        airmass = t.rows[0].airmass if t.rows else None
        rows.append([t.name, month_ranges(t.best_months),
                     "/".join(str(t.nights_serving[c]) for c in ("dark", "grey", "bright")),
                     _f(t.hours_available["dark"]), _f(t.hours_available["grey"]),
                     f"{t.window[0]:%d %b}–{t.window[1]:%d %b %Y}", _f(airmass, ".2f"), _f(t.snr_tip, ".0f"),
                     _f(t.snr_hb, ".0f"), str(t.nights_needed), f"{t.requested_hours:.2f}"])
    return head, rows


def request_table(p) -> tuple[list[str], list[list[str]]]:
    head = ["Target", "Work", "Filter", "S/N", "Frames × s", "Visits", "Shutter h", "Overhead h", "Total h",
            "Moon"]
    rows = []
    for t in p.targets:
        for r in t.rows:
            rows.append([t.name, LEVEL_WORDS.get(r.purpose, r.purpose), r.filter, _f(r.snr_goal, "g"),
                         f"{r.frames} × {r.frame_s:g}", str(r.visits), f"{r.shutter_s / 3600:.2f}",
                         f"{r.overhead_s / 3600:.2f}", f"{r.hours:.2f}", r.moon])
    hm = p.hours_by_moon
    rows.append(["Total", "", "", "", "", str(sum(r.visits for t in p.targets for r in t.rows)),
                 f"{sum(t.shutter_s for t in p.targets) / 3600:.2f}",
                 f"{sum(t.overhead_s for t in p.targets) / 3600:.2f}", f"{p.total_hours:.2f}",
                 f"d {hm['dark']:.1f} / g {hm['grey']:.1f} / b {hm['bright']:.1f}"])
    return head, rows


def recovery_table(p) -> tuple[list[str], list[list[str]]]:
    from planner.scheduling.proposal_forecast import RECOVERY_NIGHTS

    head = ["Target"] + [f"{n} nights" for n in RECOVERY_NIGHTS]
    rows = []
    for t in p.targets:
        if t.recovery:
            got = {n: (frac, alias) for n, frac, alias in t.recovery}
            rows.append([t.name] + [f"{got[n][0]:.0%}" + (f" ({got[n][1]:.0%} alias)" if got[n][1] else "")
                                    if n in got else "—" for n in RECOVERY_NIGHTS])
    return head, rows


def serving_lines(p) -> list[str]:
    """Per target and Moon class, the runs of nights that serve it."""
    out = []
    for t in p.targets:
        parts = [f"{c} {_ranges(t.serving_ranges[c])}" for c in ("dark", "grey", "bright")]
        out.append(f"{t.name} (needs {t.need_hours_per_night:.1f} h a night): " + "; ".join(parts))
    return out


def moon_lines(p) -> list[str]:
    return [f"{t.name}: {t.moon_constraint}" for t in p.targets]


def totals_lines(p) -> list[str]:
    hm = p.hours_by_moon
    return [
        f"Total: {p.total_hours:.1f} h = {p.total_nights:.1f} full nights (dark {hm['dark']:.1f} h, grey "
        f"{hm['grey']:.1f} h, bright {hm['bright']:.1f} h), before weather.",
        f"With a weather loss of {p.weather_loss_fraction:.0%} ({p.weather_loss_source}): "
        f"{p.total_hours_with_weather:.1f} h = {p.total_nights_with_weather:.1f} nights.",
    ]


def title(p) -> str:
    c = p.campaign
    return f"Time request {p.label}: {c.name}"


def proposal_text(p) -> str:
    run = p.run
    lines = [title(p), f"  at {c_site(p)}; nights {run.nights[0]} to {run.nights[-1]} ({len(run.nights)})", ""]
    head, rows = target_table(p)
    lines.append(f"  {'target':<12s}{'best months':<20s}{'window':<20s}{'nights':>7s}{'hours':>7s}"
                 f"{'S/N tip':>8s}{'S/N HB':>8s}")
    for t, r in zip(p.targets, rows):
        if t.reason:
            lines.append(f"  {t.name[:11]:<12s}{r[1][:19]:<20s}not requested: {t.reason}")
            continue
        lines.append(f"  {t.name[:11]:<12s}{r[1][:19]:<20s}{r[5][:19]:<20s}{r[9]:>7s}{r[10]:>7s}{r[7]:>8s}{r[8]:>8s}")
    lines.append("")
    lines += ["  " + x for x in totals_lines(p)]
    for t in p.targets:
        for n in t.notes:
            lines.append(f"  note ({t.name}): {n}")
    lines.append("")
    lines.extend("  " + part for part in textwrap.wrap(PLAN_CAUTION, 76))
    return "\n".join(lines)


def c_site(p) -> str:
    return p.campaign.site.name


def _row_json(r) -> dict:
    return {"work": r.purpose, "filter": r.filter, "snr_goal": r.snr_goal,
            "magnitude": None if r.magnitude is None else round(r.magnitude, 3), "frames": r.frames,
            "frame_s": r.frame_s, "visits": r.visits, "visit_s": round(r.visit_s, 1),
            "shutter_s": round(r.shutter_s, 1), "overhead_s": round(r.overhead_s, 1), "hours": round(r.hours, 4),
            "airmass": round(r.airmass, 3), "moon": r.moon,
            "hours_by_moon": {k: round(v, 4) for k, v in r.hours_by_moon.items()}}


def _target_json(t) -> dict:
    return {
        "name": t.name,
        "requested_hours": round(t.requested_hours, 4),
        "shutter_s": round(t.shutter_s, 1),
        "overhead_s": round(t.overhead_s, 1),
        "best_months": t.best_months,
        "hours_by_month": {m: round(h, 2) for m, h in t.hours_by_month.items()},
        "dark_hours_available": round(t.hours_available["dark"], 2),
        "grey_hours_available": round(t.hours_available["grey"], 2),
        "bright_hours_available": round(t.hours_available["bright"], 2),
        "nights_serving": t.nights_serving,
        "serving_ranges": {c: [{"first": a, "last": b} for a, b in runs] for c, runs in t.serving_ranges.items()},
        "need_hours_per_night": round(t.need_hours_per_night, 3),
        "recommended_window": None if t.window is None else {"first": t.window[0], "last": t.window[1]},
        "snr_tip": None if t.snr_tip is None else round(t.snr_tip, 1),
        "snr_hb": None if t.snr_hb is None else round(t.snr_hb, 1),
        "nights_needed": t.nights_needed,
        "recovery": [{"nights": n, "recovered_fraction": round(f, 4), "alias_fraction": round(a, 4)}
                     for n, f, a in t.recovery],
        "moon_constraint": t.moon_constraint,
        "rows": [_row_json(r) for r in t.rows],
        "reason": t.reason or None,
        "notes": list(t.notes),
    }


def proposal_json(p) -> dict:
    from planner.scheduling.proposal import DARK_MAX_ILLUMINATION, GREY_MAX_ILLUMINATION, WINDOW_NIGHTS
    from planner.scheduling.proposal_forecast import RECOVERY_GOAL, RECOVERY_NIGHTS

    run, c = p.run, p.campaign
    hm = p.hours_by_moon
    return {
        "site": site_json(c.site),
        "campaign": {"name": c.name, "source": c.source, "invented": c.invented},
        "semester": {"label": p.label, "start": run.nights[0], "end": run.nights[-1], "nights": len(run.nights)},
        "constraints": constraints_json(c.constraints),
        "moon_classes": {"dark_below_illumination": DARK_MAX_ILLUMINATION,
                         "grey_up_to_illumination": GREY_MAX_ILLUMINATION,
                         "basis": "common practice; the bounds are our choice",
                         "nights": {k: int((p.classes == k).sum()) for k in ("dark", "grey", "bright")}},
        "window_nights": WINDOW_NIGHTS,
        "recovery_goal": RECOVERY_GOAL,
        "recovery_nights": list(RECOVERY_NIGHTS),
        "targets": [_target_json(t) for t in p.targets],
        "total_hours": round(p.total_hours, 4),
        "total_nights": round(p.total_nights, 3),
        "hours_by_moon": {k: round(v, 4) for k, v in hm.items()},
        "nights_by_moon": {k: round(v / p.mean_night_hours, 3) for k, v in hm.items()},
        "mean_night_hours": round(p.mean_night_hours, 3),
        "weather_loss_fraction": p.weather_loss_fraction,
        "weather_loss_source": p.weather_loss_source,
        "total_hours_with_weather": round(p.total_hours_with_weather, 4),
        "total_nights_with_weather": round(p.total_nights_with_weather, 3),
        "representative_night": p.representative_night,
        "assumptions": assumptions(p),
        "sources": list(p.sources),
        "caution": PLAN_CAUTION,
        "warnings": list(p.warnings),
    }


# --- Markdown, CSV, LaTeX ------------------------------------------------------


def _md_table(head, rows) -> list[str]:
    esc = lambda s: str(s).replace("|", "\\|")  # noqa: E731
    out = ["| " + " | ".join(head) + " |", "|" + "|".join(" --- " for _ in head) + "|"]
    out += ["| " + " | ".join(esc(x) for x in r) + " |" for r in rows]
    return out


def proposal_markdown(p) -> str:
    run = p.run
    lines = [f"# {title(p)}", "",
             f"Site: {c_site(p)}; nights {run.nights[0]} to {run.nights[-1]} ({len(run.nights)} nights)."
             + (" The campaign is invented (demo data)." if p.campaign.invented else ""), "",
             "## Targets", ""]
    lines += _md_table(*target_table(p))
    lines += ["", "## Time per filter and level", ""]
    lines += _md_table(*request_table(p))
    head, rows = recovery_table(p)
    if rows:
        lines += ["", "## Forecast period recovery against nights", ""]
        lines += _md_table(head, rows)
    lines += ["", "## Totals", ""] + [f"- {x}" for x in totals_lines(p)]
    lines += ["", "## Nights that serve each target, by Moon class", ""] + [f"- {x}" for x in serving_lines(p)]
    lines += ["", "## Moon constraints", ""] + [f"- {x}" for x in moon_lines(p)]
    notes = [f"{t.name}: {n}" for t in p.targets for n in t.notes]
    if notes:
        lines += ["", "## Notes", ""] + [f"- {n}" for n in notes]
    lines += ["", "## Assumptions", ""] + [f"- {a}" for a in assumptions(p)]
    lines += ["", "## Sources", ""] + [f"- {s}" for s in p.sources]
    lines += ["", f"*{PLAN_CAUTION}*", ""]
    return "\n".join(lines)


def proposal_csv(p) -> str:
    """The request, a row per target × work (never-observable targets with their reason), the
    totals, then the sources."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["target", "work", "filter", "snr_goal", "frames", "frame_s", "visits", "airmass", "moon",
                "shutter_h", "overhead_h", "total_h", "dark_h", "grey_h", "bright_h", "best_months",
                "window_first", "window_last", "nights_needed", "note"])
    for t in p.targets:
        months = " ".join(t.best_months)
        first, last = (t.window or ("", ""))
        if t.reason:
            w.writerow([t.name, "", "", "", "", "", 0, "", "", 0, 0, 0, 0, 0, 0, months, "", "", 0,
                        "not requested: " + t.reason])
        for r in t.rows:
            w.writerow([t.name, r.purpose, r.filter, "" if r.snr_goal is None else f"{r.snr_goal:g}", r.frames,
                        f"{r.frame_s:g}", r.visits, f"{r.airmass:.3f}", r.moon, f"{r.shutter_s / 3600:.4f}",
                        f"{r.overhead_s / 3600:.4f}", f"{r.hours:.4f}",
                        *(f"{r.hours_by_moon[c]:.4f}" for c in ("dark", "grey", "bright")), months, first, last,
                        t.nights_needed, ""])
    hm = p.hours_by_moon
    w.writerow(["total", "", "", "", "", "", sum(r.visits for t in p.targets for r in t.rows), "", "",
                f"{sum(t.shutter_s for t in p.targets) / 3600:.4f}",
                f"{sum(t.overhead_s for t in p.targets) / 3600:.4f}", f"{p.total_hours:.4f}",
                *(f"{hm[c]:.4f}" for c in ("dark", "grey", "bright")), "", "", "", "",
                f"{p.total_nights:.2f} nights; with weather loss {p.weather_loss_fraction:g}: "
                f"{p.total_hours_with_weather:.2f} h"])
    for s in p.sources:
        w.writerow(["source"] + [""] * 18 + [s])
    return buf.getvalue()


_TEX = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
        "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}", "≥": r"$\geq$", "≤": r"$\leq$",
        "×": r"$\times$", "°": r"$^\circ$", "−": "$-$", "–": "--", "—": "---", "β": r"$\beta$",
        "″": r"$''$", "<": "$<$", ">": "$>$", "⁻¹": r"$^{-1}$", "ć": r"\'c", "ü": r'\"u'}


def tex(text) -> str:
    out = str(text)
    out = out.replace("⁻¹", "\x00")
    out = "".join(_TEX.get(ch, ch) for ch in out)
    return out.replace("\x00", _TEX["⁻¹"])


def _tex_table(head, rows, caption: str) -> list[str]:
    cols = "l" + "r" * (len(head) - 1)
    out = [r"\begin{table}[ht]", r"\centering\small", f"\\caption{{{tex(caption)}}}",
           f"\\begin{{tabular}}{{{cols}}}", r"\toprule", " & ".join(tex(h) for h in head) + r" \\", r"\midrule"]
    out += [" & ".join(tex(x) for x in r) + r" \\" for r in rows]
    out += [r"\bottomrule", r"\end{tabular}", r"\end{table}", ""]
    return out


def proposal_latex(p) -> str:
    """Tables for a proposal form (needs ``\\usepackage{booktabs}``), the totals and the sources."""
    lines = [f"% {tex(title(p))}", "% gcplan proposal: paste into a document with \\usepackage{booktabs}", ""]
    lines += _tex_table(*target_table(p), caption=f"Targets, semester {p.label}")
    lines += _tex_table(*request_table(p), caption="Time per filter and level, overheads included")
    head, rows = recovery_table(p)
    if rows:
        lines += _tex_table(head, rows, caption="Forecast RR Lyrae period recovery against nights")
    lines += [tex(x) + "\n" for x in totals_lines(p)]
    lines += [r"\paragraph{Moon.} " + "; ".join(tex(x) for x in moon_lines(p)) + ".", ""]
    lines += [r"\paragraph{Sources.} " + "; ".join(tex(s) for s in p.sources) + ".", ""]
    return "\n".join(lines)
