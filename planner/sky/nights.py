"""Nights named by their local evening date, and conversions between UTC and local time.

The night of 2027-05-12 runs from local noon on the 12th to local noon on the
13th, in the site's IANA time zone (zoneinfo + tzdata), so a night that
crosses a daylight-saving change is 23 or 25 hours long — as the clocks say.
Times inside gcplan are Julian dates on the UTC scale (float64: better than
a microsecond over centuries).
"""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np

_UNIX_EPOCH_JD = 2440587.5

#: Nights gcplan can compute: astropy's built-in Sun and Moon (ERFA's epv00 and
#: moon98) are valid from 1900 to 2100.
FIRST_YEAR, LAST_YEAR = 1900, 2099


def night_out_of_range(night: dt.date) -> str | None:
    """Why a night cannot be computed, or None when it can."""
    if FIRST_YEAR <= night.year <= LAST_YEAR:
        return None
    return (f"{night} is outside {FIRST_YEAR}–{LAST_YEAR}, the years astropy's built-in Sun and Moon "
            "ephemeris covers")
_UTC = dt.timezone.utc


def datetime_to_jd(moment: dt.datetime) -> float:
    """Julian date (UTC) of an aware datetime (naive datetimes are taken as UTC)."""
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=_UTC)
    # timestamp() ignores leap seconds, exactly as UTC Julian dates do within a day.
    return moment.timestamp() / 86400.0 + _UNIX_EPOCH_JD


def jd_to_datetime(jd: float, zone: str | None = None) -> dt.datetime | None:
    """Aware datetime (UTC, or in ``zone``) rounded to the second; None for NaN."""
    if jd is None or not np.isfinite(jd):
        return None
    seconds = round((float(jd) - _UNIX_EPOCH_JD) * 86400.0)
    moment = dt.datetime.fromtimestamp(seconds, tz=_UTC)
    return moment.astimezone(ZoneInfo(zone)) if zone else moment


def iso_utc(jd: float) -> str | None:
    """ISO 8601 UTC with a Z, seconds precision; None for NaN (JSON null)."""
    moment = jd_to_datetime(jd)
    return None if moment is None else moment.strftime("%Y-%m-%dT%H:%M:%SZ")


def local_noon_jd(night: dt.date, zone: str) -> float:
    """JD (UTC) of 12:00 local clock time on ``night``."""
    local = dt.datetime.combine(night, dt.time(12, 0), tzinfo=ZoneInfo(zone))
    return datetime_to_jd(local)


def date_skipped(night: dt.date, zone: str) -> bool:
    """True when the local calendar of ``zone`` has no ``night`` at all (Pacific/Apia skipped
    2011-12-30 when it moved across the date line): its local midnights are one UTC moment."""
    z = ZoneInfo(zone)
    start = dt.datetime.combine(night, dt.time(0, 0), tzinfo=z).astimezone(_UTC)
    end = dt.datetime.combine(night + dt.timedelta(days=1), dt.time(0, 0), tzinfo=z).astimezone(_UTC)
    return end <= start


def night_spans_jd(nights: list[dt.date], zone: str) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (JD UTC) of each night: local noon to the next local noon."""
    start = np.array([local_noon_jd(n, zone) for n in nights])
    end = np.array([local_noon_jd(n + dt.timedelta(days=1), zone) for n in nights])
    return start, end


def local_hhmm(jd: float, zone: str) -> str:
    """'HH:MM' local clock time, '—' for an event that does not happen."""
    moment = jd_to_datetime(jd, zone)
    return "—" if moment is None else moment.strftime("%H:%M")


def utc_hhmm(jd: float) -> str:
    moment = jd_to_datetime(jd)
    return "—" if moment is None else moment.strftime("%H:%M")
