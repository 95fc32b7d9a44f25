"""The app's clock: passed in, so tests can freeze it and an observer can rehearse a night.

A clock is a function returning an aware datetime.  Nothing in a widget reads it:
the app reads it on each tick and hands the moment to the screens.
"""

from __future__ import annotations

import datetime as dt
import time
from typing import Callable

#: A clock returns an aware datetime.
Clock = Callable[[], dt.datetime]


def _aware(moment: dt.datetime) -> dt.datetime:
    return moment.replace(tzinfo=dt.timezone.utc) if moment.tzinfo is None else moment


def system_clock() -> dt.datetime:
    """The computer's clock, UTC."""
    return dt.datetime.now(dt.timezone.utc)


def frozen_clock(moment: dt.datetime) -> Clock:
    """A clock stopped at ``moment`` (naive means UTC): for tests."""
    moment = _aware(moment)
    return lambda: moment


def rehearsal_clock(start: dt.datetime, elapsed: Callable[[], float] = time.monotonic) -> Clock:
    """A clock that reads ``start`` when made and then runs in real time (``--now``): a
    rehearsal of a night at any date.  ``elapsed`` is a seconds counter (monotonic: a
    change of the computer's clock does not jump the rehearsal)."""
    start, t0 = _aware(start), elapsed()
    return lambda: start + dt.timedelta(seconds=elapsed() - t0)
