"""One night's plan as data: its visits in time order, the gaps between them, what did not fit.

Made by :func:`planner.scheduling.night.plan_night`; read by the campaign, the
re-planner, the validator and every writer of a plan.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from planner.model.constraints import Constraints
from planner.scheduling.visits import Visit

#: Request keys of a campaign's spare-time work end so (:mod:`planner.scheduling.campaign`);
#: kept here so that writers of a plan need not load the campaign planner.
FILL_SUFFIX = "/fill"


@dataclass(frozen=True)
class Gap:
    start_jd: float
    end_jd: float
    reason: str  # "closed" (weather), "nothing observable" (nothing still wanted holds its
    # constraints there) or "goals met" (targets up, nothing more wanted of them)

    @property
    def minutes(self) -> float:
        return (self.end_jd - self.start_jd) * 1440.0


@dataclass(frozen=True)
class Unplanned:
    key: str
    target: str
    purpose: str
    wanted: int
    planned: int
    reason: str


@dataclass(frozen=True)
class NightPlan:
    """The plan of one night: visits in time order, the gaps between them, what did not fit."""

    night: dt.date
    constraints: Constraints
    window_start_jd: float  # the usable window (the Sun below the twilight's altitude)
    window_end_jd: float
    visits: tuple[Visit, ...]
    gaps: tuple[Gap, ...]
    unplanned: tuple[Unplanned, ...]
    closed: tuple[tuple[float, float], ...]
    seeing_arcsec: float
    moon_illumination: float
    value: float
    method: str
    warnings: tuple[str, ...] = field(default_factory=tuple)
    bound_value: float = float("nan")  # upper bound on ``value`` over every plan (planner.scheduling.bound)
    bound_method: str = ""
    # Value of a campaign's spare-time work placed around the goals' visits after the
    # goals were planned (second pass): not in ``value``, which the bound is for.
    spare_value: float = 0.0

    @property
    def gap_fraction(self) -> float:
        """Share of the bound the plan does not reach (nan without a bound)."""
        if not np.isfinite(self.bound_value):
            return float("nan")
        if self.bound_value <= 0:
            return 0.0
        return max(0.0, 1.0 - self.value / self.bound_value)

    @property
    def mean_airmass(self) -> float:
        """Shutter-weighted mean airmass of the visits (at their middles); nan with none."""
        w = np.array([v.shutter_s for v in self.visits])
        x = np.array([v.airmass_mid for v in self.visits])
        good = np.isfinite(x) & (w > 0)
        return float(np.sum(w[good] * x[good]) / np.sum(w[good])) if good.any() else float("nan")

    @property
    def window_minutes(self) -> float:
        if not np.isfinite(self.window_start_jd):
            return 0.0
        return (self.window_end_jd - self.window_start_jd) * 1440.0

    @property
    def idle_minutes(self) -> float:
        return float(sum(g.minutes for g in self.gaps if g.reason != "closed"))

    @property
    def closed_minutes(self) -> float:
        return float(sum(g.minutes for g in self.gaps if g.reason == "closed"))

    @property
    def shutter_s(self) -> float:
        return float(sum(v.shutter_s for v in self.visits))

    @property
    def efficiency(self) -> float:
        """Shutter-open time over the usable window."""
        w = self.window_minutes * 60.0
        return self.shutter_s / w if w > 0 else 0.0
