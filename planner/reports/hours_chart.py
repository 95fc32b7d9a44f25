"""Observable hours over a run of nights: a heat map of targets × nights.

:func:`observability_chart` colours each target's observable hours per night,
under strips of the Moon's illuminated fraction and the length of the
darkness, with each target's total beside it.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np

from planner.reports.figure_common import A4_LANDSCAPE_IN, caution_footer, save_figure


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
    from matplotlib.colors import LinearSegmentedColormap

    vis, c = run.visibility, run.constraints
    n = len(run.targets)
    order = observability_order(run)
    grid, moon, usable, x_edges = _daily_cells(run, order)
    _, h_in = fig.get_size_inches()
    (heat, dark, strip, totals, cbar_ax), (left, heat_h) = _hours_axes(fig, h_in)

    vmax = max(1.0, float(np.ceil(np.nanmax(usable, initial=0.0))))
    cmap = colormaps["viridis"].with_extremes(under="#eef0f3", bad="white")
    mesh = heat.pcolormesh(x_edges, np.arange(n + 1), grid, cmap=cmap, vmin=1 / 60, vmax=vmax,
                           shading="flat", gid="observable_hours")
    heat.set_ylim(n, 0)
    heat.set_yticks(np.arange(n) + 0.5)
    row_pt = heat_h * h_in * 72 / max(n, 1)
    heat.set_yticklabels([run.targets[k].name for k in order], fontsize=float(np.clip(row_pt * 0.72, 5, 10)))
    heat.tick_params(axis="y", length=0)
    _date_axis(heat, grid.shape[1])
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
    _draw_totals(totals, vis.observable_hours[order].sum(axis=1))
    cbar = fig.colorbar(mesh, cax=cbar_ax, extend="min", extendfrac=0.04)
    cbar.set_label("observable hours in the night")
    _hours_texts(fig, run, left, h_in)


def _daily_cells(run, order):
    """Cells on a daily grid from the first night to the last; nights not in the run
    stay empty (NaN).  Cell d spans the date d .. d+1 (evening to morning).  Returns
    the hours (targets in ``order`` × days), the Moon's and the darkness's strips
    (1 × days) and the cells' edges as matplotlib dates."""
    from matplotlib import dates as mdates

    vis, alm, nights = run.visibility, run.almanac, run.nights
    first = nights[0]
    day = np.array([(night - first).days for night in nights])
    n_days = int(day.max()) + 1
    grid = np.full((len(run.targets), n_days), np.nan)
    grid[:, day] = vis.observable_hours[order]
    moon = np.full((1, n_days), np.nan)
    moon[0, day] = alm.moon_illumination
    usable = np.full((1, n_days), np.nan)
    usable[0, day] = np.nan_to_num((vis.dark_end_jd - vis.dark_start_jd) * 24.0, nan=0.0)
    x_edges = mdates.date2num(dt.datetime.combine(first, dt.time())) + np.arange(n_days + 1)
    return grid, moon, usable, x_edges


def _hours_axes(fig, h_in: float):
    """The heat map, the two strips above it, the totals beside it and the colour bar,
    laid out in inches so a tall page keeps the margins; and the heat map's left edge
    and height (figure fractions)."""
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
    return (heat, dark, strip, totals, cbar_ax), (left, heat_h)


def _draw_totals(totals, total) -> None:
    """Bars of each target's total observable hours over the run."""
    from matplotlib.ticker import MaxNLocator

    n = len(total)
    totals.barh(np.arange(n) + 0.5, total, height=0.7, color="#4c6a92", gid="total_hours")
    totals.set_xlabel("total h")
    totals.xaxis.set_major_locator(MaxNLocator(nbins=2, integer=True))
    totals.tick_params(axis="y", labelleft=False, length=0)
    totals.set_xlim(0, max(1.0, float(total.max(initial=0.0))) * 1.05)
    totals.grid(axis="x", color="#dee2e6", linewidth=0.6)
    totals.set_axisbelow(True)


def _hours_texts(fig, run, left: float, h_in: float) -> None:
    """Title, the run and its limits, the caption and the caution."""
    c, nights = run.constraints, run.nights
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
    caution_footer(fig, left, 0.13 / h_in)


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
