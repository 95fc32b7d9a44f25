"""What a time request's numbers rest on: the catalogs and calibrations, cited.

The fixed part (:data:`BASE_SOURCES`) is what every number of the exposure and sky
cores uses; the calibration of each science level a campaign's goals use is added as
the photometry core words it.  Pure computation.
"""

from __future__ import annotations

import re

#: What every request rests on, beside the calibrations of the levels it uses.
BASE_SOURCES = (
    "Harris 1996, AJ 112, 1487 (2010 edition): positions, E(B−V), [Fe/H], V_HB",
    "Baumgardt & Vasiliev 2021, MNRAS 505, 5957: distances",
    "Cardelli, Clayton & Mathis 1989, ApJ 345, 245: extinction law",
    "Bessell, Castelli & Plez 1998, A&A 333, 231: zero points",
    "Krisciunas & Schaefer 1991, PASP 103, 1033: moonlit sky",
    "Kasten & Young 1989, Appl. Opt. 28, 4735: airmass",
    "Howell 2006, Handbook of CCD Astronomy; Merline & Howell 1995: CCD equation",
    "Trujillo et al. 2001, MNRAS 328, 977: Moffat PSF β",
)
RECOVERY_SOURCES = (
    "Zechmeister & Kürster 2009, A&A 496, 577; VanderPlas & Ivezić 2015, ApJ 812, 18: Lomb–Scargle",
)


def proposal_sources(campaign, targets) -> tuple:
    """The catalogs and calibrations the request's numbers rest on."""
    from planner.light.photometry import LevelError, science_level

    out = list(BASE_SOURCES)
    for t in campaign.targets:
        for g in campaign.goals:
            if t.name in g.targets:
                try:
                    cal = science_level(t, g.level, campaign.site.filters[g.filter].band).calibration
                except LevelError:
                    continue
                text = f"{g.level} level: {cal}"
                if "observed V_HB" in cal:
                    text = f"{g.level} level: " + re.sub(r"observed V_HB = [0-9.]+ ", "observed V_HB ", cal)
                if text not in out:
                    out.append(text)
    if any(t.recovery for t in targets):
        out.extend(RECOVERY_SOURCES)
    return tuple(out)
