"""What the app writes: logbook records (each its own committed transaction, the moment
it is made) and the night's files (night sheet, printed night log).

The logbook is the campaign's (``logbook.sqlite`` beside the campaign file), as
the command line uses it; the writers are the command line's
(:func:`planner.reports.schedule_report.night_sheet`,
:func:`planner.reports.nightlog.write_night_log_pdf`).
"""

from __future__ import annotations

from pathlib import Path

from planner.logbook.store import Logbook, NewEntry, default_logbook_path


def logbook_path(campaign, logbook: Path | None = None) -> Path:
    """``logbook`` if given (``gcplan app --logbook``), else the campaign's, beside its file."""
    return Path(logbook) if logbook else default_logbook_path(campaign.source)


def _book(campaign, logbook=None) -> Logbook:
    return Logbook(logbook_path(campaign, logbook))


def add_mark(campaign, night, visit, status: str, now_jd: float, note: str | None = None, logbook=None) -> int:
    """The observer's word on ``visit`` (done, skipped, planned to take a mark back)."""
    with _book(campaign, logbook) as book:
        return book.add_visit_mark(now_jd, night, visit.id, status, note)


def add_partial(campaign, night, visit, frames: int, now_jd: float, key=None, logbook=None) -> list[int]:
    """``frames`` of ``visit``'s frames taken, in the order of its sequence: one manual entry
    per filter touched (the frames the evidence rule then counts, so the rest are owed), then
    the mark.  Entries are dated at the visit's science start, inside its span."""
    ids = []
    left = int(frames)
    with _book(campaign, logbook) as book:
        for line in visit.exposures:
            k = min(left, int(line.frames))
            if k <= 0:
                break
            entry = NewEntry(time_jd=visit.science_start_jd, target=visit.target, filter=line.filter,
                             exposure_s=float(line.exposure_s), frames=k,
                             note=f"{visit.id}: {k} frame(s) the observer gives as taken")
            new = book.add_entry(entry, night=str(night), key=key)
            if new is not None:
                ids.append(new)
            left -= k
        book.add_visit_mark(now_jd, night, visit.id, "partial", f"{frames} frame(s) taken")
    return ids


def add_note(campaign, now_jd: float, text: str, logbook=None) -> int:
    with _book(campaign, logbook) as book:
        return book.add_note(now_jd, text)


def add_weather(campaign, now_jd: float, state: str, note: str | None = None, logbook=None) -> int:
    with _book(campaign, logbook) as book:
        return book.add_weather(now_jd, state, note)


def record_plan(campaign, night, plan, logbook=None, now_jd: float | None = None) -> int:
    """Store an accepted plan's visits (one planned visit per filter of each visit, as
    ``schedule --record`` does): their ids are then used, and ingested frames link to them;
    and the plan itself (:mod:`planner.tui.accepted_plan`), so a restarted app follows it."""
    from planner.tui.accepted_plan import meta_key, plan_to_json

    rows = [{"target": v.target, "filter": e.filter, "exposure_s": e.exposure_s, "frames": e.frames,
             "start_jd": v.start_jd, "end_jd": v.end_jd, "plan_id": v.id, "line": n}
            for v in plan.visits if v.status in ("planned", "under way") for n, e in enumerate(v.exposures)]
    with _book(campaign, logbook) as book:
        added = len(book.add_planned_visits(night, rows))
        book.set_meta(meta_key(night), plan_to_json(plan, float("nan") if now_jd is None else now_jd))
    return added


def output_folder(campaign) -> Path:
    return Path(campaign.source).parent


def write_night_sheet(campaign, plan, night) -> Path:
    """The night sheet (text, 80 columns) of the plan the app holds, beside the campaign."""
    from planner.reports.schedule_report import night_sheet

    path = output_folder(campaign) / f"night-{night:%Y-%m-%d}-sheet.txt"
    path.write_text(night_sheet(campaign.site, plan) + "\n", encoding="utf-8")
    return path


def write_night_log(campaign, night, logbook=None) -> Path:
    """The printed night log (PDF) of the logbook's night, beside the campaign."""
    from planner.reports.nightlog import collect_night_log, write_night_log_pdf

    path = output_folder(campaign) / f"night-{night:%Y-%m-%d}-log.pdf"
    with Logbook(logbook_path(campaign, logbook)) as book:
        log = collect_night_log(book, campaign.site, night)
    return write_night_log_pdf(log, path)
