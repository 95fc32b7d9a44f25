"""The exposure figure: units written as the other figures write them, and the caution
at its foot, clear of the axes and their labels."""

from __future__ import annotations

import numpy as np

from planner.cautions import SHORT_CAUTION
from planner.reports.exposure_plot import plot_snr_against_exposure


def test_the_caution_sits_below_the_axes_and_units_are_in_parentheses():
    t = np.geomspace(0.1, 300.0, 50)
    ax = plot_snr_against_exposure(t, 10.0 * np.sqrt(t), snr_goal=100.0, saturation_s=60.0, frame_s=20.0,
                                   frames=3)
    fig = ax.figure
    assert ax.get_xlabel() == "frame time (s)"
    cautions = [t for t in fig.texts if t.get_text() == SHORT_CAUTION]
    assert len(cautions) == 1
    renderer = fig.canvas.get_renderer()
    fig.draw_without_rendering()  # constrained layout places the axes at draw time
    caution = cautions[0].get_window_extent(renderer)
    axes = ax.get_tightbbox(renderer)  # with tick labels and the axis labels
    assert caution.y1 <= axes.y0, "the caution overlaps the axes or the frame-time label"
    assert 0 <= caution.x0 and caution.x1 <= fig.bbox.width
