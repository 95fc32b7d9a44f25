"""One night's altitude chart: every target's altitude against local clock time.

:func:`night_chart` draws the night's twilights as sky shades, the Moon, the
altitude limit, an airmass scale and each target's observable window, to be
printed A4 landscape and pinned up; the schedule figure and the printed log
draw over it.
"""

from __future__ import annotations

from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

from planner.reports.figure_common import (
    A4_LANDSCAPE_IN,
    TARGET_COLOURS,
    TARGET_LINESTYLES,
    caution_footer,
    clock_ticks,
    jd_to_mdate,
    offset_changes,
    offset_text,
    save_figure,
)
from planner.sky.airmass import altitude_for_airmass
from planner.sky.almanac import SUNRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG
from planner.sky.nights import jd_to_datetime, local_hhmm, utc_hhmm

#: Sky shades, lighter = brighter sky; keyed by the level the Sun is below
#: (None = above the horizon).  Our own choice of grey-blues.
SKY_SHADES = (
    (None, "#ffffff", "day"),
    ("sunset", "#e9edf3", "civil twilight"),
    ("civil", "#d5dce8", "nautical twilight"),
    ("nautical", "#bdc7d9", "astronomical twilight"),
    ("astronomical", "#a3b0c8", "dark (Sun below −18°)"),
)
MOON_STYLE = dict(color="#4a4f57", linestyle=(0, (4, 2.5)), linewidth=1.6)
AIRMASS_TICKS = (1.0, 1.2, 1.5, 2.0, 3.0)


def sun_below_intervals(run, index: int) -> dict[str, tuple[float, float] | None]:
    """When the Sun is below each level on night ``index`` (JD UTC), as the almanac says.

    Keys ``sunset`` (−0.833°), ``civil``, ``nautical``, ``astronomical``;
    ``None`` when the Sun never gets that low.  Twilight levels come from
    :meth:`~planner.almanac.Almanac.dark_window_jd`; the horizon level follows
    the same rules (polar night: the whole span).
    """
    alm = run.almanac
    out: dict[str, tuple[float, float] | None] = {}
    lo, hi = alm.span_start_jd[index], alm.span_end_jd[index]
    if alm.sun_min_altitude_deg[index] >= SUNRISE_ALTITUDE_DEG:
        out["sunset"] = None
    elif alm.sun_max_altitude_deg[index] < SUNRISE_ALTITUDE_DEG:
        out["sunset"] = (float(lo), float(hi))
    else:
        s, e = alm.sunset_jd[index], alm.sunrise_jd[index]
        out["sunset"] = (float(lo if np.isnan(s) else s), float(hi if np.isnan(e) else e))
    for name in TWILIGHT_ALTITUDE_DEG:
        s, e = alm.dark_window_jd(name)
        out[name] = None if np.isnan(s[index]) else (float(s[index]), float(e[index]))
    return out


def _night_index(run, curves) -> int:
    mid = 0.5 * (curves.start_jd + curves.end_jd)
    inside = (run.almanac.span_start_jd <= mid) & (mid < run.almanac.span_end_jd)
    return int(np.argmax(inside)) if inside.any() else 0


def _target_style(rank: int) -> dict:
    colour = TARGET_COLOURS[rank % len(TARGET_COLOURS)]
    style = TARGET_LINESTYLES[(rank // len(TARGET_COLOURS)) % len(TARGET_LINESTYLES)]
    return dict(color=colour, linestyle=style)


def usable_text(run, index: int) -> str:
    """The title's line on the usable window (or why there is none)."""
    alm, vis, zone = run.almanac, run.visibility, run.site.location.timezone
    tw = run.constraints.twilight
    s, e = vis.dark_start_jd[index], vis.dark_end_jd[index]
    if np.isfinite(s):
        text = (
            f"usable ({tw} darkness): {local_hhmm(s, zone)}–{local_hhmm(e, zone)} local, "
            f"{utc_hhmm(s)}–{utc_hhmm(e)} UTC, {(e - s) * 24:.1f} h"
        )
        if alm.sun_max_altitude_deg[index] < SUNRISE_ALTITUDE_DEG:
            text += " — polar night, the Sun does not rise"
        return text
    if alm.sun_min_altitude_deg[index] >= SUNRISE_ALTITUDE_DEG:
        return f"no {tw} darkness tonight: the Sun does not set (midnight sun)"
    return (
        f"no {tw} darkness tonight: the Sun gets only {-alm.sun_min_altitude_deg[index]:.1f}° "
        f"below the horizon"
    )


def night_chart(run, curves, fig=None):
    """Altitude of every target through one night, against local clock time.

    ``run`` is a :class:`~planner.night_summary.RunOfNights`, ``curves`` the
    :class:`~planner.night_summary.NightCurves` of one of its nights; the figure
    is drawn into ``fig`` if given (else a new A4-landscape one) and returned.
    """
    import matplotlib
    from matplotlib.figure import Figure

    with matplotlib.rc_context({"font.size": 10, "axes.titlesize": 13, "axes.labelsize": 11}):
        if fig is None:
            fig = Figure(figsize=A4_LANDSCAPE_IN)
        _draw_night(fig, run, curves)
    return fig


def _draw_night(fig, run, curves) -> None:
    i = _night_index(run, curves)
    alm, vis, c = run.almanac, run.visibility, run.constraints
    zone = run.site.location.timezone
    sky = curves.sky
    t0, t1 = curves.start_jd, curves.end_jd
    x = jd_to_mdate(sky.jd_utc)
    ax = fig.add_axes((0.065, 0.2, 0.68, 0.64))
    ax.set_xlim(jd_to_mdate(t0), jd_to_mdate(t1))
    ax.set_ylim(0.0, 90.0)
    sky_handles = _shade_sky(ax, run, i, t0, t1)
    _mark_sun_events(ax, alm, i, t0, t1, zone)

    # Below the altitude limit: washed out, and the limit itself as a line.
    limit = c.altitude_limit_deg
    ax.axhspan(0.0, limit, facecolor="white", alpha=0.45, edgecolor="none", zorder=1)
    ax.axhline(limit, color="#343a40", linewidth=1.3, zorder=2)
    ax.grid(axis="y", color="white", linewidth=0.7, alpha=0.9, zorder=1)
    ax.set_yticks(np.arange(0, 91, 10))
    ax.set_ylabel("altitude (°)")

    moon_label = f"Moon, {alm.moon_illumination[i] * 100:.0f}% illuminated"
    ax.plot(x, sky.moon_altitude_deg, zorder=3, label=moon_label, **MOON_STYLE)

    notes = []
    if not np.isfinite(vis.dark_start_jd[i]):
        notes.append(ax.text(0.5, 0.97, f"no {c.twilight} darkness tonight", transform=ax.transAxes,
                             ha="center", va="top", fontsize=13, color="#5c6370", zorder=6))
    target_handles = _draw_targets(ax, run, i, x, sky, notes)
    _airmass_axis(ax)
    _clock_axes(ax, t0, t1, zone)
    _night_keys(fig, run, i, target_handles, sky_handles, moon_label)


def _shade_sky(ax, run, i, t0, t1) -> list:
    """Sky: nested spans, each where the Sun is below a level (the almanac's times).
    Returns the legend's patches, one per shade."""
    from matplotlib.patches import Patch

    below = sun_below_intervals(run, i)
    sky_handles = []
    for level, colour, label in SKY_SHADES:
        sky_handles.append(Patch(facecolor=colour, edgecolor="#8a94a6", linewidth=0.5, label=label))
        span = (t0, t1) if level is None else below[level]
        if span is None:
            continue
        a, b = max(span[0], t0), min(span[1], t1)
        if b > a:
            ax.axvspan(*jd_to_mdate([a, b]), facecolor=colour, edgecolor="none", zorder=0, gid=f"sky:{level or 'day'}")
    return sky_handles


def _airmass_axis(ax) -> None:
    """Right: airmass (Kasten & Young 1989) at the altitudes where it takes round values."""
    from matplotlib.ticker import FixedFormatter, FixedLocator

    right = ax.secondary_yaxis("right")
    right.yaxis.set_major_locator(FixedLocator(altitude_for_airmass(np.array(AIRMASS_TICKS))))
    right.yaxis.set_major_formatter(FixedFormatter([f"{a:.1f}" for a in AIRMASS_TICKS]))
    right.set_ylabel("airmass (Kasten & Young 1989)")


def _clock_axes(ax, t0, t1, zone) -> None:
    """Bottom: local clock (with any clock change marked); top: UTC."""
    from matplotlib.ticker import FixedFormatter, FixedLocator, NullFormatter

    step = 1 if (t1 - t0) * 24 <= 16 else 2
    major, labels, minor = clock_ticks(t0, t1, zone, step)
    ax.xaxis.set_major_locator(FixedLocator(jd_to_mdate(major)))
    ax.xaxis.set_major_formatter(FixedFormatter(labels))
    ax.xaxis.set_minor_locator(FixedLocator(jd_to_mdate(minor)))
    ax.xaxis.set_minor_formatter(NullFormatter())
    changes = offset_changes(t0, t1, zone)
    ax.set_xlabel(_clock_label(zone, t0, changes))
    for when, before, after in changes:
        _mark_clock_change(ax, when, before, after, zone)
    top = ax.secondary_xaxis("top")
    u_major, u_labels, u_minor = clock_ticks(t0, t1, "UTC", step)
    top.xaxis.set_major_locator(FixedLocator(jd_to_mdate(u_major)))
    top.xaxis.set_major_formatter(FixedFormatter(u_labels))
    top.xaxis.set_minor_locator(FixedLocator(jd_to_mdate(u_minor)))
    top.set_xlabel("UTC", labelpad=4)


def _night_keys(fig, run, i, target_handles, sky_handles, moon_label) -> None:
    """Title, keys, caption and the caution."""
    from matplotlib.lines import Line2D

    c, loc = run.constraints, run.site.location
    limit = c.altitude_limit_deg
    night = run.almanac.nights[i]
    fig.text(0.065, 0.965, f"{loc.name} · night of {night:%A} {night.day} {night:%B %Y}",
             fontsize=14, fontweight="bold", va="top")
    fig.text(0.065, 0.928, usable_text(run, i), fontsize=11, va="top")
    fig.legend(handles=target_handles, loc="upper left", bbox_to_anchor=(0.8, 0.84),
               frameon=False, fontsize=9.5, title="target · hours observable",
               title_fontsize=10, alignment="left", ncols=1 if len(target_handles) <= 24 else 2,
               handlelength=2.6)
    limit_handle = Line2D([], [], color="#343a40", linewidth=1.3, label=f"limit {limit:.1f}°")
    moon_handle = Line2D([], [], label=moon_label, **MOON_STYLE)
    fig.legend(handles=sky_handles + [moon_handle, limit_handle], loc="lower left",
               bbox_to_anchor=(0.058, 0.062), ncols=7, frameon=False, fontsize=9,
               handlelength=1.8, columnspacing=1.2)
    caption = (
        f"Thick: each target's longest observable stretch under the limits ({c.describe()}). "
        "Altitudes geometric (no refraction)."
    )
    if c.horizon_az_deg:
        caption += " The horizon mask depends on azimuth and is not drawn; the windows respect it."
    fig.text(0.065, 0.04, caption, fontsize=8.5, color="#343a40", va="bottom", wrap=True)
    caution_footer(fig, 0.065, 0.018)


def _draw_targets(ax, run, i, x, sky, avoid=()):
    """One curve per target, the window thick over it, a label at the top where it fits
    (clear of the other labels and of the texts in ``avoid``)."""
    from matplotlib.lines import Line2D

    vis = run.visibility
    # Colours go in the order of the windows (as in the printed table), so the
    # observable targets get the solid lines.
    order = np.argsort(np.nan_to_num(vis.window_start_jd[:, i], nan=np.inf), kind="stable")
    alt = np.asarray(sky.altitude_deg)
    jd = sky.jd_utc
    if not hasattr(ax.figure.canvas, "get_renderer"):  # labels are placed by their drawn size
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        FigureCanvasAgg(ax.figure)
    renderer = ax.figure.canvas.get_renderer()
    placed = [t.get_window_extent(renderer) for t in avoid]
    handles = []
    for rank, k in enumerate(order):
        style = _target_style(rank)
        name = run.targets[k].name
        hours = vis.observable_hours[k, i]
        line = ax.plot(x, alt[k], linewidth=1.3, zorder=4, gid=f"target:{name}", **style)[0]
        w_s, w_e = vis.window_start_jd[k, i], vis.window_end_jd[k, i]
        if hours > 0 and np.isfinite(w_s) and np.isfinite(w_e):
            inside = (jd > w_s) & (jd < w_e)
            seg_jd = np.concatenate([[w_s], jd[inside], [w_e]])
            seg_alt = np.interp(seg_jd, jd, alt[k])
            ax.plot(jd_to_mdate(seg_jd), seg_alt, linewidth=4.2, zorder=5, solid_capstyle="butt",
                    gid=f"window:{name}", **style)
            status = f"{hours:.1f} h"
        elif not np.isfinite(vis.dark_start_jd[i]):
            status = "no darkness"
        else:
            status = "below limit" if np.nanmax(alt[k]) > 0 else "not up"
        handles.append(Line2D([], [], linewidth=2.6, label=f"{name} · {status}", **style))
        peak = int(np.argmax(alt[k]))
        if alt[k, peak] >= 3.0:
            _label_peak(ax, renderer, placed, x[peak], alt[k, peak], name, line.get_color(),
                        peak == 0, peak == len(x) - 1)
    return handles


def _label_peak(ax, renderer, placed, x, y, name, colour, at_left, at_right):
    """Name at the curve's highest point; tried above, then below; left out if it would overlap."""
    ha = "left" if at_left else "right" if at_right else "center"
    dx = 3 if at_left else -3 if at_right else 0
    frame = ax.get_window_extent(renderer)
    tries = [("bottom", 5), ("top", -5)] if y < 84 else [("top", -5)]
    for va, dy in tries:
        text = ax.annotate(name, (x, y), xytext=(dx, dy), textcoords="offset points", ha=ha, va=va,
                           gid=f"label:{name}", fontsize=9, color=colour, fontweight="bold", zorder=6,
                           bbox=dict(boxstyle="round,pad=0.12", facecolor="white", alpha=0.75, linewidth=0))
        box = text.get_window_extent(renderer)
        inside = frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1
        box = box.expanded(1.04, 1.15)  # a little air between labels
        if inside and not any(box.overlaps(other) for other in placed):
            placed.append(box)
            return
        text.remove()


def _mark_sun_events(ax, alm, i, t0, t1, zone) -> None:
    """Small upright labels at the shade edges: what the Sun does there, local time."""
    events = [("sunset", alm.sunset_jd[i], -1), ("sunrise", alm.sunrise_jd[i], 1)]
    for name, level in TWILIGHT_ALTITUDE_DEG.items():
        events += [(f"{level:.0f}°", alm.evening_jd[name][i], -1), (f"{level:.0f}°", alm.morning_jd[name][i], 1)]
    for label, jd, morning in events:
        if not (np.isfinite(jd) and t0 < jd < t1):
            continue
        ax.annotate(f"{label} {local_hhmm(jd, zone)}", (jd_to_mdate(jd), 1.0), xytext=(-2 * morning, 0),
                    textcoords="offset points", rotation=90, ha="center", va="bottom",
                    fontsize=7.5, color="#3b4252", zorder=2,
                    bbox=dict(boxstyle="square,pad=0.1", facecolor="white", alpha=0.5, linewidth=0))


def _clock_label(zone: str, t0: float, changes) -> str:
    first = jd_to_datetime(t0).astimezone(ZoneInfo(zone)).utcoffset()
    if not changes:
        return f"local time, {zone} ({offset_text(first)})"
    steps = " → ".join([offset_text(first)] + [offset_text(after) for _, _, after in changes])
    return f"local time, {zone} ({steps}: the clocks change tonight)"


def _mark_clock_change(ax, when, before, after, zone) -> None:
    x = jd_to_mdate(when)
    ax.axvline(x, color="#862e2e", linewidth=1.0, linestyle=(0, (2, 2)), zorder=3)
    was = (jd_to_datetime(when) + before).strftime("%H:%M")
    now = jd_to_datetime(when).astimezone(ZoneInfo(zone)).strftime("%H:%M")
    shift = (after - before).total_seconds() / 3600
    direction = "back" if shift < 0 else "forward"
    ax.annotate(f"clocks go {direction} {abs(shift):g} h: {was} → {now}", (x, 89), xytext=(3, 0),
                textcoords="offset points", ha="left", va="top", fontsize=8.5, color="#862e2e", zorder=6,
                bbox=dict(boxstyle="round,pad=0.15", facecolor="white", alpha=0.8, linewidth=0))


def save_night_chart(run, curves, path) -> Path:
    """Write :func:`night_chart` to ``path`` (PNG or PDF, chosen by the suffix)."""
    return save_figure(night_chart(run, curves), path)
