"""What makes a target observable: altitude or airmass, twilight, Moon, Sun, horizon.

Built from a site profile's limits, with any of them overridden (a command's
options, a campaign file's ``[constraints]``).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from planner.model.site import TWILIGHTS, SiteProfile
from planner.sky.airmass import altitude_for_airmass


@dataclass(frozen=True)
class Constraints:
    """What makes a target observable.  The altitude limit is the stricter of the two given."""

    min_altitude_deg: float
    max_airmass: float | None
    twilight: str
    min_moon_separation_deg: float
    horizon_az_deg: tuple[float, ...] = ()
    horizon_alt_deg: tuple[float, ...] = ()
    sun_avoidance_deg: float = 0.0  # never point closer than this to the Sun
    # Never above this altitude (zenith avoidance: an alt-az mount cannot follow
    # the azimuth near the zenith); None: no upper limit.
    max_altitude_deg: float | None = None

    def describe(self) -> str:
        """The limits in one phrase, as every text and figure of gcplan states them."""
        parts = [f"altitude ≥ {self.altitude_limit_deg:.1f}°"]
        if self.max_airmass is not None and np.isfinite(self.max_airmass):
            parts[0] += f" (airmass ≤ {self.max_airmass:.2f})"
        if self.max_altitude_deg is not None:
            parts[0] += f" and ≤ {self.max_altitude_deg:.1f}°"
        if self.min_moon_separation_deg > 0:
            parts.append(f"Moon ≥ {self.min_moon_separation_deg:.0f}° away")
        if self.sun_avoidance_deg > 0:
            parts.append(f"Sun ≥ {self.sun_avoidance_deg:.0f}° away")
        if self.horizon_az_deg:
            parts.append("horizon mask")
        return ", ".join(parts)

    @cached_property  # the airmass inverse is iterative: once per instance, not per use
    def altitude_limit_deg(self) -> float:
        if self.max_airmass is None:
            return float(self.min_altitude_deg)
        return float(max(self.min_altitude_deg, altitude_for_airmass(self.max_airmass)))


def constraints_for_site(
    site: SiteProfile,
    *,
    twilight: str | None = None,
    max_airmass: float | None = None,
    min_altitude_deg: float | None = None,
    min_moon_separation_deg: float | None = None,
    max_altitude_deg: float | None = None,
) -> Constraints:
    """The site's limits, with any of them overridden (from the command line)."""
    lim = site.limits
    if twilight is not None and twilight not in TWILIGHTS:
        raise ValueError(f"twilight must be one of {', '.join(TWILIGHTS)}")
    return Constraints(
        max_altitude_deg=lim.max_altitude_deg if max_altitude_deg is None else float(max_altitude_deg),
        min_altitude_deg=lim.min_altitude_deg if min_altitude_deg is None else float(min_altitude_deg),
        max_airmass=lim.max_airmass if max_airmass is None else float(max_airmass),
        twilight=lim.twilight if twilight is None else twilight,
        min_moon_separation_deg=(
            lim.min_moon_separation_deg if min_moon_separation_deg is None else float(min_moon_separation_deg)
        ),
        horizon_az_deg=tuple(lim.horizon_az_deg),
        horizon_alt_deg=tuple(lim.horizon_alt_deg),
        sun_avoidance_deg=lim.sun_avoidance_deg,
    )


#: Seeing FWHM the planner accepts, arcsec: below 0.1″ no site delivers it, above
#: 10″ no photometry is planned (bounds of the scheduling commands).
SEEING_RANGE_ARCSEC = (0.1, 10.0)


def seeing_problem(value: float | None) -> str | None:
    """What is wrong with a planned seeing FWHM (arcsec), or None (also for no value)."""
    lo, hi = SEEING_RANGE_ARCSEC
    if value is not None and not lo <= value <= hi:
        return f"must be a FWHM between {lo:g} and {hi:g} arcsec (got {value:g})"
    return None
