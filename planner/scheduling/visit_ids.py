"""Visit ids that say what a visit is, so they stay the same in every command.

A campaign visit's id is ``MMDD-TARGET-WHAT<n>``: the night (local evening
date), a short form of the target (``NGC 1851`` → ``N1851``, ``47 Tuc`` →
``47Tuc``), what the visit is for (``var`` for the variable-star cadence, else
the goal's level and filter: ``tipI``, ``hbV``, ``toV`` for a turnoff) and its
ordinal among that night's visits of the same kind, in time order —
``0105-N1851-var3``.  Nothing in it depends on the other visits of the night,
so ``gcplan campaign``, ``schedule --campaign``, ``--record``, ``replan`` and
the logbook give a visit the same id.  A re-plan numbers its new visits after
every ordinal already used that night (:func:`assign_ids` with ``used``), so
an id never names two visits.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import replace
from typing import Iterable, Sequence

#: Short forms of what a visit is for (other purposes keep their own name).
PURPOSE_CODES = {"variables": "var", "turnoff": "to"}
_PREFIXES = ((re.compile(r"^NGC\s*", re.I), "N"), (re.compile(r"^IC\s*", re.I), "I"))
_NOT_ALNUM = re.compile(r"[^0-9A-Za-z]+")


def target_code(name: str) -> str:
    """``NGC 1851`` → ``N1851``, ``IC 4499`` → ``I4499``, ``47 Tuc`` → ``47Tuc``, ``M 3`` → ``M3``."""
    text = name.strip()
    for pattern, short in _PREFIXES:
        if pattern.match(text):
            text = pattern.sub(short, text)
            break
    return _NOT_ALNUM.sub("", text) or "X"


def visit_code(visit, night: dt.date) -> str:
    """The id without its ordinal: ``0105-N1851-var``, ``0105-N104-tipI``."""
    what = PURPOSE_CODES.get(visit.purpose, _NOT_ALNUM.sub("", visit.purpose))
    if visit.purpose != "variables" and visit.exposures:
        what += _NOT_ALNUM.sub("", visit.exposures[0].filter)
    if what[-1:].isdigit():  # a filter named "g2": keep the ordinal apart ("tipg2-1")
        what += "-"
    return f"{night:%m%d}-{target_code(visit.target)}-{what}"


def _last_ordinal(code: str, ids: Sequence[str]) -> int:
    """The highest ordinal among ``ids`` of the form ``code<n>``."""
    return max((int(i[len(code):]) for i in ids if i.startswith(code) and i[len(code):].isdigit()), default=0)


def has_night_id(visit, night: dt.date) -> bool:
    """Whether the visit already carries an id of this night's form."""
    return visit.id.startswith(f"{night:%m%d}-") and visit.id.count("-") >= 2


def assign_ids(visits: Sequence, night: dt.date, used: Iterable[str] = ()) -> list:
    """The visits (kept in their order) with ids: those that have one keep it, the others
    are numbered in time order after every ordinal used that night (in ``used`` or kept)."""
    taken = list(used) + [v.id for v in visits if has_night_id(v, night)]
    last: dict[str, int] = {}
    new_ids: dict[int, str] = {}
    for n in sorted((n for n, v in enumerate(visits) if not has_night_id(v, night)),
                    key=lambda n: (visits[n].start_jd, n)):
        code = visit_code(visits[n], night)
        last[code] = (last[code] if code in last else _last_ordinal(code, taken)) + 1
        new_ids[n] = f"{code}{last[code]}"
    return [replace(v, id=new_ids[n]) if n in new_ids else v for n, v in enumerate(visits)]


def same_visit_id(given: str, visit_id: str) -> bool:
    """An id as an observer types it: the whole id or without the night, any case
    (``N1851-var3`` for ``0105-N1851-var3``)."""
    g, v = given.strip().casefold(), visit_id.casefold()
    return g == v or (v.count("-") >= 2 and g == v.split("-", 1)[1])
