"""The text of the app's lines: pure functions of a night's data and the time now.

Every line fits 78 columns (80 less the frame and the scrollbar), so the app
reads the same over ssh at 80×24 as on a wide screen.  Times are the site's
local clock first, UTC beside it, as on ``gcplan night``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.sky.nights import jd_to_datetime, local_hhmm, utc_hhmm

#: Widest line the screens draw (80 columns less the scrollbar and a margin).
LINE_WIDTH = 78


@dataclass(frozen=True)
class Row:
    """One line of a list: its text and what it stands for (the style's class)."""

    text: str
    kind: str  # tonight: up | later | set | never; plan: now | next | done | planned | idle | closed
    key: str = ""  # the target's name (visits and targets), "" for gaps


def clip(text: str, width: int) -> str:
    """``text`` cut to ``width`` characters, an ellipsis marking the cut."""
    return text if len(text) <= width else text[: width - 1] + "…"


def header_text(site_name: str, night, now_jd: float, zone: str, width: int = LINE_WIDTH) -> str:
    """``site · Tue 2027-01-05 · now 23:41·02:41 UTC (local·UTC)``: the site's name gives way first."""
    now = jd_to_datetime(now_jd, zone)
    clock = "now —" if now is None else f"now {local_hhmm(now_jd, zone)}·{utc_hhmm(now_jd)} UTC"
    tail = f" · {night:%a %Y-%m-%d} · {clock}"
    return clip(site_name, max(8, width - len(tail))) + tail


def almanac_lines(run, i: int = 0) -> list[str]:
    """The Sun's and twilights' times (evening and morning), the Moon and the usable window."""
    alm, vis, c = run.almanac, run.visibility, run.constraints
    zone = run.site.location.timezone
    evening = [alm.sunset_jd[i], alm.evening_jd["civil"][i], alm.evening_jd["nautical"][i],
               alm.evening_jd["astronomical"][i]]
    morning = [alm.morning_jd["astronomical"][i], alm.morning_jd["nautical"][i], alm.morning_jd["civil"][i],
               alm.sunrise_jd[i]]
    heads = ("sunset", "civil", "naut", "astro", "astro", "naut", "civil", "sunrise")
    lines = [f"{'':7}" + "".join(f"{h:>8}" for h in heads[:4]) + "  │" + "".join(f"{h:>8}" for h in heads[4:])]
    for label, fmt in (("local", lambda jd: local_hhmm(jd, zone)), ("UTC", utc_hhmm)):
        lines.append(f"{label:7}" + "".join(f"{fmt(jd):>8}" for jd in evening) + "  │"
                     + "".join(f"{fmt(jd):>8}" for jd in morning))
    always = 0 if alm.moon_up_all_span is None else int(alm.moon_up_all_span[i])
    if always:
        moon = "up all night" if always > 0 else "down all night"
    else:
        moon = f"rise {local_hhmm(alm.moonrise_jd[i], zone)} set {local_hhmm(alm.moonset_jd[i], zone)}"
    s, e = vis.dark_start_jd[i], vis.dark_end_jd[i]
    usable = (f"usable {local_hhmm(s, zone)}–{local_hhmm(e, zone)} ({(e - s) * 24:.1f} h, {c.twilight})"
              if np.isfinite(s) else f"no {c.twilight} darkness")
    lines.append(clip(f"Moon {alm.moon_illumination[i] * 100:.0f}% lit, {moon} · {usable}", LINE_WIDTH))
    return lines


TARGET_HEAD = (f"  {'target':<10} {'transit':>11} {'max alt':>7} {'min X':>5}  {'window local':<11}  "
               f"{'window UTC':<11} {'hours':>5}\n"
               f"  {'':<10} {'local':>5} {'UTC':>5}")


def target_rows(run, now_jd: float, i: int = 0) -> list[Row]:
    """A line per target, in order of its window's opening; ``kind`` says whether it is up now."""
    vis = run.visibility
    zone = run.site.location.timezone
    order = np.argsort(np.nan_to_num(vis.window_start_jd[:, i], nan=np.inf), kind="stable")
    rows = []
    for k in order:
        t = run.targets[k]
        hours = float(vis.observable_hours[k, i])
        w0, w1 = vis.window_start_jd[k, i], vis.window_end_jd[k, i]
        max_alt, min_x = float(vis.max_altitude_deg[k, i]), float(vis.min_airmass[k, i])
        if hours > 0:
            # Before the clock is read (NaN) nothing is marked up or over.
            kind = "up" if w0 <= now_jd < w1 else ("set" if now_jd >= w1 else "later")
            wl = f"{local_hhmm(w0, zone)}–{local_hhmm(w1, zone)}"
            wu = f"{utc_hhmm(w0)}–{utc_hhmm(w1)}"
        else:
            kind = "never"
            wl, wu = ("below limit" if np.isfinite(max_alt) else "no darkness"), ""
        mark = {"up": "▶", "later": " ", "set": "·", "never": "×"}[kind]
        transit = f"{local_hhmm(vis.transit_jd[k, i], zone)} {utc_hhmm(vis.transit_jd[k, i])}"
        alt = f"{max_alt:6.1f}°" if np.isfinite(max_alt) else f"{'—':>7}"
        x = f"{min_x:5.2f}" if np.isfinite(min_x) else f"{'—':>5}"
        text = f"{mark} {clip(t.name, 10):<10} {transit:>11} {alt} {x}  {wl:<11}  {wu:<11} {hours:5.1f}"
        rows.append(Row(text.rstrip(), kind, t.name))
    return rows


def plan_summary(plan) -> str:
    """Visits, the usable window, shutter time, idle and closed minutes, Moon and seeing."""
    if not np.isfinite(plan.window_start_jd):
        return f"no {plan.constraints.twilight} darkness: nothing planned"
    parts = [f"{len(plan.visits)} visits", f"efficiency {plan.efficiency * 100:.0f}%", f"idle {plan.idle_minutes:.0f} min"]
    if plan.closed_minutes:
        parts.append(f"closed {plan.closed_minutes:.0f} min")
    parts += [f"Moon {plan.moon_illumination * 100:.0f}%", f"seeing {plan.seeing_arcsec:g}″"]
    return clip(" · ".join(parts), LINE_WIDTH)


PLAN_HEAD = (f"  {'start':>5} {'':>5} {'end':>5} {'target':<9} {'purpose':<9} {'filter frames×s':<22} "
             f"{'airmass':<9}")
PLAN_SUBHEAD = f"  {'local':>5} {'UTC':>5} {'local':>5}"


def current_and_next(plan, now_jd: float) -> tuple[int | None, int | None]:
    """Index of the visit under way at ``now_jd`` (or None) and of the next one to start."""
    current = nxt = None
    for j, v in enumerate(plan.visits):
        if v.start_jd <= now_jd < v.end_jd:
            current = j
        elif v.start_jd > now_jd and nxt is None:
            nxt = j
    return current, nxt


def plan_rows(plan, zone: str, now_jd: float) -> list[Row]:
    """Visits and gaps in time order; the visit under way and the next one marked."""
    from planner.reports.schedule_report import GAP_WORDS
    from planner.scheduling.visits import exposures_text

    current, nxt = current_and_next(plan, now_jd)
    events = [(v.start_jd, 0, j, v) for j, v in enumerate(plan.visits)]
    events += [(g.start_jd, 1, j, g) for j, g in enumerate(plan.gaps)]
    rows = []
    for _, what, j, item in sorted(events, key=lambda e: (e[0], e[1])):
        times = f"{local_hhmm(item.start_jd, zone):>5} {utc_hhmm(item.start_jd):>5} {local_hhmm(item.end_jd, zone):>5}"
        if what == 1:
            kind = "closed" if item.reason == "closed" else "idle"
            say = GAP_WORDS.get(item.reason, f"idle: {item.reason}")  # as the night sheet says it
            rows.append(Row(f"  {times} ┄ {say}, {item.minutes:.0f} min", kind))
            continue
        v = item
        kind = ("now" if j == current else "next" if j == nxt
                else "done" if v.end_jd <= now_jd else "planned")
        mark = {"now": "▶", "next": "›", "done": "·", "planned": " "}[kind]
        x = (f"{v.airmass_start:.2f}–{v.airmass_end:.2f}" if np.isfinite(v.airmass_start) else "—")
        text = (f"{mark} {times} {clip(v.target, 9):<9} {clip(v.purpose, 9):<9} "
                f"{clip(exposures_text(v.exposures), 22):<22} {x}")
        rows.append(Row(text.rstrip(), kind, v.target))
    return rows
