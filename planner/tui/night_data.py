"""One night of a campaign, computed by the same core functions as ``gcplan night``
and ``gcplan schedule --campaign``, for the app's screens.

Runs in the app's worker thread, never on the UI thread.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from planner.sky.night_summary import RunOfNights, run_of_nights


# eq=False: compared by identity, so the app's reactive sees each new night as new
# (comparing the numpy arrays inside would be ambiguous).
@dataclass(frozen=True, eq=False)
class NightData:
    """What the screens show for one night.

    ``plan`` is None when the night is not one of the campaign's; ``plan_note``
    then says why.
    """

    night: dt.date
    run: RunOfNights
    plan: object | None  # planner.scheduling.night.NightPlan
    plan_note: str = ""


def campaign_night_data(campaign, night: dt.date, seeing_arcsec: float | None = None, cache=None) -> NightData:
    """Almanac, target windows and (for a campaign night) the plan of ``night``; ``cache``: the
    campaign's nights kept for re-use (:mod:`planner.scheduling.plan_cache`)."""
    from planner.scheduling.campaign import plan_campaign_night

    run = run_of_nights(campaign.site, list(campaign.targets), [night], campaign.constraints)
    if night not in campaign.nights:
        note = (f"{night} is not a night of this campaign "
                f"({campaign.nights[0]} to {campaign.nights[-1]}): no plan")
        return NightData(night, run, None, note)
    plan, _requests = plan_campaign_night(campaign, night, seeing_arcsec, cache=cache)
    return NightData(night, run, plan)
