"""The observing log as JSON: its entries (``gcplan log list --json``) and one night's
log with its almanac, weather, notes, observers and planned visits (``gcplan log print --json``)."""

from __future__ import annotations

from planner.reports.night_report import almanac_json, site_json
from planner.sky.nights import iso_utc


def entry_json(e) -> dict:
    """One logbook entry (:class:`planner.logbook.store.LogEntry`)."""
    return {"id": e.id, "time": iso_utc(e.time_jd), "target": e.target, "filter": e.filter,
            "exposure_s": e.exposure_s, "frames": e.frames,
            "airmass": None if e.airmass is None else round(e.airmass, 4), "airmass_source": e.airmass_source,
            "seeing_arcsec": e.seeing_arcsec, "file": e.file, "note": e.note, "sky_note": e.sky_note,
            "fingerprint": e.fingerprint, "visit_id": e.visit_id, "source": e.source}


def event_json(e) -> dict:
    """One of the night's events (:class:`planner.logbook.store.NightEvent`): a note, a weather
    change or the observer's mark on a visit."""
    return {"id": e.id, "time": iso_utc(e.time_jd), "kind": e.kind, "text": e.text}


def night_log_json(log) -> dict:
    """One night of the logbook (:class:`planner.reports.nightlog.NightLog`), as the printed log holds it."""
    return {
        "logbook": log.logbook,
        "site": site_json(log.site),
        "night": log.night.isoformat(),
        "almanac": almanac_json(log.almanac, 0),
        "observers": list(log.observers),
        "entries": [entry_json(e) for e in log.entries],
        "weather": [{"id": w.id, "time": iso_utc(w.time_jd), "state": w.state, "note": w.note} for w in log.weather],
        "notes": [{"id": n.id, "time": iso_utc(n.time_jd), "text": n.text} for n in log.notes],
        "planned_visits": [{"id": v.id, "plan_id": v.plan_id, "line": v.line, "target": v.target, "filter": v.filter, "exposure_s": v.exposure_s,
                            "frames": v.frames, "start": iso_utc(v.start_jd) if v.start_jd is not None else None,
                            "end": iso_utc(v.end_jd) if v.end_jd is not None else None,
                            "done_entry_id": v.done_entry_id} for v in log.visits],
    }
