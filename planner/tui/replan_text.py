"""A re-plan's changes as the app shows them: moved, dropped, added visits, and what the
re-plan says of the visits before now."""

from __future__ import annotations

import re

from planner.sky.nights import local_hhmm


def changes_text(result, diff, zone: str, limit: int = 12) -> str:
    """Why the re-plan was made, counts, then up to ``limit`` changes, one a line."""
    if not result.reasons:
        return "nothing changed since the plan was made: it stands as it is"
    c = diff.counts()
    # The core's reasons list the ids of the visits missed; the lines below say which.
    reasons = [re.sub(r" \((?:[\w-]+, )*[\w-]+\)", "", r) for r in result.reasons]
    lines = ["because " + "; ".join(reasons),
             f"moved {c['moved']} · dropped {c['dropped']} · added {c['added']} · kept {c['kept']}"]
    past = [(vid, status) for vid, status in diff.past if status != "unknown"]
    if past:
        lines.append("before now: " + ", ".join(f"{vid} {status}" for vid, status in past[:4])
                     + (f" and {len(past) - 4} more" if len(past) > 4 else ""))
    shown = [ch for ch in diff.changes if ch.kind != "kept"]
    for ch in shown[:limit]:
        if ch.kind == "moved":
            lines.append(f"  ↦ moved   {ch.old.id:<16} {local_hhmm(ch.old.start_jd, zone)} → "
                         f"{local_hhmm(ch.new.start_jd, zone)} as {ch.new.id}")
        elif ch.kind == "dropped":
            lines.append(f"  − dropped {ch.old.id:<16} {local_hhmm(ch.old.start_jd, zone)} {ch.old.target}")
        else:
            lines.append(f"  + added   {ch.new.id:<16} {local_hhmm(ch.new.start_jd, zone)} {ch.new.target}")
    if len(shown) > limit:
        lines.append(f"  … and {len(shown) - limit} more")
    return "\n".join(lines)
