"""What a re-plan changes against the plan it replaces, from a moment on.

A re-plan gives the visits it places new ids (:mod:`planner.scheduling.visit_ids`),
so visits are paired by what they are for — the request they serve
(``request_key``, the frames a partial visit owes counting as their visit's
request) — in time order: a pair whose start moved by more than
:data:`MOVED_MIN` is *moved*; an old visit left without a partner is
*dropped*, a new one *added*.  Past visits whose status the re-plan changed
(a visit missed in a closure, a partial one) are listed apart.
"""

from __future__ import annotations

from dataclasses import dataclass

#: A visit whose start moved less than this (minutes) is the same visit kept.
MOVED_MIN = 1.0


@dataclass(frozen=True)
class PlanChange:
    kind: str  # "moved" | "dropped" | "added" | "kept"
    old: object | None  # the Visit of the current plan
    new: object | None  # the Visit of the re-plan

    @property
    def shift_min(self) -> float:
        if self.old is None or self.new is None:
            return 0.0
        return (self.new.start_jd - self.old.start_jd) * 1440.0


@dataclass(frozen=True)
class PlanDiff:
    changes: tuple[PlanChange, ...]  # in time order (the new start, else the old)
    past: tuple  # visits before now whose status the re-plan gives: (id, status)

    def of(self, kind: str) -> list[PlanChange]:
        return [c for c in self.changes if c.kind == kind]

    def counts(self) -> dict[str, int]:
        return {k: len(self.of(k)) for k in ("moved", "dropped", "added", "kept")}


def _purpose_key(v) -> str:
    key = v.request_key
    return key.split(" owed by ", 1)[0] if key else f"{v.target}/{v.purpose}"


def diff_plans(old_visits, new_visits, now_jd: float) -> PlanDiff:
    """Pair the visits of both plans that start at or after ``now_jd`` and say what changed."""
    old = sorted((v for v in old_visits if v.start_jd >= now_jd), key=lambda v: v.start_jd)
    new = sorted((v for v in new_visits if v.start_jd >= now_jd), key=lambda v: v.start_jd)
    by_key: dict[str, list] = {}
    for v in new:
        by_key.setdefault(_purpose_key(v), []).append(v)
    changes = []
    for v in old:
        mates = by_key.get(_purpose_key(v))
        if not mates:
            changes.append(PlanChange("dropped", v, None))
            continue
        w = mates.pop(0)
        moved = abs(w.start_jd - v.start_jd) * 1440.0 >= MOVED_MIN
        changes.append(PlanChange("moved" if moved else "kept", v, w))
    changes += [PlanChange("added", None, w) for rest in by_key.values() for w in rest]
    changes.sort(key=lambda c: (c.new or c.old).start_jd)
    past = tuple((v.id, v.status) for v in new_visits
                 if v.start_jd < now_jd and v.status not in ("planned", "done", "under way"))
    return PlanDiff(tuple(changes), past)
