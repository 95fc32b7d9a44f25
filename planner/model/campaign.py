"""A campaign as the scheduler sees it: site, targets, variables, nights, goals.

Built by :mod:`planner.inputs.campaign_file` from a campaign TOML file (whose
docstring holds the schema).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from planner.model.constraints import Constraints
from planner.model.site import SiteProfile

#: What a campaign does with the time its goals leave: more cadence epochs and
#: depth frames (the default), only one of them, or nothing (left idle).
FILL_MODES = ("cadence-and-depth", "cadence", "depth", "none")


@dataclass(frozen=True)
class DepthGoal:
    level: str  # tip | hb | turnoff
    filter: str
    snr: float
    targets: tuple[str, ...]
    visits: int = 1
    max_airmass: float | None = None
    dark: bool = False
    max_seeing_arcsec: float | None = None
    # Where the goal's stars lie, from the cluster's centre: the cluster's unresolved light
    # there is added to the sky (planner.light.cluster_light); None: not counted.
    field_radius_arcmin: float | None = None
    priority: float = 1.0  # a weight on the target's own priority


@dataclass(frozen=True)
class CadenceGoal:
    filter: str
    snr: float | None
    exposure_s: float | None
    visits_per_night: int
    phase_bins: int = 20
    min_spacing_min: float = 30.0
    priority: float = 1.0  # a weight on the target's own priority


@dataclass(frozen=True)
class Campaign:
    name: str
    source: str
    site: SiteProfile
    targets: tuple
    variables: tuple
    nights: tuple[dt.date, ...]
    constraints: Constraints
    goals: tuple[DepthGoal, ...]
    cadence: CadenceGoal | None
    seeing_arcsec: float | None = None
    invented: bool = False
    max_frame_s: float | None = None  # longest single frame of the depth goals (cosmic rays, guiding)
    fill: str = FILL_MODES[0]  # one of FILL_MODES: the work that takes the time the goals leave
