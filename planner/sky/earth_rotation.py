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
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np


@dataclass(frozen=True)
class UT1Table:
    mjd: np.ndarray  # days, UTC
    ut1_minus_tai_s: np.ndarray  # smooth: UT1 − UTC − (TAI − UTC)

    @property
    def end_jd(self) -> float:
        return float(self.mjd[-1] + 2400000.5)


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


def load_ut1_table(path: str | Path | None = None) -> UT1Table:
    """Read MJD and UT1 − UTC (Bulletin A) from the bundled ``finals2000A.all``."""
    if path is None:
        # The file astropy's ``iers.IERS_A_FILE`` names, without importing astropy's
        # IERS module (half a second: astropy.table and astropy.time come with it).
        from astropy_iers_data import IERS_A_FILE as path
    with open(path, "rb") as f:
        data = f.read()
    mjd_a, dut1_a = _fixed_width_columns(data) or _line_by_line_columns(data)
    return UT1Table(mjd=mjd_a, ut1_minus_tai_s=dut1_a - tai_minus_utc_s(mjd_a + 2400000.5))


def _fixed_width_columns(data: bytes) -> tuple[np.ndarray, np.ndarray] | None:
    """MJD and UT1 − UTC sliced from every row at once (a third of the time of a
    Python loop over 20,000 rows; the same floats): None unless every row is as
    long as the first, when :func:`_line_by_line_columns` reads it."""
    width = data.find(b"\n") + 1
    if width < 69 or len(data) % width:
        return None
    rows = np.frombuffer(data, dtype=np.uint8).reshape(-1, width)
    if not (rows[:, -1] == ord("\n")).all():
        return None
    keep = (rows[:, 58:68] != ord(" ")).any(axis=1)  # rows past the predictions carry no UT1 value
    try:
        mjd = np.ascontiguousarray(rows[keep, 7:15]).view("S8").ravel().astype(float)
        dut1 = np.ascontiguousarray(rows[keep, 58:68]).view("S10").ravel().astype(float)
    except ValueError:
        return None
    return mjd, dut1


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
