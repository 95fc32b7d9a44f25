"""The science levels of a cluster an exposure can aim at, by name.

Kept apart from :mod:`planner.light.photometry` (which computes them) so the
command line can offer the names without loading numpy.
"""

from __future__ import annotations

from planner.errors import InputError

LEVELS = ("tip", "hb", "turnoff")
LEVEL_NAMES = {"tip": "RGB tip", "hb": "horizontal branch", "turnoff": "main-sequence turnoff",
               "user": "given magnitude"}


class LevelError(InputError):
    """A science level that is unknown or needs a quantity the target lacks."""
