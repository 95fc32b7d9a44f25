"""One night of a campaign, computed by the same core functions as ``gcplan night``
and ``gcplan schedule --campaign``, for the app's screens; and which night the clock is in.

Runs in the app's worker threads, never on the UI thread.
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
    then says why.  ``places`` are the targets' apparent places over the night
    (:func:`planner.sky.sky_now.night_places`), for the sky at any moment.
    """

    night: dt.date
    run: RunOfNights
    places: object
    plan: object | None  # planner.scheduling.night_plan.NightPlan
    plan_note: str = ""
    planning: bool = False  # the sky is known, the plan is still being made


def night_sky_data(campaign, night: dt.date, store=None) -> NightData:
    """The night's almanac, windows and places without its plan (shown while it is made);
    ``store``: the Sun and Moon samples kept between runs (the same values either way)."""
    from planner.sky.nights import night_spans_jd
    from planner.sky.sky_now import night_places

    run = run_of_nights(campaign.site, list(campaign.targets), [night], campaign.constraints, store=store)
    s, e = night_spans_jd([night], campaign.site.location.timezone)
    planning = night in campaign.nights
    return NightData(night, run, night_places(run, float(s[0]), float(e[0])), None,
                     "planning the night…" if planning else "", planning)


def campaign_night_data(campaign, night: dt.date, seeing_arcsec: float | None = None,
                        sky: NightData | None = None, cache=None, store=None) -> NightData:
    """Almanac, target windows, places and (for a campaign night) the plan of ``night``
    (``sky``: the night's :func:`night_sky_data`, if made already; ``cache``: the
    campaign's nights kept for re-use, :mod:`planner.scheduling.plan_cache`)."""
    from planner.scheduling.campaign import plan_campaign_night

    sky = sky or night_sky_data(campaign, night, store)
    run, places = sky.run, sky.places
    if night not in campaign.nights:
        note = (f"{night} is not a night of this campaign "
                f"({campaign.nights[0]} to {campaign.nights[-1]}): no plan")
        return NightData(night, run, places, None, note)
    plan, _requests = plan_campaign_night(campaign, night, seeing_arcsec, cache=cache, store=store)
    return NightData(night, run, places, plan)


def night_for_moment(campaign, moment: dt.datetime) -> tuple[dt.date, str]:
    """The campaign night that holds ``moment`` (local noon to noon), else the next one, else
    the last; and a line saying so when it is not the night under way."""
    from planner.logbook.store import night_of_jd
    from planner.sky.nights import datetime_to_jd

    tonight = night_of_jd(datetime_to_jd(moment), campaign.site.location.timezone)
    nights = campaign.nights
    if tonight in nights:
        return tonight, ""
    later = [n for n in nights if n > tonight]
    if later:
        return later[0], f"the campaign has no night {tonight}: showing its next night, {later[0]}"
    return nights[-1], f"the campaign ended before {tonight}: showing its last night, {nights[-1]}"


def catalog_key():
    """Names compared as the catalog's aliases make them one cluster ("M 3" = "NGC 5272")."""
    from planner.inputs.catalog import load_catalog

    return load_catalog().key
