"""UT1 − UTC from the IERS table that astropy-iers-data ships (never downloaded).

astropy reads the same file (``finals2000A.all``) and merges it with the
IERS-B series through its general table reader, which costs about 0.8 s per
process — more than a whole semester of gcplan's visibility.  Sidereal time
needs only UT1 − UTC, so gcplan reads just the two columns it needs with a
fixed-width slice (the file's format is IERS's published one: MJD in columns
8–15, Bulletin A UT1 − UTC in columns 59–68) and interpolates UT1 − TAI,
which, unlike UT1 − UTC, has no leap-second steps.  Tests hold the result to
astropy's ``Time.ut1``.

Beyond the table's last value (predictions reach about a year ahead) UT1 − UTC
is held at that value: the error grows by up to ~1 ms a day, under a second
for a couple of years, and the commands say so once.

An ephemeris needs UT1 over its own span only: given ``span_jd``, only the
rows around it (and the table's last date) are turned into numbers — the same
interpolated values at every date of the span, in a tenth of the 20 ms the
whole table takes (an eighth of the app's sky for a night).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np


@dataclass(frozen=True)
class UT1Table:
    mjd: np.ndarray  # days, UTC
    ut1_minus_tai_s: np.ndarray  # smooth: UT1 − UTC − (TAI − UTC)
    last_mjd: float | None = None  # the table's last date, when ``mjd`` holds only a span's rows

    @property
    def end_jd(self) -> float:
        return float((self.mjd[-1] if self.last_mjd is None else self.last_mjd) + 2400000.5)


def tai_minus_utc_s(jd_utc) -> np.ndarray:
    """TAI − UTC (leap seconds so far) at UTC Julian dates, from erfa's built-in table.

    ERFA's ``utctai`` on the date split as astropy's ``Time`` splits it (whole
    day + fraction): the same numbers as ``Time(...).tai``, bit for bit, without
    astropy.time's import (a third of a second).
    """
    import erfa

    jd = np.asarray(jd_utc, dtype=float)
    jd1 = np.round(jd)
    jd2 = jd - jd1
    tai1, tai2 = erfa.utctai(jd1, jd2)
    return ((tai1 - jd1) + (tai2 - jd2)) * 86400.0


def load_ut1_table(path: str | Path | None = None, span_jd: tuple[float, float] | None = None) -> UT1Table:
    """Read MJD and UT1 − UTC (Bulletin A) from the bundled ``finals2000A.all``.

    ``span_jd`` (first, last UTC JD): only the rows :func:`ut1_minus_utc_s` uses between
    those dates, and the table's last date (``end_jd``); the same values there as from
    the whole table."""
    if path is None:
        # The file astropy's ``iers.IERS_A_FILE`` names, without importing astropy's
        # IERS module (half a second: astropy.table and astropy.time come with it).
        from astropy_iers_data import IERS_A_FILE as path
    with open(path, "rb") as f:
        data = f.read()
    part = _span_columns(data, span_jd) if span_jd is not None else None
    if part is not None:
        mjd_a, dut1_a, last = part
    else:
        (mjd_a, dut1_a), last = _fixed_width_columns(data) or _line_by_line_columns(data), None
    return UT1Table(mjd=mjd_a, ut1_minus_tai_s=dut1_a - tai_minus_utc_s(mjd_a + 2400000.5), last_mjd=last)


def _rows(data: bytes) -> tuple[np.ndarray, np.ndarray] | None:
    """The file as an array of rows and the indices of rows with a UT1 value; None unless
    every row is as long as the first."""
    width = data.find(b"\n") + 1
    if width < 69 or len(data) % width:
        return None
    rows = np.frombuffer(data, dtype=np.uint8).reshape(-1, width)
    if not (rows[:, -1] == ord("\n")).all():
        return None
    # rows past the predictions carry no UT1 value
    return rows, np.flatnonzero((rows[:, 58:68] != ord(" ")).any(axis=1))


def _columns(rows: np.ndarray, which: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """MJD (columns 8–15) and UT1 − UTC (59–68) of the rows ``which``, all at once."""
    mjd = np.ascontiguousarray(rows[which, 7:15]).view("S8").ravel().astype(float)
    return mjd, np.ascontiguousarray(rows[which, 58:68]).view("S10").ravel().astype(float)


def _fixed_width_columns(data: bytes) -> tuple[np.ndarray, np.ndarray] | None:
    """MJD and UT1 − UTC sliced from every row at once (a third of the time of a
    Python loop over 20,000 rows; the same floats): None unless every row is as
    long as the first, when :func:`_line_by_line_columns` reads it."""
    found = _rows(data)
    if found is None:
        return None
    try:
        return _columns(*found)
    except ValueError:
        return None


def _span_columns(data: bytes, span_jd: tuple[float, float]) -> tuple[np.ndarray, np.ndarray, float] | None:
    """MJD and UT1 − UTC of the rows around ``span_jd``, and the table's last MJD; None
    where the whole table must be read (rows of uneven length, or not a day apart).

    IERS writes a row a day, so MJD m is on row m − first (checked on the first and last
    rows).  A day more on each side keeps every date of the span between the same two
    rows as in the whole table, and a span past either end gets that end's row: linear
    interpolation then gives the same values."""
    found = _rows(data)
    if found is None or not found[1].size:
        return None
    rows, keep = found
    try:
        first, last = (float(rows[keep[i], 7:15].tobytes()) for i in (0, -1))
        n = keep.size
        if not (keep[-1] - keep[0] == n - 1 and last - first == n - 1):
            return None
        lo = min(max(int(np.floor(span_jd[0] - 2400000.5 - first)) - 1, 0), n - 1)
        hi = min(max(int(np.ceil(span_jd[1] - 2400000.5 - first)) + 1, lo), n - 1)
        return (*_columns(rows, keep[lo:hi + 1]), last)
    except ValueError:
        return None


def _line_by_line_columns(data: bytes) -> tuple[np.ndarray, np.ndarray]:
    mjd, dut1 = [], []
    for line in data.splitlines():
        value = line[58:68].strip()
        if not value:
            continue  # rows past the predictions carry no UT1 value
        mjd.append(float(line[7:15]))
        dut1.append(float(value))
    return np.array(mjd), np.array(dut1)


def ut1_minus_utc_s(table: UT1Table, jd_utc) -> np.ndarray:
    """UT1 − UTC (s) at UTC Julian dates; held at the last value past the table."""
    jd = np.asarray(jd_utc, dtype=float)
    smooth = np.interp(jd - 2400000.5, table.mjd, table.ut1_minus_tai_s)
    return smooth + tai_minus_utc_s(jd)
