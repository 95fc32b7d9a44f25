"""The two figures: one night's altitudes, and observable hours over a run of nights.

:func:`night_chart` draws every target's altitude against local clock time over
the night's twilights, with the Moon, the altitude limit, an airmass scale and
each observable window, to be printed A4 landscape and pinned up.
:func:`observability_chart` is a heat map of observable hours, targets × nights,
under strips of the Moon's illuminated fraction and the length of the darkness.

Both draw on a :class:`matplotlib.figure.Figure` (no pyplot, no global rcParams)
and save through the Agg canvas.  Times are JD UTC inside, matplotlib date
numbers on the axes (a constant offset apart), and labelled with zoneinfo in
the site's zone, so a night across a daylight-saving change reads as the clocks do.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

from planner.cautions import SHORT_CAUTION as CAUTION
from planner.errors import OutputError
from planner.sky.airmass import altitude_for_airmass
from planner.sky.almanac import SUNRISE_ALTITUDE_DEG, TWILIGHT_ALTITUDE_DEG
from planner.sky.nights import datetime_to_jd, jd_to_datetime, local_hhmm, utc_hhmm

#: A4 landscape, inches.
A4_LANDSCAPE_IN = (11.69, 8.27)
#: Ten qualitative colours (our own choice): distinct in hue and dark enough to
#: read over the darkest sky shade; after ten, the line style changes.
TARGET_COLOURS = (
    "#1c4fa1", "#d9480f", "#2b8a3e", "#c2255c", "#5f3dc4",
    "#0b7285", "#9c6500", "#5c3b28", "#cc2fb8", "#15171a",
)
TARGET_LINESTYLES = ("-", (0, (6, 2)), (0, (1.5, 1.5)), (0, (6, 2, 1.5, 2)))
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
_SAVE_DPI = 150


# --- times on the axes -------------------------------------------------------


def jd_to_mdate(jd):
    """Matplotlib date numbers of JD UTC values (arrays too): a constant offset, no loop."""
    from matplotlib import dates as mdates

    ref = dt.datetime(2000, 1, 1, tzinfo=dt.timezone.utc)
    return mdates.date2num(ref) + (np.asarray(jd, dtype=float) - datetime_to_jd(ref))


def _quarter_hours(start_jd: float, end_jd: float) -> list[dt.datetime]:
    """The UTC quarter hours from ``start_jd`` to ``end_jd``: every zone's offset is a
    multiple of 15 minutes and its clocks change on one of them."""
    first = jd_to_datetime(start_jd).replace(second=0)
    first = first.replace(minute=first.minute - first.minute % 15)
    steps = (first + dt.timedelta(minutes=15 * k) for k in range(int((end_jd - start_jd) * 96) + 2))
    return [u for u in steps if start_jd <= datetime_to_jd(u) <= end_jd]  # ~100 ticks, not data


def clock_ticks(start_jd: float, end_jd: float, zone: str, step_h: int):
    """Major ticks (JD, labels) on the clock hours of ``zone`` that are multiples of
    ``step_h``, and minor ticks (JD) on the other hours and half hours."""
    tz = ZoneInfo(zone)
    major, labels, minor = [], [], []
    for utc in _quarter_hours(start_jd, end_jd):
        clock = utc.astimezone(tz)
        if clock.minute == 0 and clock.hour % step_h == 0:
            major.append(datetime_to_jd(utc))
            labels.append(f"{clock:%H:%M}")
        elif clock.minute in (0, 30):
            minor.append(datetime_to_jd(utc))
    return np.array(major), labels, np.array(minor)


def offset_changes(start_jd: float, end_jd: float, zone: str):
    """Clock changes (daylight saving) between two times: [(jd, old offset, new offset)]."""
    tz = ZoneInfo(zone)
    quarters = _quarter_hours(start_jd, end_jd)
    offsets = [u.astimezone(tz).utcoffset() for u in quarters]
    return [(datetime_to_jd(quarters[k]), offsets[k - 1], offsets[k])
            for k in range(1, len(quarters)) if offsets[k] != offsets[k - 1]]


def offset_text(offset: dt.timedelta) -> str:
    minutes = int(offset.total_seconds() // 60)
    sign = "+" if minutes >= 0 else "−"
    return f"UTC{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


# --- the night's figure ------------------------------------------------------


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
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch
    from matplotlib.ticker import FixedFormatter, FixedLocator, NullFormatter

    i = _night_index(run, curves)
    alm, vis, c = run.almanac, run.visibility, run.constraints
    loc = run.site.location
    zone = loc.timezone
    sky = curves.sky
    t0, t1 = curves.start_jd, curves.end_jd
    x = jd_to_mdate(sky.jd_utc)
    ax = fig.add_axes((0.065, 0.2, 0.68, 0.64))
    ax.set_xlim(jd_to_mdate(t0), jd_to_mdate(t1))
    ax.set_ylim(0.0, 90.0)

    # Sky: nested spans, each where the Sun is below a level (the almanac's times).
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

    # Right: airmass (Kasten & Young 1989) at the altitudes where it takes round values.
    right = ax.secondary_yaxis("right")
    right.yaxis.set_major_locator(FixedLocator(altitude_for_airmass(np.array(AIRMASS_TICKS))))
    right.yaxis.set_major_formatter(FixedFormatter([f"{a:.1f}" for a in AIRMASS_TICKS]))
    right.set_ylabel("airmass (Kasten & Young 1989)")

    # Bottom: local clock; top: UTC.
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

    # Title, keys, caption.
    night = alm.nights[i]
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
    fig.text(0.065, 0.018, CAUTION, fontsize=9, fontweight="bold", color="#862e2e", va="bottom")


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


# --- observable hours over a run of nights ----------------------------------


def observability_order(run) -> np.ndarray:
    """Targets top to bottom: by best night (as :func:`planner.night_summary.seasons` picks it), then RA.

    Targets never observable in the run go last, by RA.
    """
    from planner.sky.night_summary import seasons

    index = {night: k for k, night in enumerate(run.nights)}
    best = np.array([len(index) if s.best_night is None else index[s.best_night] for s in seasons(run)])
    ra = np.array([t.ra_deg for t in run.targets], dtype=float)
    return np.lexsort((ra, best))


def observability_chart(run, fig=None):
    """Observable hours per night (colour), targets × nights, with the Moon above.

    ``run`` is a :class:`~planner.night_summary.RunOfNights`; the figure is drawn
    into ``fig`` if given (else a new one, A4 landscape up to ~40 targets) and returned.
    """
    import matplotlib
    from matplotlib.figure import Figure

    # A4 landscape holds about 40 readable rows; beyond that the page grows.
    height = max(A4_LANDSCAPE_IN[1], 3.6 + 0.16 * len(run.targets))
    with matplotlib.rc_context({"font.size": 10}):
        if fig is None:
            fig = Figure(figsize=(A4_LANDSCAPE_IN[0], height))
        _draw_observability(fig, run)
    return fig


def _draw_observability(fig, run) -> None:
    from matplotlib import colormaps
    from matplotlib import dates as mdates
    from matplotlib.colors import LinearSegmentedColormap
    from matplotlib.ticker import MaxNLocator

    vis, alm, c = run.visibility, run.almanac, run.constraints
    nights = run.nights
    n = len(run.targets)
    order = observability_order(run)
    first = nights[0]
    day = np.array([(night - first).days for night in nights])
    n_days = int(day.max()) + 1
    # Cells on a daily grid from the first night to the last; nights not in
    # the run stay empty (NaN).  Cell d spans the date d .. d+1 (evening to morning).
    grid = np.full((n, n_days), np.nan)
    grid[:, day] = vis.observable_hours[order]
    moon = np.full((1, n_days), np.nan)
    moon[0, day] = alm.moon_illumination
    usable = np.full((1, n_days), np.nan)
    usable[0, day] = np.nan_to_num((vis.dark_end_jd - vis.dark_start_jd) * 24.0, nan=0.0)
    x_edges = mdates.date2num(dt.datetime.combine(first, dt.time())) + np.arange(n_days + 1)

    _, h_in = fig.get_size_inches()
    top_in, bottom_in, strip_in, gap_in = 1.35, 1.4, 0.26, 0.1
    left, width = 0.13, 0.66
    heat_h = 1 - (top_in + 2 * strip_in + gap_in + bottom_in) / h_in
    y_strips = (bottom_in + gap_in) / h_in + heat_h
    heat = fig.add_axes((left, bottom_in / h_in, width, heat_h))
    dark = fig.add_axes((left, y_strips, width, strip_in / h_in), sharex=heat)
    strip = fig.add_axes((left, y_strips + strip_in / h_in, width, strip_in / h_in), sharex=heat)
    totals = fig.add_axes((left + width + 0.015, bottom_in / h_in, 0.08, heat_h), sharey=heat)
    # The colour bar keeps a readable length on a tall page.
    cbar_h = min(heat_h, 5.5 / h_in)
    cbar_ax = fig.add_axes((left + width + 0.125, bottom_in / h_in + heat_h - cbar_h, 0.014, cbar_h))

    vmax = max(1.0, float(np.ceil(np.nanmax(usable, initial=0.0))))
    cmap = colormaps["viridis"].with_extremes(under="#eef0f3", bad="white")
    mesh = heat.pcolormesh(x_edges, np.arange(n + 1), grid, cmap=cmap, vmin=1 / 60, vmax=vmax,
                           shading="flat", gid="observable_hours")
    heat.set_ylim(n, 0)
    heat.set_yticks(np.arange(n) + 0.5)
    row_pt = heat_h * h_in * 72 / max(n, 1)
    heat.set_yticklabels([run.targets[k].name for k in order], fontsize=float(np.clip(row_pt * 0.72, 5, 10)))
    heat.tick_params(axis="y", length=0)
    _date_axis(heat, n_days)
    heat.grid(axis="x", which="major", color="white", linewidth=0.6, alpha=0.7)
    heat.set_xlabel("night (local evening date)")

    moon_cmap = LinearSegmentedColormap.from_list("moonlight", ["#1d2238", "#8d94a8", "#fbf6dc"])
    strip.pcolormesh(x_edges, [0, 1], moon, cmap=moon_cmap, vmin=0, vmax=1, shading="flat", gid="moon")
    _mark_moon_phases(strip, x_edges, moon[0])
    dark.pcolormesh(x_edges, [0, 1], usable, cmap=cmap, vmin=1 / 60, vmax=vmax, shading="flat", gid="usable_hours")
    for ax_, label in ((strip, "Moon lit"), (dark, f"{c.twilight[:5]}. dark h")):
        ax_.set_yticks([0.5])
        ax_.set_yticklabels([label], fontsize=9)
        ax_.tick_params(axis="y", length=0)
        ax_.tick_params(axis="x", which="both", labelbottom=False, length=0)

    total = vis.observable_hours[order].sum(axis=1)
    totals.barh(np.arange(n) + 0.5, total, height=0.7, color="#4c6a92", gid="total_hours")
    totals.set_xlabel("total h")
    totals.xaxis.set_major_locator(MaxNLocator(nbins=2, integer=True))
    totals.tick_params(axis="y", labelleft=False, length=0)
    totals.set_xlim(0, max(1.0, float(total.max(initial=0.0))) * 1.05)
    totals.grid(axis="x", color="#dee2e6", linewidth=0.6)
    totals.set_axisbelow(True)

    cbar = fig.colorbar(mesh, cax=cbar_ax, extend="min", extendfrac=0.04)
    cbar.set_label("observable hours in the night")

    loc = run.site.location
    fig.text(left, 1 - 0.3 / h_in, f"Observable hours per night · {loc.name}", fontsize=14,
             fontweight="bold", va="top")
    span = f"{nights[0]:%Y-%m-%d} to {nights[-1]:%Y-%m-%d}, {len(nights)} nights"
    fig.text(left, 1 - 0.62 / h_in, f"{span} · {c.twilight} darkness", fontsize=10.5, va="top")
    fig.text(left, 1 - 0.88 / h_in, f"limits: {c.describe()}", fontsize=10.5, va="top")
    caption = (
        "Grey: not observable that night. Rows in the order of each target's best night (then RA).\n"
        "Moon: illuminated fraction at the middle of each night (○ full, ● new). "
        f"Dark h: length of the night's {c.twilight} darkness, the most any target can get."
    )
    fig.text(left, 0.36 / h_in, caption, fontsize=8.5, color="#343a40", va="bottom", linespacing=1.4)
    fig.text(left, 0.13 / h_in, CAUTION, fontsize=9, fontweight="bold", color="#862e2e", va="bottom")


def _date_axis(ax, n_nights: int) -> None:
    """Month ticks (the year under January and the first) for long runs, days for short ones."""
    from matplotlib import dates as mdates
    from matplotlib.ticker import FuncFormatter

    if n_nights > 62:
        months = None if n_nights <= 800 else (1, 4, 7, 10)
        ax.xaxis.set_major_locator(mdates.MonthLocator(bymonth=months))
        ax.xaxis.set_minor_locator(mdates.DayLocator(bymonthday=(8, 15, 22)) if n_nights <= 400
                                   else mdates.MonthLocator())

        def month(x, pos):
            when = mdates.num2date(x)
            return f"{when:%b}\n{when:%Y}" if pos == 0 or when.month == 1 else f"{when:%b}"

        ax.xaxis.set_major_formatter(FuncFormatter(month))
    else:
        locator = mdates.AutoDateLocator(minticks=4, maxticks=12)
        ax.xaxis.set_major_locator(locator)
        ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))


def _mark_moon_phases(ax, x_edges, illum) -> None:
    """○ at full and ● at new Moon: the nights where the illuminated fraction peaks or bottoms."""
    f = np.nan_to_num(illum, nan=0.5)
    if f.size < 3:
        return
    mid = 0.5 * (x_edges[:-1] + x_edges[1:])
    inner = slice(1, -1)
    full = (f[inner] >= f[:-2]) & (f[inner] > f[2:]) & (f[inner] > 0.9)
    new = (f[inner] <= f[:-2]) & (f[inner] < f[2:]) & (f[inner] < 0.1)
    ax.plot(mid[inner][full], np.full(full.sum(), 0.5), "o", markerfacecolor="none",
            markeredgecolor="#1d2238", markersize=5, linestyle="none")
    ax.plot(mid[inner][new], np.full(new.sum(), 0.5), "o", markerfacecolor="#fbf6dc",
            markeredgecolor="#fbf6dc", markersize=4, linestyle="none")


def save_observability_chart(run, path) -> Path:
    """Write :func:`observability_chart` to ``path`` (PNG or PDF, chosen by the suffix)."""
    return save_figure(observability_chart(run), path)


def save_figure(fig, path) -> Path:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    p = Path(path)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in ("png", "pdf"):
        raise OutputError(f"chart file {str(p)!r} must end in .png or .pdf")
    FigureCanvasAgg(fig)
    fig.savefig(p, format=fmt, dpi=_SAVE_DPI, facecolor="white",
                metadata={"Creator": "gcplan"} if fmt == "pdf" else None)
    return p
