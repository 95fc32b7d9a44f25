"""The app's clock: passed in, so tests (and a rehearsal of a night) can freeze it."""

from __future__ import annotations

import datetime as dt
from typing import Callable

#: A clock returns an aware datetime.
Clock = Callable[[], dt.datetime]


def system_clock() -> dt.datetime:
    """The computer's clock, UTC."""
    return dt.datetime.now(dt.timezone.utc)


def frozen_clock(moment: dt.datetime) -> Clock:
    """A clock stopped at ``moment`` (naive means UTC)."""
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=dt.timezone.utc)
    return lambda: moment
