"""Filling the log from FITS frames: headers in, one entry per frame out.

A pass (:func:`ingest_folder`) lists the frames under a folder, skips those
already in the logbook (same path, size and modification time), reads each
new frame's header with astropy.io.fits, computes the airmass of frames whose
header has none, and stores each frame as its own committed entry.  The
content fingerprint (SHA-256 of the file's bytes) makes a second ingestion —
or a resumed one after a crash — add nothing.

A frame that cannot be read yet (still being written, truncated, a broken
header, a required keyword missing) is skipped with its reason and simply
read again on the next pass: nothing about it is stored.

Header keywords are the standard ones (DATE-OBS, EXPTIME, OBJECT, FILTER,
AIRMASS, RA, DEC); a site profile's ``[camera.fits_keywords]`` maps any of
them to the camera's own (``FILTER = "FILTNAME"``).  DATE-OBS is the start
of the exposure (FITS standard, UTC); the airmass is computed at mid-exposure
with :func:`planner.airmass.airmass_kasten_young` of the geometric altitude.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
import time
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Mapping

import numpy as np

from planner.logbook.store import EntryRefused, Logbook, NewEntry, night_of_jd
from planner.sky.nights import FIRST_YEAR, LAST_YEAR, datetime_to_jd

#: File names taken as frames (case ignored).
FRAME_SUFFIXES = (".fits", ".fit", ".fts", ".fits.gz", ".fit.gz", ".fits.fz")
#: Standard keywords read from each header (the site may rename them).
STANDARD_KEYWORDS = ("DATE-OBS", "TIME-OBS", "EXPTIME", "OBJECT", "FILTER", "AIRMASS", "RA", "DEC")
#: An airmass in a header outside this range is not believed (and is recomputed).
_AIRMASS_RANGE = (1.0 - 1e-3, 40.0)  # 38 at the horizon (Kasten & Young 1989)
#: The longest single frame believed, seconds: a day (common practice, no source: no
#: exposure outlasts a night).  A longer EXPTIME is a broken header, and the frame is skipped.
MAX_FRAME_S = 86400.0
#: A frame dated more than this after the ingest's "now" has a clock that is wrong (days).
FUTURE_SLACK_D = 1.0
#: Frames closer in time than this share one Sun/Moon table when their airmass is computed (days).
#: Measured here: a table costs about 0.04 s plus 0.0016 s per day it spans, so two runs of
#: frames further apart than about 25 days are cheaper with a table each; a pass then costs at
#: most that per frame, whatever dates it meets.
_EPHEMERIS_GROUP_GAP_D = 20.0
_SEXAGESIMAL = re.compile(r"^\s*([+-]?)\s*(\d+(?:\.\d*)?)[\s:hd°]+(\d+(?:\.\d*)?)(?:[\s:m′']+(\d+(?:\.\d*)?))?[s″\"]?\s*$")


class FrameProblem(Exception):
    """Why a frame is skipped this pass (it will be read again next pass)."""


@dataclass(frozen=True)
class FrameHeader:
    """What the log needs from one frame's header."""

    file: str
    time_jd: float  # UTC, start of exposure
    exposure_s: float
    target: str
    filter: str | None
    airmass: float | None  # from the header, when present and plausible
    ra_deg: float | None  # ICRS/J2000 as the header gives it
    dec_deg: float | None


@dataclass(frozen=True)
class IngestReport:
    """One pass: the new entries' ids, the frames skipped with their reasons, and how many were known."""

    added: tuple[int, ...] = ()
    skipped: tuple[tuple[str, str], ...] = ()  # (file, reason)
    already: int = 0
    warnings: tuple[str, ...] = field(default=())


# --- reading one header ------------------------------------------------------


def parse_date_obs(value, time_obs=None) -> float:
    """JD (UTC) of a DATE-OBS value (ISO 8601, ``Z`` allowed), with TIME-OBS if DATE-OBS has no time."""
    text = str(value).strip().rstrip("Z").replace(" ", "T")
    if "T" not in text and time_obs is not None:
        text = f"{text}T{str(time_obs).strip()}"
    try:
        moment = dt.datetime.fromisoformat(text)
    except ValueError:
        raise FrameProblem(f"DATE-OBS {value!r} is not an ISO 8601 date-time such as 2027-05-12T23:41:05.2") from None
    if moment.tzinfo is not None:
        moment = moment.astimezone(dt.timezone.utc).replace(tzinfo=None)
    if not FIRST_YEAR <= moment.year <= LAST_YEAR:
        # Year 0001, 9999 (an unset or broken camera clock): no night, no Sun or Moon to compute.
        raise FrameProblem(f"DATE-OBS {value!r} is outside {FIRST_YEAR}–{LAST_YEAR}, the years gcplan's "
                           "ephemeris covers (is the camera clock set?)")
    return datetime_to_jd(moment)


def parse_angle_deg(value, hours: bool, keyword: str) -> float:
    """A header angle: a number is degrees; a sexagesimal string is hours (RA) or degrees (DEC)."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        deg = float(value)
    else:
        text = str(value).strip()
        m = _SEXAGESIMAL.match(text)
        if m:
            sign = -1.0 if m[1] == "-" else 1.0
            deg = sign * (float(m[2]) + float(m[3]) / 60.0 + float(m[4] or 0.0) / 3600.0)
            deg *= 15.0 if hours else 1.0
        else:
            try:
                deg = float(text)
            except ValueError:
                raise FrameProblem(f"{keyword} {value!r} is neither degrees nor sexagesimal") from None
    lo, hi = (0.0, 360.0) if hours else (-90.0, 90.0)
    if not (np.isfinite(deg) and lo <= deg <= hi):
        raise FrameProblem(f"{keyword} {value!r} is outside {lo:g}..{hi:g} degrees")
    return deg % 360.0 if hours else deg


def _check_complete(hdul, path: Path) -> None:
    """Raise FrameProblem if the file is shorter than its headers say (still being written)."""
    if path.name.lower().endswith((".gz", ".fz")):
        for hdu in hdul:  # compressed: only decompressing everything proves it whole
            _ = hdu.data
        return
    size = path.stat().st_size
    info = hdul.fileinfo(len(hdul) - 1)
    needed = info["datLoc"] + _data_bytes(hdul[-1].header)  # the last block's padding not required
    if size < needed:
        raise FrameProblem(f"file is shorter than its header says ({size} of {needed} bytes): "
                           "still being written or truncated")


def _data_bytes(header) -> int:
    """Bytes of an HDU's data without padding (FITS standard 4.0, sec. 4.4.1.1, from memory)."""
    naxis = int(header.get("NAXIS", 0))
    if naxis == 0:
        return 0
    n = 1
    for i in range(1, naxis + 1):
        n *= int(header.get(f"NAXIS{i}", 0))
    bits = abs(int(header.get("BITPIX", 8)))
    return bits // 8 * int(header.get("GCOUNT", 1)) * (int(header.get("PCOUNT", 0)) + n)


def read_frame_header(path: str | Path, keywords: Mapping[str, str] | None = None) -> FrameHeader:
    """The log's fields from a frame; :class:`FrameProblem` says why a frame cannot be used (yet)."""
    from astropy.io import fits

    path = Path(path)
    names = {k: (keywords or {}).get(k, k) for k in STANDARD_KEYWORDS}
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # truncation and card warnings: our own checks say it
            with fits.open(path, memmap=False, lazy_load_hdus=True) as hdul:
                n = len(hdul)
                if n == 0:
                    raise FrameProblem("no header found")
                _check_complete(hdul, path)
                headers = [hdul[i].header for i in range(n)]
                values = {}
                for std, theirs in names.items():
                    for header in headers:
                        if theirs in header:
                            values[std] = header[theirs]
                            break
    except FrameProblem:
        raise
    except Exception as exc:  # astropy raises OSError, ValueError, VerifyError … on broken files
        raise FrameProblem(f"not a readable FITS file yet ({type(exc).__name__}: {exc})") from None

    def need(std: str):
        value = values.get(std)
        if value is None or (isinstance(value, str) and not value.strip()):
            shown = names[std] if names[std] == std else f"{names[std]} (for {std})"
            raise FrameProblem(f"header has no {shown}")
        return value

    time_jd = parse_date_obs(need("DATE-OBS"), values.get("TIME-OBS"))
    raw_exp = need("EXPTIME")
    try:
        if isinstance(raw_exp, bool):  # a logical card (EXPTIME = T) is no number of seconds
            raise TypeError
        exposure = float(raw_exp)
    except (TypeError, ValueError):
        raise FrameProblem(f"{names['EXPTIME']} {raw_exp!r} is not a number of seconds") from None
    if not (np.isfinite(exposure) and 0 <= exposure <= MAX_FRAME_S):
        raise FrameProblem(f"{names['EXPTIME']} {raw_exp!r} must be ≥ 0 and at most {MAX_FRAME_S:g} seconds "
                           "(a day)")
    target = str(need("OBJECT")).strip()
    filt = values.get("FILTER")
    filt = str(filt).strip() or None if filt is not None else None
    airmass = values.get("AIRMASS")
    try:
        airmass = float(airmass) if airmass is not None else None
    except (TypeError, ValueError):
        airmass = None
    if airmass is not None and not (_AIRMASS_RANGE[0] <= airmass <= _AIRMASS_RANGE[1]):
        airmass = None
    ra = dec = None
    if values.get("RA") is not None and values.get("DEC") is not None:
        ra = parse_angle_deg(values["RA"], True, names["RA"])
        dec = parse_angle_deg(values["DEC"], False, names["DEC"])
    return FrameHeader(str(path), time_jd, exposure, target, filt, airmass, ra, dec)


def file_fingerprint(path: str | Path) -> str:
    """SHA-256 of the file's bytes, hex: the same frame, wherever it is, has the same one."""
    digest = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


# --- airmass -----------------------------------------------------------------


def airmass_at(site, ra_deg, dec_deg, jd_utc) -> np.ndarray:
    """Kasten & Young airmass of ICRS positions at times (equal-length arrays), NaN below the horizon.

    The fast core: apparent places of date (:func:`planner.visibility.apparent_places`),
    local sidereal time from one :class:`~planner.ephemeris.Ephemeris` over
    the span, then spherical trigonometry — one vectorised pass for all frames.
    """
    from planner.sky.ephemeris import build_ephemeris, site_geometry
    from planner.sky.visibility import apparent_places, sky_at, time_track

    ra = np.atleast_1d(np.asarray(ra_deg, dtype=float))
    dec = np.atleast_1d(np.asarray(dec_deg, dtype=float))
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    if jd.size == 0:
        return np.array([])
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    out = np.full(jd.size, np.nan)
    # One Sun/Moon table per run of frames close in time, never one spanning years:
    # a frame with a wrong clock costs what a good one does.
    for group in time_groups(jd, _EPHEMERIS_GROUP_GAP_D):
        g_jd = jd[group]
        lo, hi = float(g_jd.min()), float(g_jd.max())
        eph = build_ephemeris(lo - 0.1, hi + 0.1)
        # Unique positions: a night's frames are a few clusters many times over.
        pos, index = np.unique(np.column_stack([ra[group], dec[group]]), axis=0, return_inverse=True)
        places = apparent_places(pos[:, 0], pos[:, 1], lo, hi)
        ra_app, dec_app = places.at(g_jd)  # (positions, frames)
        cols = np.arange(g_jd.size)
        index = np.asarray(index).reshape(-1)
        sky = sky_at(time_track(eph, geo, g_jd), loc.latitude_deg, ra_app[index, cols], dec_app[index, cols])
        out[group] = np.asarray(sky.airmass, dtype=float)
    return out


def time_groups(jd, gap_d: float) -> list[np.ndarray]:
    """Indices of ``jd`` in runs whose consecutive (sorted) times are less than ``gap_d`` apart."""
    jd = np.asarray(jd, dtype=float)
    order = np.argsort(jd, kind="stable")
    breaks = np.flatnonzero(np.diff(jd[order]) >= gap_d) + 1
    return [g for g in np.split(order, breaks) if g.size]


# --- a pass over a folder ----------------------------------------------------


def frame_files(folder: str | Path) -> list[Path]:
    """Frames under ``folder`` (recursively), sorted by path; hidden files left out."""
    root = Path(folder)
    return sorted(p for p in root.rglob("*") if p.is_file() and p.name.lower().endswith(FRAME_SUFFIXES)
                  and not p.name.startswith("."))


def ingest_folder(logbook: Logbook, folder: str | Path, site, catalog=None,
                  now_jd: float | None = None) -> IngestReport:
    """One pass over ``folder``: every new, complete frame becomes an entry (each its own transaction).

    ``site`` gives the keyword mapping, the airmass computation and the night
    a frame belongs to; it may be None (standard keywords, header airmass
    only, nights in UTC).  ``catalog`` supplies positions for frames whose
    header has no RA/DEC.  ``now_jd`` (the command passes the clock's; None:
    no such check) is when the pass runs: a frame dated more than a day later
    is stored without a computed airmass, with a warning.

    Each frame stands alone: one that cannot be read, or whose header holds
    an impossible value, is skipped with its reason (naming the keyword) and
    never stops the others.
    """
    root = Path(folder)
    if not root.is_dir():
        from planner.logbook.store import LogbookError

        raise LogbookError(f"frame folder {str(folder)!r} does not exist or is not a folder")
    known = logbook.known_files()
    keywords = site.camera.fits_keywords if site is not None else {}
    frames: list[tuple[FrameHeader, object, str]] = []  # (header, os.stat_result, fingerprint)
    skipped: list[tuple[str, str]] = []
    already = 0
    for path in frame_files(root):
        try:
            stat = path.stat()
            if (str(path), stat.st_size, stat.st_mtime_ns) in known:
                already += 1
                continue
            header = read_frame_header(path, keywords)
            fingerprint = file_fingerprint(path)
        except FrameProblem as exc:
            skipped.append((str(path), str(exc)))
            continue
        except OSError as exc:  # vanished or unreadable between listing and reading
            skipped.append((str(path), f"cannot read ({exc.strerror or exc})"))
            continue
        except (ValueError, TypeError, ArithmeticError, LookupError) as exc:
            # A header no check above foresaw: this frame is skipped, the others go on.
            skipped.append((str(path), f"header cannot be used ({type(exc).__name__}: {exc})"))
            continue
        if path.stat().st_size != stat.st_size:  # grew while we read it: next pass
            skipped.append((str(path), "file changed while being read: still being written"))
            continue
        frames.append((header, stat, fingerprint))

    future = [now_jd is not None and h.time_jd > now_jd + FUTURE_SLACK_D for h, _, _ in frames]
    airmass, source, notes = _airmasses(frames, site, catalog, future)
    added: list[int] = []
    zone = site.location.timezone if site is not None else "UTC"
    for (h, stat, fingerprint), x, src in zip(frames, airmass, source):
        entry = NewEntry(
            time_jd=h.time_jd, target=h.target, filter=h.filter, exposure_s=h.exposure_s, frames=1,
            airmass=x, airmass_source=src, file=h.file, file_size=stat.st_size,
            file_mtime_ns=stat.st_mtime_ns, fingerprint=fingerprint, ra_deg=h.ra_deg, dec_deg=h.dec_deg,
            source="fits")
        try:
            new_id = logbook.add_entry(entry, night=str(night_of_jd(h.time_jd, zone)),
                                       key=catalog.key if catalog is not None else None)
        except EntryRefused as exc:  # this entry only; a logbook that cannot be written still stops the pass
            skipped.append((h.file, f"the logbook refused it ({exc.detail})"))
            continue
        if new_id is None:
            already += 1
        else:
            added.append(new_id)
    return IngestReport(tuple(added), tuple(skipped), already, tuple(notes))


def _airmasses(frames, site, catalog, future=None):
    """Header airmass where given, else computed at mid-exposure from RA/DEC or the catalog position
    (not for a frame flagged in ``future``: its clock is wrong, so is any altitude from it)."""
    airmass: list[float | None] = [h.airmass for h, _, _ in frames]
    source: list[str | None] = ["header" if x is not None else None for x in airmass]
    notes: list[str] = []
    todo, ra, dec, jd = [], [], [], []
    for k, (h, _, _) in enumerate(frames):
        if future is not None and future[k]:
            notes.append(f"{h.file}: DATE-OBS {_iso(h.time_jd)} is in the future (is the camera clock set?): "
                         "stored without a computed airmass")
            continue
        if airmass[k] is not None:
            continue
        r, d = h.ra_deg, h.dec_deg
        if r is None and catalog is not None:
            hit = catalog.lookup(h.target)
            if hit is not None:
                r, d = hit.ra_deg, hit.dec_deg
        if r is None or site is None:
            notes.append(f"{h.file}: no airmass in the header and no position (RA/DEC or a catalog name "
                         f"for {h.target!r}){'' if site is not None else ' or site'}: airmass left empty")
            continue
        todo.append(k)
        ra.append(r)
        dec.append(d)
        jd.append(h.time_jd + h.exposure_s / 2.0 / 86400.0)
    if todo:
        try:
            computed = airmass_at(site, ra, dec, jd)
        except (ValueError, ArithmeticError) as exc:  # never lose the frames over their airmass
            computed = ()
            notes.append(f"airmass of {len(todo)} frame(s) not computed ({type(exc).__name__}: {exc})")
        for k, x in zip(todo, computed):
            if np.isfinite(x):
                airmass[k], source[k] = float(x), "computed"
            else:
                notes.append(f"{frames[k][0].file}: the target was below the horizon at mid-exposure: "
                             "airmass left empty")
    return airmass, source, notes


def _iso(jd: float) -> str:
    from planner.sky.nights import iso_utc

    return iso_utc(jd)


def watch_folder(logbook: Logbook, folder: str | Path, site, catalog=None, interval_s: float = 5.0,
                 on_pass: Callable[[IngestReport], None] | None = None,
                 should_stop: Callable[[], bool] | None = None, max_passes: int | None = None,
                 now_jd: Callable[[], float] | None = None) -> IngestReport:
    """Pass after pass every ``interval_s`` seconds until ``should_stop()`` or ``max_passes``.

    ``now_jd``, if given, is the clock (JD UTC) each pass reads for its future-frame check.

    Ctrl-C (KeyboardInterrupt) between or during passes ends the watch cleanly:
    every entry committed so far stays, the one in flight is rolled back by
    SQLite.  Returns the totals over all passes (``skipped``: the last pass's).
    """
    added: list[int] = []
    skipped: tuple[tuple[str, str], ...] = ()
    passes = 0
    try:
        while True:
            # Read the stop flag before the pass, so the last pass starts after the
            # stop: a frame that arrived just before it is not left out.
            stopping = bool(should_stop and should_stop())
            report = ingest_folder(logbook, folder, site, catalog, now_jd() if now_jd else None)
            added.extend(report.added)
            skipped = report.skipped
            passes += 1
            if on_pass is not None:
                on_pass(report)
            if stopping or (max_passes is not None and passes >= max_passes):
                break
            deadline = time.monotonic() + interval_s
            while time.monotonic() < deadline and not (should_stop and should_stop()):
                time.sleep(min(0.1, interval_s))
    except KeyboardInterrupt:
        pass
    return IngestReport(tuple(added), skipped, 0)
