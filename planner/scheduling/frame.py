"""Former name of :mod:`planner.scheduling.night_sky`, kept while the command modules
still import :func:`night_frame` from here; new code imports from ``night_sky``."""

from planner.scheduling.night_sky import night_sky as night_frame
from planner.scheduling.night_sky import requests_for_targets, usable_windows_jd

__all__ = ["night_frame", "requests_for_targets", "usable_windows_jd"]
