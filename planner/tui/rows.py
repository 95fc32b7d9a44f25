"""The text of the app's lines: pure functions of a night's data, its state and the time now.

Every line fits the width it is given (78 columns at 80×24: the frame and the
scrollbar take the rest); wider screens get more columns.  Times are the
site's local clock first, UTC beside it, as on ``gcplan night``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.sky.nights import jd_to_datetime, local_hhmm, utc_hhmm

#: Widest line at 80 columns (80 less the scrollbar and a margin).
LINE_WIDTH = 78
#: From this width on, lists show their extra columns.
WIDE = 120

#: The mark before a visit, by its state; the same marks in the help screen.
MARKS = {"done": "✓", "partial": "½", "skipped": "✗", "missed": "✗", "unknown": "?",
         "under way": "▶", "next": "›", "planned": " "}


@dataclass(frozen=True)
class Row:
    """One line of a list: its text, what it stands for (the style's class) and its key
    (a visit's id, a target's name; "" for gaps)."""

    text: str
    kind: str
    key: str = ""


def clip(text: str, width: int) -> str:
    """``text`` cut to ``width`` characters, an ellipsis marking the cut."""
    return text if len(text) <= width else text[: max(width - 1, 0)] + "…"


def hm(minutes: float) -> str:
    """``42m``, ``3h05m``: a duration to the minute."""
    if not np.isfinite(minutes):
        return "—"
    m = int(round(max(minutes, 0.0)))
    return f"{m}m" if m < 60 else f"{m // 60}h{m % 60:02d}m"


def deg(value: float, width: int = 0) -> str:
    """Degrees without a sign on zero (no "-0°")."""
    if not np.isfinite(value):
        return f"{'—':>{width}}"
    v = round(float(value))
    return f"{(0 if v == 0 else v):>{max(width - 1, 0)}d}°"


def header_text(site_name: str, night, now_jd: float, zone: str, lst_deg: float = float("nan"),
                width: int = LINE_WIDTH) -> str:
    """``site · night Wed 2027-01-06 · 00:12 local 03:12 UTC · LST 05:24``: the site's name gives way first."""
    import datetime as dt

    now = jd_to_datetime(now_jd, zone)
    clock = "clock —" if now is None else f"{local_hhmm(now_jd, zone)} local {utc_hhmm(now_jd)} UTC"
    if now is not None and (now - dt.timedelta(hours=12)).date() != night:
        clock = f"now {now:%d %b %Y} {clock}" if width >= 100 else f"now {now:%d %b} {clock}"
    lst = "" if not np.isfinite(lst_deg) else f" · LST {int(lst_deg / 15):02d}:{int(lst_deg / 15 * 60) % 60:02d}"
    tail = f" · night {night:%a %Y-%m-%d} · {clock}{lst}"
    if len(tail) + 8 > width:  # the clock is in another night: its date first, LST gives way
        tail = f" · night {night:%a %Y-%m-%d} · {clock}"
    return clip(site_name, max(8, width - len(tail))) + tail


def almanac_lines(run, i: int = 0, width: int = LINE_WIDTH) -> list[str]:
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
    lines.append(clip(f"Moon {alm.moon_illumination[i] * 100:.0f}% lit, {moon} · {usable}", width))
    return lines


# --- the plan ---------------------------------------------------------------------

def plan_head(width: int = LINE_WIDTH) -> str:
    head = (f"  {'local':>5} {'UTC':>5} {'visit id':<16} {'target':<9} {'frames':<17} "
            f"{'airmass':<9} {'state':<7}")
    return head + ("  purpose    note" if width >= WIDE else "")


def _exposures(v, n: int) -> str:
    from planner.scheduling.visits import exposures_text

    return clip(exposures_text(v.exposures), n)


def plan_rows(plan, states: dict, zone: str, next_id: str | None, width: int = LINE_WIDTH) -> list[Row]:
    """Visits and gaps in time order, each visit with its id and its state (``states``: id →
    state word; the visit ``next_id`` marked next)."""
    from planner.reports.schedule_report import GAP_WORDS

    events = [(v.start_jd, 0, v) for v in plan.visits] + [(g.start_jd, 1, g) for g in plan.gaps]
    wide = width >= WIDE
    rows = []
    for _, what, item in sorted(events, key=lambda e: (e[0], e[1])):
        times = f"{local_hhmm(item.start_jd, zone):>5} {utc_hhmm(item.start_jd):>5}"
        if what == 1:
            kind = "closed" if item.reason == "closed" else "idle"
            say = GAP_WORDS.get(item.reason, f"idle: {item.reason}")  # as the night sheet says it
            rows.append(Row(clip(f"  {times} ┄ {say}, {item.minutes:.0f} min", width), kind))
            continue
        v = item
        state = states.get(v.id, "planned")
        kind = "next" if (v.id == next_id and state == "planned") else state.replace(" ", "-")
        mark = MARKS["next"] if kind == "next" else MARKS.get(state, " ")
        x = f"{v.airmass_start:.2f}–{v.airmass_end:.2f}" if np.isfinite(v.airmass_start) else "—"
        word = "" if state == "planned" else ("now" if state == "under way" else state)
        text = (f"{mark} {times} {clip(v.id, 16):<16} {clip(v.target, 9):<9} {_exposures(v, 17):<17} "
                f"{x:<9} {word:<7}")
        if wide:
            text += f"  {clip(v.purpose, 9):<9}  {'; '.join(v.notes)}"
        rows.append(Row(clip(text.rstrip(), width), kind, v.id))
    return rows


def plan_summary(plan, states: dict, width: int = LINE_WIDTH) -> str:
    """Visits by state, shutter efficiency, Moon and seeing, in one line."""
    if not np.isfinite(plan.window_start_jd):
        return f"no {plan.constraints.twilight} darkness: nothing planned"
    said = [f"{n} {w}" for w in ("done", "partial", "skipped", "missed", "unknown")
            if (n := sum(1 for s in states.values() if s == w))]
    parts = [f"{len(plan.visits)} visits"] + said + [f"efficiency {plan.efficiency * 100:.0f}%"]
    if plan.closed_minutes:
        parts.append(f"closed {plan.closed_minutes:.0f} min")
    parts.append(f"seeing {plan.seeing_arcsec:g}″")
    return clip(" · ".join(parts), width)


# --- where the night stands ----------------------------------------------------------

def _target_index(run, name: str) -> int | None:
    for k, t in enumerate(run.targets):
        if t.name == name:
            return k
    return None


def now_lines(plan, run, sky, states: dict, now_jd: float, width: int = LINE_WIDTH,
              no_plan: str = "no plan for this night") -> list[str]:
    """Three lines: the visit under way (or what the night is waiting for), the next visit
    and the Moon, and the night's end with the dome's state."""
    zone = run.site.location.timezone
    visits = plan.visits if plan is not None else ()
    if sky is not None and abs(sky.jd - now_jd) > 1e-6:  # another night than the clock's
        return other_night_lines(plan, run, sky, width, no_plan)
    current = next((v for v in visits if v.start_jd <= now_jd < v.end_jd), None)
    nxt = next((v for v in visits if v.start_jd > now_jd), None)
    if current is not None:
        k = _target_index(run, current.target)
        x_now = float(sky.airmass[k]) if (sky is not None and k is not None) else float("nan")
        x = f"X {x_now:.2f}→{current.airmass_end:.2f}" if np.isfinite(x_now) else (
            f"X →{current.airmass_end:.2f}")
        state = states.get(current.id, "under way")
        first = (f"NOW  {current.id} {current.target} {_exposures(current, 24)} · {x} · ends "
                 f"{local_hhmm(current.end_jd, zone)}, {hm((current.end_jd - now_jd) * 1440)}"
                 + ("" if state == "under way" else f" · {state}"))
        focus = current
    elif plan is None:
        first, focus = no_plan, None
    elif visits and now_jd < visits[0].start_jd:
        first, focus = f"the night's first visit at {local_hhmm(visits[0].start_jd, zone)}", visits[0]
    elif nxt is None:
        first, focus = "the night's visits are over", None
    else:
        first, focus = "between visits", nxt
    if nxt is not None:
        second = (f"NEXT {local_hhmm(nxt.start_jd, zone)} in {hm((nxt.start_jd - now_jd) * 1440)} "
                  f"{nxt.id} {nxt.target} {_exposures(nxt, 20)}")
    else:
        second = "NEXT nothing more tonight"
    third = []
    if sky is not None:
        lit = f"{sky.moon_illumination * 100:.0f}% lit"
        if sky.moon_altitude_deg > -0.833:
            moon = f"Moon up {deg(sky.moon_altitude_deg)}, {lit}"
            k = _target_index(run, focus.target) if focus is not None else None
            if k is not None:
                moon += f", {deg(sky.moon_separation_deg[k])} from {focus.target}"
        else:
            moon = f"Moon down, {lit}"
        third.append(moon)
    start, end = run.visibility.dark_start_jd[0], run.visibility.dark_end_jd[0]
    if not np.isfinite(end):
        third.append(f"no {run.constraints.twilight} darkness")
    elif now_jd < start:
        third.append(f"dark {local_hhmm(start, zone)}–{local_hhmm(end, zone)}, in {hm((start - now_jd) * 1440)}")
    elif now_jd < end:
        third.append(f"dark until {local_hhmm(end, zone)} ({hm((end - now_jd) * 1440)})")
    else:
        third.append(f"dark ended {local_hhmm(end, zone)}")
    return [clip(first, width), clip(second, width), clip(" · ".join(third), width)]


def other_night_lines(plan, run, sky, width: int = LINE_WIDTH, no_plan: str = "") -> list[str]:
    """The three lines for a night the clock is not in: nothing is under way there."""
    zone = run.site.location.timezone
    visits = plan.visits if plan is not None else ()
    first = "not the clock's night: nothing under way (t: tonight)"
    if visits:
        second = (f"{len(visits)} visits, the first {local_hhmm(visits[0].start_jd, zone)} "
                  f"{visits[0].id}, the last ending {local_hhmm(visits[-1].end_jd, zone)}")
    else:
        second = no_plan or "no visits"
    start, end = run.visibility.dark_start_jd[0], run.visibility.dark_end_jd[0]
    dark = (f"dark {local_hhmm(start, zone)}–{local_hhmm(end, zone)}" if np.isfinite(start)
            else f"no {run.constraints.twilight} darkness")
    moon = (f"Moon {'up ' + deg(sky.moon_altitude_deg) if sky.moon_altitude_deg > -0.833 else 'down'}, "
            f"{sky.moon_illumination * 100:.0f}% lit")
    return [clip(first, width), clip(second, width),
            clip(f"{dark} · at {local_hhmm(sky.jd, zone)}: {moon}", width)]


# --- what is up now -------------------------------------------------------------------

def sky_head(width: int = LINE_WIDTH) -> str:
    head = f"  {'target':<10} {'alt':>4} {'az':>4} {'airmass':>7} {'left':>6} {'Moon':>4}  {'window local':<11}  why not"
    return head + ("" if width < WIDE else "")


def sky_rows(run, sky, width: int = LINE_WIDTH, i: int = 0) -> list[Row]:
    """A line per target, those up now first (longest time left first), then the others by
    when their window opens; each with its altitude, azimuth, airmass, time left inside the
    limits, distance to the Moon, window, and the reason it is out."""
    vis = run.visibility
    zone = run.site.location.timezone
    up = sky.minutes_left > 0
    order = sorted(range(len(run.targets)), key=lambda k: (
        not up[k], -sky.minutes_left[k] if up[k] else np.nan_to_num(vis.window_start_jd[k, i], nan=np.inf)))
    rows = []
    for k in order:
        t = run.targets[k]
        w0, w1 = vis.window_start_jd[k, i], vis.window_end_jd[k, i]
        window = f"{local_hhmm(w0, zone)}–{local_hhmm(w1, zone)}" if np.isfinite(w0) else "none tonight"
        alt = float(sky.altitude_deg[k])
        x = float(sky.airmass[k])
        kind = "up" if up[k] else ("later" if np.isfinite(w0) and w0 > sky.jd else "out")
        mark = {"up": "▶", "later": " ", "out": "·"}[kind]
        why = sky.reasons[k]
        if kind == "later" and why:
            why = f"{why}; opens {local_hhmm(w0, zone)}"
        text = (f"{mark} {clip(t.name, 10):<10} {deg(alt, 4)} {deg(sky.azimuth_deg[k], 4)} "
                f"{(f'{x:.2f}' if np.isfinite(x) and alt > 0 else '—'):>7} "
                f"{(hm(sky.minutes_left[k]) if up[k] else ''):>6} {deg(sky.moon_separation_deg[k], 4)}  "
                f"{window:<11}  {why}")
        rows.append(Row(clip(text.rstrip(), width), kind, t.name))
    return rows


# --- phases -----------------------------------------------------------------------------

def phase_head(width: int = LINE_WIDTH) -> str:
    return f"  {'star':<12} {'cluster':<9} {'P (d)':>6} {'epochs':>6} {'phase bins':>11} {'+tonight':>9} {'widest gap':>10}"


def phase_rows(table, width: int = LINE_WIDTH) -> list[Row]:
    """One line per variable of the phase table (:func:`planner.tui.night_state.phase_table`)."""
    rows = []
    for r in table:
        gain = r.bins_after - r.bins_before
        text = (f"  {clip(r.star, 12):<12} {clip(r.cluster, 9):<9} {r.period_d:6.3f} {r.epochs_before:>6} "
                f"{r.bins_before:>5}/{r.n_bins:<5} {('+' + str(gain)) if gain else '':>9} "
                f"{r.gap_after:>9.2f}")
        rows.append(Row(clip(text.rstrip(), width), "gain" if gain else "planned", r.star))
    return rows
