"""Campaign nights kept for re-use: each night's plan and the campaign's state after it.

A campaign night's plan depends on every night before it (the depth goals' visits
already planned, the phase bins already covered) and on the campaign as a whole
(the nights after it still share out the goals).  Without a cache, a re-plan of
night k plans nights 1…k again.  With one, each planned night is kept under a key
made of everything that shaped it — the campaign's whole content (site, targets,
variables, nights, constraints, goals, cadence, fill: the :class:`Campaign` read
from its file) and the seeing asked for — and re-used while that key is the same.

What shapes a night and is in the key: only the campaign and the seeing.  A
night's plan does not depend on the logbook: what was logged, the closures and
``--done`` act in the re-plan of the night they belong to
(:func:`planner.scheduling.replan.replan_night`), on top of the night's plan as
the campaign made it; the nights after it are planned from the campaign's plan of
the nights before them, as without a cache.  A change anywhere in the campaign
changes the key, so every night is planned again.

Each entry holds night k's plan and requests, the phase bins covered before it
(what a re-plan of night k values new phases against), the campaign's state
after it (goal visits planned so far, bins covered), so that night k + 1 is
planned from it without planning nights 1…k again, and the night's own Sun,
Moon and Earth-rotation samples (noon to noon, what a re-plan of the night
plans with; the same values it would make again from the Sun and Moon store
and the IERS table, which the file store's code stamp covers).

The cache is an explicit object passed in (the core keeps no state and reads no
file): anything with ``get(key, index) -> dict | None`` and ``put(key, index,
dict)``, entries being JSON-able dicts (:func:`encode`, :func:`decode`).
:class:`MemoryCache` keeps them in a process; a file-backed store lives in a shell
(:mod:`planner.cache.plans`).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import math

import numpy as np

from planner.model.constraints import Constraints
from planner.scheduling.night_plan import Gap, NightPlan, Unplanned
from planner.scheduling.visits import Exposure, Visit, VisitRequest
from planner.sky.ephemeris import Ephemeris

#: Changes whenever an entry's layout changes: entries of another format are not read.
FORMAT = 2
#: The data classes an entry may hold (nothing else is rebuilt from a stored entry).
_CLASSES = {c.__name__: c for c in (NightPlan, Gap, Unplanned, Visit, Exposure, VisitRequest, Constraints,
                                    Ephemeris)}


@dataclasses.dataclass(frozen=True)
class NightEntry:
    """Night k of a campaign as planned, and the campaign's state after it."""

    plan: NightPlan
    requests: tuple[VisitRequest, ...]
    covered_before: dict  # request key -> (stars, bins) phase bins covered before night k
    covered_after: dict  # the campaign's coverage after night k (cadence request keys)
    done_after: dict  # (goal index, target) -> goal visits planned up to night k
    ephemeris: Ephemeris | None = None  # the night's own samples (noon to noon); None: not kept


class MemoryCache:
    """Entries kept in this process (e.g. the app's, between night changes)."""

    def __init__(self):
        self._entries: dict = {}

    def get(self, key: str, index: int):
        return self._entries.get((key, index))

    def put(self, key: str, index: int, data: dict) -> None:
        self._entries[(key, index)] = data

    def __len__(self) -> int:
        return len(self._entries)


def campaign_key(campaign, seeing_arcsec: float | None) -> str:
    """A hash of everything that shapes the campaign's nights: its whole content and the
    seeing asked for (``None``, the campaign's own, is kept apart from the same value
    given: the checks of a goal's seeing limit differ)."""
    h = hashlib.sha256()
    h.update(f"format {FORMAT}\n".encode())
    _feed(h, campaign)
    h.update(repr(("seeing", None if seeing_arcsec is None else float(seeing_arcsec))).encode())
    return h.hexdigest()


def _feed(h, obj) -> None:
    """Every value of ``obj`` (data classes, containers, arrays) into the hash, canonically."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        h.update(f"<{type(obj).__name__}".encode())
        for f in dataclasses.fields(obj):
            h.update(f" {f.name}=".encode())
            _feed(h, getattr(obj, f.name))
        h.update(b">")
    elif isinstance(obj, (tuple, list)):
        h.update(f"[{len(obj)}".encode())
        for x in obj:
            _feed(h, x)
        h.update(b"]")
    elif hasattr(obj, "items"):  # dicts and mapping proxies, in a fixed order
        h.update(f"{{{len(obj)}".encode())
        for k in sorted(obj, key=repr):
            _feed(h, k)
            _feed(h, obj[k])
        h.update(b"}")
    elif isinstance(obj, np.ndarray):
        h.update(f"a{obj.dtype.str}{obj.shape}".encode())
        h.update(np.ascontiguousarray(obj).tobytes())
    else:  # numbers (repr is exact for floats), strings, dates, None
        h.update(f"{type(obj).__name__}:{obj!r};".encode())


def encode(entry: NightEntry) -> dict:
    """A JSON-able dict of ``entry`` (floats exact; NaN and infinities as JSON's extensions)."""
    return {"format": FORMAT, "plan": _enc(entry.plan), "requests": _enc(entry.requests),
            "covered_before": _enc(entry.covered_before), "covered_after": _enc(entry.covered_after),
            "done_after": [[i, name, n] for (i, name), n in sorted(entry.done_after.items(), key=repr)],
            "ephemeris": _enc(entry.ephemeris)}


def decode(data) -> NightEntry | None:
    """The entry of :func:`encode`; ``None`` for anything else (another format, damage)."""
    try:
        if not isinstance(data, dict) or data.get("format") != FORMAT:
            return None
        plan = _dec(data["plan"])
        requests = _dec(data["requests"])
        if not isinstance(plan, NightPlan) or not isinstance(requests, tuple):
            return None
        done = {(int(i), str(name)): int(n) for i, name, n in data["done_after"]}
        eph = _dec(data["ephemeris"])
        if eph is not None and not isinstance(eph, Ephemeris):
            return None
        return NightEntry(plan, requests, _dec(data["covered_before"]), _dec(data["covered_after"]), done, eph)
    except (KeyError, TypeError, ValueError, AttributeError):
        return None


def _enc(obj):
    if dataclasses.is_dataclass(obj) and type(obj).__name__ in _CLASSES:
        return {"@": type(obj).__name__, **{f.name: _enc(getattr(obj, f.name)) for f in dataclasses.fields(obj)}}
    if isinstance(obj, tuple):
        return {"t": [_enc(x) for x in obj]}
    if isinstance(obj, list):
        return [_enc(x) for x in obj]
    if isinstance(obj, dict):
        return {"d": [[_enc(k), _enc(v)] for k, v in obj.items()]}
    if isinstance(obj, np.ndarray):
        return {"a": obj.dtype.str, "shape": list(obj.shape), "v": obj.ravel().tolist()}
    if isinstance(obj, dt.date):
        return {"date": obj.isoformat()}
    if isinstance(obj, np.generic):
        return obj.item()
    if obj is None or isinstance(obj, (bool, int, float, str)):
        return obj
    raise TypeError(f"cannot keep a {type(obj).__name__} in a night's entry")


def _dec(obj):
    if isinstance(obj, list):
        return [_dec(x) for x in obj]
    if not isinstance(obj, dict):
        if isinstance(obj, float) and not math.isfinite(obj):
            return float(obj)
        return obj
    if "@" in obj:
        cls = _CLASSES[obj["@"]]
        return cls(**{k: _dec(v) for k, v in obj.items() if k != "@"})
    if "t" in obj:
        return tuple(_dec(x) for x in obj["t"])
    if "d" in obj:
        return {_dec(k): _dec(v) for k, v in obj["d"]}
    if "a" in obj:
        return np.array(obj["v"], dtype=np.dtype(obj["a"])).reshape(obj["shape"])
    if "date" in obj:
        return dt.date.fromisoformat(obj["date"])
    raise ValueError("not an entry's value")
