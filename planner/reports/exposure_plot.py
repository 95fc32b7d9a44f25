"""S/N against exposure time, with the saturation limit marked (matplotlib, shell code).

The figure is built on a :class:`matplotlib.figure.Figure` with the Agg canvas: no
pyplot state and no rcParams are touched, so it is safe inside other programs.  A
figure made here carries the caution at its foot, as every gcplan figure does.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from planner.reports.figure_common import caution_footer

#: Room kept at the foot of the figure for the caution (fraction of its height).
_FOOTER_FRACTION = 0.06


def plot_snr_against_exposure(times_s, snr_one_frame, *, snr_goal: float, saturation_s: float | None = None,
                              frame_s: float | None = None, frames: int = 1, min_exposure_s: float | None = None,
                              title: str | None = None, ax=None):
    """Draw S/N of one frame (and of ``frames`` stacked frames) against frame time.

    Parameters
    ----------
    times_s, snr_one_frame : array_like
        Frame times (s) and the S/N of one frame of each length.
    snr_goal : float
        The S/N wanted (a horizontal line).
    saturation_s : float, optional
        Frame time at which the brightest star reaches the linearity limit; longer
        frames are shaded.
    frame_s, frames : float, int
        The chosen frame time and number of frames (a marker, and the stacked curve).
    ax : matplotlib Axes, optional
        Where to draw; a new figure (Agg canvas, the caution at its foot) is made if
        not given.

    Returns
    -------
    matplotlib.axes.Axes
    """
    if ax is None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        fig = Figure(figsize=(7.0, 4.5), layout="constrained")
        fig.get_layout_engine().set(rect=(0.0, _FOOTER_FRACTION, 1.0, 1.0 - _FOOTER_FRACTION))
        FigureCanvasAgg(fig)
        ax = fig.add_subplot()
        caution_footer(fig, 0.015, 0.015, fontsize=8)
    t = np.asarray(times_s, dtype=float)
    snr = np.asarray(snr_one_frame, dtype=float)
    ax.plot(t, snr, color="tab:blue", label="one frame")
    if frames > 1:
        ax.plot(t, np.sqrt(frames) * snr, color="tab:green", ls="--", label=f"{frames} frames stacked")
    ax.axhline(snr_goal, color="0.3", lw=1.0, ls=":", label=f"goal S/N {snr_goal:g}")
    if saturation_s is not None and np.isfinite(saturation_s):
        ax.axvline(saturation_s, color="tab:red", lw=1.5, label=f"saturation {saturation_s:.3g} s")
        ax.axvspan(saturation_s, max(t.max(), saturation_s) * 10, color="tab:red", alpha=0.08)
    if min_exposure_s:
        ax.axvspan(t.min() / 10, min_exposure_s, color="0.5", alpha=0.12, label="below shortest exposure")
    if frame_s is not None:
        reached = np.sqrt(frames) * np.interp(np.log(frame_s), np.log(t), snr)
        ax.plot([frame_s], [reached], "o", color="black", ms=6,
                label=f"chosen: {frames} × {frame_s:g} s")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlim(t.min(), t.max())
    ax.set_xlabel("frame time (s)")
    ax.set_ylabel("S/N")
    if title:
        ax.set_title(title, fontsize="medium")
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize="small", loc="upper left")
    return ax


def save_snr_plot(path: str | Path, times_s, snr_one_frame, **options) -> Path:
    """:func:`plot_snr_against_exposure` on a new figure, written to ``path`` (PNG/PDF/SVG)."""
    ax = plot_snr_against_exposure(times_s, snr_one_frame, **options)
    path = Path(path)
    buffer = io.BytesIO()  # drawn in memory, then written (see figure_common.save_figure)
    ax.figure.savefig(buffer, dpi=150, format=path.suffix.lstrip(".").lower() or "png")
    path.write_bytes(buffer.getvalue())
    return path
