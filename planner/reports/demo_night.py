"""The demo's invented night of observing: FITS frames of the demo clusters, the logbook
they are ingested into, and its printed night log (``gcplan demo``).

Everything here is made up and says so (a COMMENT card in every frame, notes
in the logbook); the site is the fictional demo observatory.  Only the demo
uses this module (and the tests, which write their frames with
:func:`write_invented_frame` too).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Mapping

import numpy as np

from planner.sky.almanac import almanac_for_nights


def demo_targets():
    """The demo campaign's clusters (``targets/demo/clusters.ecsv``)."""
    from planner.inputs.catalog import load_catalog
    from planner.inputs.resources import targets_dir
    from planner.inputs.targets import read_target_list

    return read_target_list(targets_dir() / "demo" / "clusters.ecsv", load_catalog())


def write_invented_frame(path: str | Path, cards: Mapping[str, object], shape=(16, 16), seed: int = 0) -> Path:
    """Write a tiny invented FITS frame (int16 noise) with ``cards``, labelled invented in a COMMENT."""
    from astropy.io import fits

    rng = np.random.default_rng(seed)
    hdu = fits.PrimaryHDU(rng.normal(1000.0, 10.0, shape).astype(np.int16))
    for key, value in cards.items():
        hdu.header[key] = value
    hdu.header["COMMENT"] = "INVENTED frame written by gcplan for a demo or a test; not an observation."
    path = Path(path)
    hdu.writeto(path, overwrite=True)
    return path


#: The invented demo night: filters, exposures (s) and frames per filter in a visit.
_DEMO_SEQUENCE = (("V", 120.0, 2), ("I", 90.0, 2))
_DEMO_GAP_MIN = 12.0
_DEMO_OBSERVERS = ("A. Inventada (fictional)", "B. Ficticio (fictional)")


def demo_frame_plan(site, night: dt.date) -> list[dict]:
    """Invented frames: visits to the demo clusters in the night's dark window, in time order.

    Visits go to the observable cluster that has waited longest (round robin)
    while it is inside its window; readout, filter change and slew times come
    from the site profile.  Returns FITS cards per frame.
    """
    from planner.model.constraints import constraints_for_site
    from planner.sky.night_summary import run_of_nights
    from planner.sky.nights import jd_to_datetime

    targets = demo_targets()
    run = run_of_nights(site, targets, [night], constraints_for_site(site))
    vis = run.visibility
    dark0, dark1 = float(vis.dark_start_jd[0]), float(vis.dark_end_jd[0])
    if not np.isfinite(dark0):
        return []
    filters = [f for f in _DEMO_SEQUENCE if f[0] in site.filters] or [(next(iter(site.filters)), 60.0, 3)]
    cam, tel = site.camera, site.telescope
    visit_d = (sum(exp + cam.readout_s for _, exp, n in filters for _ in range(n))
               + tel.filter_change_s * len(filters) + tel.acquisition_s) / 86400.0
    # Written with the camera's own keywords where the profile maps them, as the camera would.
    key = {std: cam.fits_keywords.get(std, std) for std in ("DATE-OBS", "EXPTIME", "OBJECT", "FILTER", "RA", "DEC")}
    last_seen = {k: -np.inf for k in range(len(targets))}
    cursor, cards, closed = dark0 + 5 / 1440.0, [], _demo_closure(dark0, dark1)
    while cursor + visit_d < dark1:
        if closed[0] <= cursor < closed[1]:
            cursor = closed[1] + 5 / 1440.0
            continue
        up = [k for k in range(len(targets))
              if vis.window_start_jd[k, 0] <= cursor and cursor + visit_d <= vis.window_end_jd[k, 0]]
        if not up:
            cursor += 10 / 1440.0
            continue
        k = min(up, key=lambda j: last_seen[j])
        last_seen[k] = cursor
        t = cursor + tel.acquisition_s / 86400.0
        for filt, exp, n in filters:
            t += tel.filter_change_s / 86400.0
            for _ in range(n):
                cards.append({key["DATE-OBS"]: jd_to_datetime(t).strftime("%Y-%m-%dT%H:%M:%S"),
                              key["EXPTIME"]: exp, key["OBJECT"]: targets[k].name, key["FILTER"]: filt,
                              key["RA"]: round(targets[k].ra_deg, 5), key["DEC"]: round(targets[k].dec_deg, 5),
                              "IMAGETYP": "LIGHT", "OBSERVAT": site.location.name[:68]})
                t += (exp + cam.readout_s) / 86400.0
        cursor = t + _DEMO_GAP_MIN / 1440.0  # focus checks, standards, slews (invented)
    return cards


def _demo_closure(dark0: float, dark1: float) -> tuple[float, float]:
    """The invented weather closure: 35 minutes starting 40 % into the dark window."""
    start = dark0 + 0.4 * (dark1 - dark0)
    return start, start + 35 / 1440.0


def write_demo_log(out_dir, site, night: dt.date) -> dict:
    """Invented frames of the demo clusters in the night's dark window, ingested and printed.

    Writes ``out_dir/demo_frames/*.fits`` (tiny images, each labelled invented
    in a COMMENT card), ingests them into ``out_dir/demo_logbook.sqlite`` (made
    afresh, with invented observers, a weather closure and notes) and prints
    ``out_dir/nightlog.pdf`` (A4).  Returns the paths and counts.
    """
    from planner.inputs.catalog import load_catalog
    from planner.logbook.ingest import ingest_folder
    from planner.logbook.store import Logbook
    from planner.reports.nightlog import collect_night_log, write_night_log_pdf

    out = Path(out_dir)
    frames_dir = out / "demo_frames"
    frames_dir.mkdir(parents=True, exist_ok=True)
    for old in frames_dir.glob("demo_*.fits"):
        old.unlink()
    cards = demo_frame_plan(site, night)
    for i, c in enumerate(cards, 1):
        write_invented_frame(frames_dir / f"demo_{i:03d}.fits", c, seed=i)
    book_path = out / "demo_logbook.sqlite"
    for suffix in ("", "-wal", "-shm"):
        Path(f"{book_path}{suffix}").unlink(missing_ok=True)
    with Logbook(book_path) as book:
        book.set_meta("site", site.source)
        for name in _DEMO_OBSERVERS:
            book.add_observer(night, name)
        report = ingest_folder(book, frames_dir, site, load_catalog())
        entries = book.entries()
        if entries:
            first = entries[0].time_jd
            book.add_note(first - 10 / 1440.0, "Invented demo night: frames, observers, weather and notes "
                          "are made up by gcplan (not an observation).")
            book.add_note(first + 30 / 1440.0, "Seeing about 1.1\" in V, steady wind from the north (invented).")
        dark0, dark1 = almanac_for_nights(site, [night]).dark_window_jd(site.limits.twilight)
        if np.isfinite(dark0[0]):
            c0, c1 = _demo_closure(float(dark0[0]), float(dark1[0]))
            book.add_weather(c0, "closed", "humidity 88 % (invented)")
            book.add_weather(c1, "open", "humidity down to 70 % (invented)")
        pdf = write_night_log_pdf(collect_night_log(book, site, night), out / "nightlog.pdf", "a4")
    return {"frames_dir": frames_dir, "logbook": book_path, "pdf": pdf, "added": len(report.added),
            "skipped": len(report.skipped)}
