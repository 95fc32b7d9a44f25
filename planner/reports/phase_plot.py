"""Phase-coverage strips: one row per variable star, sorted by period (matplotlib).

matplotlib is imported inside the function and no global settings are touched: the
figure is a plain ``matplotlib.figure.Figure`` (drawn with the Agg canvas when saved).
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from planner.reports.figure_common import caution_footer
from planner.variables.phases import (
    RRAB_MINIMUM_LIGHT,
    RRAB_RISING_BRANCH,
    RRC_MINIMUM_LIGHT,
)


#: Strips drawn at most: one is 0.28 in high, so 200 make a figure 58 in tall already;
#: beyond that a figure is unreadable and takes minutes (100,000 stars ran past 5 min).
MAX_STRIPS = 200


def strips_to_draw(phases: np.ndarray, n_bins: int, limit: int = MAX_STRIPS) -> np.ndarray:
    """Indices of the stars drawn: all, or the ``limit`` with the fewest phase bins covered
    (the stars that need observing most), in their original order."""
    phases = np.atleast_2d(np.asarray(phases, dtype=float))
    n = phases.shape[0]
    if n <= limit:
        return np.arange(n)
    bins = np.where(np.isfinite(phases), np.floor(np.nan_to_num(phases) * n_bins) % n_bins, -1).astype(int)
    covered = np.zeros((n, n_bins), dtype=bool)
    rows, cols = np.nonzero(bins >= 0)
    covered[rows, bins[rows, cols]] = True
    return np.sort(np.argsort(covered.sum(axis=1), kind="stable")[:limit])


def phase_coverage_axes(
    star_ids: Sequence[str],
    period_d: Sequence[float],
    phases: np.ndarray,
    types: Sequence[str | None] | None = None,
    n_bins: int = 20,
    ax=None,
):
    """Draw each star's observed phases as ticks on a strip from 0 to 1.

    Parameters
    ----------
    star_ids, period_d : sequences, length n_stars
    phases : ndarray, shape (n_stars, n_times); NaN = not observed
    types : star types (shade the rising branch for RRab, minimum light per type)
    n_bins : phase bins drawn as faint vertical lines
    ax : matplotlib Axes, optional; a new Figure is made when omitted, with the
        caution footer every gcplan figure carries.

    Returns
    -------
    matplotlib.axes.Axes
    """
    from matplotlib.figure import Figure

    phases = np.atleast_2d(np.asarray(phases, dtype=float))
    total = phases.shape[0]
    types = list(types) if types is not None else [None] * total
    keep = strips_to_draw(phases, n_bins)
    if len(keep) < total:
        phases, types = phases[keep], [types[i] for i in keep]
        star_ids, period_d = [star_ids[i] for i in keep], [period_d[i] for i in keep]
    n = phases.shape[0]
    order = np.argsort(np.asarray(period_d, dtype=float), kind="stable")
    if ax is None:
        height_in = 1.5 + 0.28 * max(n, 1)
        fig = Figure(figsize=(8.0, height_in), layout="constrained")
        # Keep a strip 0.3 in high at the bottom for the caution, outside the layout.
        footer = 0.3 / height_in
        fig.get_layout_engine().set(rect=(0.0, footer, 1.0, 1.0 - footer))
        caution_footer(fig, 0.01, 0.1 * footer, fontsize=8)
        ax = fig.add_subplot()
    for edge in np.arange(1, n_bins) / n_bins:
        ax.axvline(edge, color="0.9", linewidth=0.5, zorder=0)
    for row, i in enumerate(order):
        y = n - 1 - row  # shortest period at the top
        overtone = types[i] in ("RRc", "RRd")
        lo, hi = RRC_MINIMUM_LIGHT if overtone else RRAB_MINIMUM_LIGHT
        ax.fill_between([lo, hi], y - 0.4, y + 0.4, color="tab:blue", alpha=0.12, linewidth=0)
        if not overtone:
            ax.fill_between(list(RRAB_RISING_BRANCH), y - 0.4, y + 0.4, color="tab:red",
                            alpha=0.12, linewidth=0)
        seen = phases[i][np.isfinite(phases[i])]
        ax.plot(seen, np.full(seen.shape, y), linestyle="none", marker="|", markersize=9,
                color="black")
    ax.set_yticks(np.arange(n))
    ax.set_yticklabels(
        [f"{star_ids[i]}  {period_d[i]:.4f} d" for i in order[::-1]], fontsize=7
    )
    ax.set_xlim(0.0, 1.0)
    ax.set_ylim(-0.7, n - 0.3)
    ax.set_xlabel("phase (0 = maximum light)")
    drawn = "" if n == total else f"\n{n} of {total} stars drawn: those with the fewest phase bins covered"
    ax.set_title(
        "Phase coverage per star, shortest period at the top "
        f"(red: RRab rising branch, blue: minimum light){drawn}",
        fontsize=9,
    )
    return ax
