"""The night's visits over the altitude curves (``gcplan schedule --plot``).

The night chart of :mod:`planner.reports.altitude_chart` (twilight shades, the Moon,
the altitude limit, an airmass scale, local clock time) for the planned
targets, with each visit drawn over its target's curve as a thick bar from
its first to its last minute and numbered (each number clear of the target
labels and of the other numbers), and the idle and closed gaps marked along
the bottom.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from planner.reports.altitude_chart import night_chart
from planner.reports.figure_common import A4_LANDSCAPE_IN, TARGET_COLOURS, jd_to_mdate, save_figure
from planner.scheduling.night_plan import FILL_SUFFIX


def schedule_chart(site, plan, fig=None, store=None):
    """Draw ``plan`` (a :class:`~planner.scheduling.night_plan.NightPlan`) on a figure and return it
    (``store``: the Sun and Moon samples kept between runs, as for ``run_of_nights``)."""
    from planner.model.target import Target
    from planner.sky.night_summary import night_curves, run_of_nights

    names = list(dict.fromkeys(v.target for v in plan.visits))
    pos = {v.target: (v.ra_deg, v.dec_deg) for v in plan.visits}
    targets = [Target(n, *pos[n]) for n in names] or [Target("zenith", 0.0, site.location.latitude_deg)]
    run = run_of_nights(site, targets, [plan.night], plan.constraints, store=store)
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
    numbers = []
    extra = 0
    for v in plan.visits:
        k = names.index(v.target)
        seg = np.linspace(v.start_jd, v.end_jd, 8)
        y = np.interp(seg, jd, alt[k])
        target_colour = TARGET_COLOURS[rank[k] % len(TARGET_COLOURS)]
        if v.request_key.endswith(FILL_SUFFIX):
            # Spare-time work: a thin bar, no number, so the goals' visits stay readable on a
            # full campaign night (the night sheet lists every visit with its id).
            extra += 1
            ax.plot(jd_to_mdate(seg), y, color="#111111", linewidth=2.5, solid_capstyle="butt", zorder=7,
                    alpha=0.55, gid=f"visit:{v.id}")
            continue
        colour = "#9a9a9a" if v.status == "missed" else "#111111"
        ax.plot(jd_to_mdate(seg), y, color=colour, linewidth=7.5, solid_capstyle="butt", zorder=7,
                gid=f"visit:{v.id}")
        ax.plot(jd_to_mdate(seg), y, color=target_colour, linewidth=4.5, solid_capstyle="butt", zorder=8)
        numbers.append((v.id, jd_to_mdate(0.5 * (v.start_jd + v.end_jd)), float(np.max(y))))
    _number_visits(ax, numbers)
    for g in plan.gaps:
        colour = "#c92a2a" if g.reason == "closed" else "#f08c00"
        ax.axvspan(*jd_to_mdate([g.start_jd, g.end_jd]), ymin=0.0, ymax=0.025, facecolor=colour,
                   edgecolor="none", zorder=9, gid=f"gap:{g.reason}")
    spare = f" ({extra} extra, thin bars, unnumbered)" if extra else ""
    ax.set_title(f"{len(plan.visits)} visits planned{spare} · efficiency {plan.efficiency * 100:.1f} % · "
                 f"idle {plan.idle_minutes:.0f} min (orange) · closed {plan.closed_minutes:.0f} min (red)",
                 fontsize=9, loc="left")
    return fig


#: Where a visit's number may go, as offsets (points) of its centre from the top of the
#: visit's bar: just above first, then below and to the sides; then ever further out
#: in 16 directions until a free place is found (:func:`_free_place`).
_NEAR_OFFSETS_PT = ((0, 8), (0, -8), (11, 0), (-11, 0))
_DIRECTIONS = [(np.cos(a), np.sin(a)) for a in np.radians(np.arange(90, 450, 22.5))]
_LEADER_FROM_PT = 10.0  # a number further than this from its bar gets a hairline to it


def _number_visits(ax, numbers) -> None:
    """Each visit's number near the top of its bar, clear of the target labels and of the
    other numbers, inside the axes; joined to its bar by a hairline (itself clear of the
    labels) when it had to move away.  Numbers are drawn after the night chart placed
    its labels, so those are known here by their drawn extents."""
    renderer = ax.figure.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    labels = [t.get_window_extent(renderer).expanded(1.04, 1.15) for t in ax.texts
              if str(t.get_gid() or "").startswith("label:")]
    taken = list(labels)
    px_per_pt = ax.figure.dpi / 72.0
    for visit_id, x, y in numbers:
        text = ax.annotate(visit_id.split("-")[-1], (x, y), xytext=(0, 8), textcoords="offset points",
                           ha="center", va="center", fontsize=6.5, zorder=9, gid=f"number:{visit_id}")
        size = text.get_window_extent(renderer).size
        anchor = ax.transData.transform((x, y))
        (dx, dy), box = _free_place(anchor, size, px_per_pt, frame, labels, taken)
        text.xyann = (dx, dy)
        taken.append(box.expanded(1.1, 1.1))
        if np.hypot(dx, dy) > _LEADER_FROM_PT:
            ax.annotate("", (x, y), xytext=(dx, dy), textcoords="offset points", zorder=9,
                        gid=f"leader:{visit_id}", arrowprops=dict(arrowstyle="-", linewidth=0.6, color="#111111",
                                                                  shrinkA=5, shrinkB=0))


def _free_place(anchor, size, px_per_pt, frame, labels, taken):
    """The first offset (points) from ``anchor`` (display pixels) where a box of ``size``
    (pixels) lies inside ``frame`` and overlaps nothing ``taken``, with the box there.
    A place far enough for a hairline is taken only if that line crosses no label
    (but one lying on the bar itself); if none is, the line may cross one.  Falls back
    to just above the bar only if the whole axes is full."""
    from matplotlib.transforms import Bbox

    w, h = size
    reach = np.hypot(frame.width, frame.height) / px_per_pt
    offsets = [*_NEAR_OFFSETS_PT,
               *((r * cx, r * cy) for r in np.arange(16.0, reach, 6.0) for cx, cy in _DIRECTIONS)]
    crossable = [b for b in labels if not b.contains(*anchor)]
    free = []
    for dx, dy in offsets:
        cx, cy = anchor[0] + dx * px_per_pt, anchor[1] + dy * px_per_pt
        box = Bbox.from_bounds(cx - w / 2, cy - h / 2, w, h)
        inside = frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1
        if not inside or any(box.overlaps(other) for other in taken):
            continue
        free.append(((float(dx), float(dy)), box))
        if np.hypot(dx, dy) <= _LEADER_FROM_PT:
            return free[-1]
        line = anchor + np.linspace(0.0, 1.0, 24)[:, None] * (cx - anchor[0], cy - anchor[1])
        if not any(b.contains(px, py) for b in crossable for px, py in line):
            return free[-1]
    if free:
        return free[0]
    dx, dy = _NEAR_OFFSETS_PT[0]
    cx, cy = anchor[0] + dx * px_per_pt, anchor[1] + dy * px_per_pt
    return (float(dx), float(dy)), Bbox.from_bounds(cx - w / 2, cy - h / 2, w, h)


def save_schedule_plot(site, plan, path, store=None) -> Path:
    return save_figure(schedule_chart(site, plan, store=store), path)
