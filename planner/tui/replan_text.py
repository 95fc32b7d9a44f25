"""A re-plan's changes as the app shows them: moved, dropped, added visits, and what the
re-plan says of the visits before now."""

from __future__ import annotations

from planner.sky.nights import local_hhmm


def changes_text(result, diff, zone: str, limit: int = 12) -> str:
    """Why the re-plan was made, counts, then up to ``limit`` changes, one a line."""
    if not result.reasons:
        return "nothing changed since the plan was made: it stands as it is"
    c = diff.counts()
    lines = ["because " + "; ".join(result.reasons),
             f"moved {c['moved']} · dropped {c['dropped']} · added {c['added']} · kept {c['kept']}"]
    if diff.past:
        lines.append("before now: " + ", ".join(f"{vid} {status}" for vid, status in diff.past[:6])
                     + (" …" if len(diff.past) > 6 else ""))
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
