"""The two figures of the sky: one night's altitudes, and observable hours over a run of nights.

The entry points the commands use, gathered in one place: the night chart lives
in :mod:`planner.reports.altitude_chart`, the heat map of observable hours in
:mod:`planner.reports.hours_chart`, and what they share (page size, colours,
clock ticks, saving, the caution) in :mod:`planner.reports.figure_common`.
"""

from __future__ import annotations

from planner.cautions import SHORT_CAUTION as CAUTION
from planner.reports.altitude_chart import night_chart, save_night_chart
from planner.reports.hours_chart import observability_chart, save_observability_chart

__all__ = ["CAUTION", "night_chart", "observability_chart", "save_night_chart", "save_observability_chart"]
