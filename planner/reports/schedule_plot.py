"""The night's visits over the altitude curves (``gcplan schedule --plot``).

The night chart of :mod:`planner.reports.altitude_chart` (twilight shades, the Moon,
the altitude limit, an airmass scale, local clock time) for the planned
targets, with each visit drawn over its target's curve as a thick bar from
its first to its last minute and numbered, and the idle and closed gaps
marked along the bottom.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from planner.reports.altitude_chart import night_chart
from planner.reports.figure_common import A4_LANDSCAPE_IN, TARGET_COLOURS, jd_to_mdate, save_figure


def schedule_chart(site, plan, fig=None):
    """Draw ``plan`` (a :class:`~planner.scheduling.night_plan.NightPlan`) on a figure and return it."""
    from planner.model.target import Target
    from planner.sky.night_summary import night_curves, run_of_nights

    names = list(dict.fromkeys(v.target for v in plan.visits))
    pos = {v.target: (v.ra_deg, v.dec_deg) for v in plan.visits}
    targets = [Target(n, *pos[n]) for n in names] or [Target("zenith", 0.0, site.location.latitude_deg)]
    run = run_of_nights(site, targets, [plan.night], plan.constraints)
    curves = night_curves(run)
    if fig is None:
        from matplotlib.figure import Figure

        fig = Figure(figsize=A4_LANDSCAPE_IN)
    night_chart(run, curves, fig)
    ax = fig.axes[0]
    jd = curves.sky.jd_utc
    alt = np.asarray(curves.sky.altitude_deg)
    # The chart colours targets in the order of their windows; use the same colour per target.
    order = np.argsort(np.nan_to_num(run.visibility.window_start_jd[:, 0], nan=np.inf), kind="stable")
    rank = {int(k): r for r, k in enumerate(order)}
    for v in plan.visits:
        k = names.index(v.target)
        seg = np.linspace(v.start_jd, v.end_jd, 8)
        y = np.interp(seg, jd, alt[k])
        colour = "#9a9a9a" if v.status == "missed" else "#111111"
        ax.plot(jd_to_mdate(seg), y, color=colour, linewidth=7.5, solid_capstyle="butt", zorder=7,
                gid=f"visit:{v.id}")
        ax.plot(jd_to_mdate(seg), y, color=TARGET_COLOURS[rank[k] % len(TARGET_COLOURS)], linewidth=4.5,
                solid_capstyle="butt", zorder=8)
        ax.annotate(v.id.split("-")[-1], (jd_to_mdate(0.5 * (v.start_jd + v.end_jd)), float(np.max(y))),
                    xytext=(0, 6), textcoords="offset points", ha="center", fontsize=6.5, zorder=9)
    for g in plan.gaps:
        colour = "#c92a2a" if g.reason == "closed" else "#f08c00"
        ax.axvspan(*jd_to_mdate([g.start_jd, g.end_jd]), ymin=0.0, ymax=0.025, facecolor=colour,
                   edgecolor="none", zorder=9, gid=f"gap:{g.reason}")
    ax.set_title(f"{len(plan.visits)} visits planned · efficiency {plan.efficiency * 100:.1f} % · "
                 f"idle {plan.idle_minutes:.0f} min (orange) · closed {plan.closed_minutes:.0f} min (red)",
                 fontsize=9, loc="left")
    return fig


def save_schedule_plot(site, plan, path) -> Path:
    return save_figure(schedule_chart(site, plan), path)
