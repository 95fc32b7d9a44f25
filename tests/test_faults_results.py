"""Fault injection on results that pretend and words that mislead: exposures no night
holds, campaign files with empty or fractional counts, doubled keys and columns, dates
the local calendar skipped, clock changes inside a night, library warnings, absurd
magnitudes.  Each ends in its one line (common practice, no source) or its warning.
"""

from __future__ import annotations

import datetime as dt
import shutil
import sqlite3
import subprocess
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from helpers.faults import gcplan, one_line_error

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "targets" / "demo"
DATA = ROOT / "tests" / "data"


def _campaign(tmp_path, edit) -> Path:
    """The demo campaign copied beside its tables, its text changed by ``edit``."""
    for name in ("clusters.ecsv", "variables.ecsv"):
        shutil.copy(DEMO / name, tmp_path / name)
    path = tmp_path / "campaign.toml"
    path.write_text(edit((DEMO / "campaign.toml").read_text()))
    return path


# --- exposures no night holds ---------------------------------------------------------


def test_the_longest_night_against_astropys_sun():
    """The closed form against astropy's Sun (get_body) minute by minute, the June solstice
    of 2027 at the demo site's latitude: within 10 min."""
    from astropy import units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body
    from astropy.time import Time

    from planner.sky.sidereal import longest_night_hours

    lat, lon = -30.95, -70.45
    where = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, 2310 * u.m)
    t = Time("2027-06-21T16:00:00", scale="utc") + np.arange(0, 24 * 60) * u.min
    alt = get_body("sun", t, where).transform_to(AltAz(obstime=t, location=where)).alt.deg
    dark_h = np.count_nonzero(alt < -18.0) / 60.0
    assert abs(longest_night_hours(lat, -18.0) - dark_h) < 10 / 60
    assert longest_night_hours(89.0, -18.0) == 24.0  # the polar night


def test_a_frame_is_never_longer_than_the_night_and_a_long_stack_is_said_loudly():
    r = gcplan("expose", "--site", "demo", "--filter", "V", "--mag", "23", "--snr", "100", "--json")
    assert r.returncode == 0
    import json

    plan = json.loads(r.stdout)
    assert plan["frame_s"] <= 11.0 * 3600 and plan["frames"] > 1
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("gcplan: warning: ") and "several nights" in lines[0]


@pytest.mark.parametrize("argv", [
    ["--filter", "U", "--target", "Pal 4", "--level", "turnoff", "--snr", "500"],
])
def test_an_exposure_of_years_is_an_error(argv):
    one_line_error(gcplan("expose", "--site", "demo", *argv), "more than a year of nights")


@pytest.mark.parametrize("mag", ["-100", "1e308", "nan", "36"])
def test_an_absurd_magnitude_is_refused_with_the_range_and_its_reason(mag):
    one_line_error(gcplan("expose", "--site", "demo", "--filter", "V", f"--mag={mag}", "--snr", "50"),
                   "--mag", "Sirius")


# --- campaign files, visits, times ----------------------------------------------------


@pytest.mark.parametrize("edit, words", [
    (lambda s: s.replace('targets = ["NGC 362", "NGC 2808"]', "targets = []"), ["targets", "empty"]),
    (lambda s: s.replace("visits_per_night = 12", "visits_per_night = 1.5"), ["visits_per_night", "whole"]),
    (lambda s: s.replace("phase_bins = 20", "phase_bins = 20.0"), ["phase_bins", "whole"]),
])
def test_campaign_counts_that_would_plan_nothing_or_be_truncated_are_refused(tmp_path, edit, words):
    one_line_error(gcplan("campaign", "--campaign", _campaign(tmp_path, edit)), *words)


def test_a_visit_key_given_twice_is_refused():
    one_line_error(gcplan("schedule", "--site", "demo", "--date", "2027-05-13", "--target", "NGC 104",
                          "--visit", "filter=V,frames=2,exposure=60,frames=3"), "frames", "twice")


@pytest.mark.parametrize("text, words", [
    ("time_utc,jd_utc\n2027-06-10T03:00:00,2461566.625\n", ["time_utc", "jd_utc"]),
    ("time_utc\n0001-06-10T03:00:00\n", ["not a plausible time", "0001-06-10"]),
    ("time_utc\n9999-06-10T03:00:00\n", ["not a plausible time"]),
])
def test_times_files_that_pretend_are_refused(tmp_path, text, words):
    (tmp_path / "times.csv").write_text(text)
    one_line_error(gcplan("phases", "--variables", DATA / "variables_good.csv", "--times", tmp_path / "times.csv"),
                   *words)


@pytest.mark.parametrize("command", [["night", "--date", "2027-05-13"], ["expose", "--filter", "V",
                                                                          "--level", "hb", "--snr", "50"]])
def test_an_empty_target_says_empty(command):
    one_line_error(gcplan(*command, "--site", "demo", "--target", " "), "empty")


@pytest.mark.slow
def test_recording_a_night_twice_stores_its_visits_once(tmp_path):
    camp = _campaign(tmp_path, lambda s: s)
    for _ in range(2):
        r = gcplan("schedule", "--campaign", camp, "--date", "2027-01-05", "--record", "--json",
                   stdout=subprocess.DEVNULL, timeout=180)
        assert r.returncode == 0, r.stderr
    db = sqlite3.connect(f"file:{tmp_path / 'logbook.sqlite'}?mode=ro", uri=True)
    total, distinct = db.execute("SELECT COUNT(*), COUNT(DISTINCT plan_id || '/' || line) "
                                 "FROM planned_visits").fetchone()
    db.close()
    assert total == distinct > 0


# --- words that mislead ---------------------------------------------------------------


@pytest.mark.slow
def test_a_polar_summer_campaign_says_there_is_no_dark_time(tmp_path):
    camp = _campaign(tmp_path, lambda s: s.replace('site = "demo"', 'site = "78.2,15.6"')
                     .replace("first_night = 2027-01-05", "first_night = 2027-06-10")
                     .replace("last_night = 2027-01-18", "last_night = 2027-06-12"))
    line = one_line_error(gcplan("campaign", "--campaign", camp, timeout=180), "no night", "usable time")
    assert "S/N" not in line


def test_a_date_the_local_calendar_skipped_is_named_as_such():
    """Samoa moved across the date line after 2011-12-29 (tzdata: Pacific/Apia went from
    UTC−10 to UTC+14), so 2011-12-30 has no local hours."""
    from planner.sky.nights import date_skipped

    assert date_skipped(dt.date(2011, 12, 30), "Pacific/Apia")
    assert not date_skipped(dt.date(2011, 12, 29), "Pacific/Apia")
    assert not date_skipped(dt.date(2027, 3, 14), "America/New_York")  # a spring-forward day exists
    line = one_line_error(gcplan("night", "--site=-13.8,-171.8", "--timezone", "Pacific/Apia", "--date",
                                 "2011-12-30", "--target", "NGC 104"), "does not exist in Pacific/Apia")
    assert "2011-12-29" in line and "darkness" not in line


def test_a_window_across_a_clock_change_shows_each_ends_offset():
    r = gcplan("schedule", "--site=40.7,-74", "--timezone", "America/New_York", "--date", "2027-03-13",
               "--target", "NGC 6205", "--visit", "filter=V,exposure=60")
    assert r.returncode == 0, r.stderr
    usable = next(line for line in r.stdout.splitlines() if "usable" in line)
    # tzdata: New York leaves EST (UTC−5) for EDT (UTC−4) at 02:00 on 2027-03-14.
    z = ZoneInfo("America/New_York")
    assert dt.datetime(2027, 3, 13, 20, tzinfo=z).utcoffset() != dt.datetime(2027, 3, 14, 5, tzinfo=z).utcoffset()
    assert "(UTC−05:00)–" in usable and "(UTC−04:00) local" in usable, usable


def test_library_warnings_are_said_in_gcplans_words():
    r = gcplan("night", "--site", "demo", "--date", "2099-12-31", "--target", "NGC 104")
    assert r.returncode == 0
    lines = r.stderr.strip().splitlines()
    assert lines and all(line.startswith("gcplan: warning: ") for line in lines), r.stderr
    assert "ErfaWarning" not in r.stderr and "erfa/core.py" not in r.stderr
    assert any("1900–2100" in line for line in lines)


def test_numpy_warnings_are_said_once_in_one_line():
    from planner.cli import library_warnings
    import warnings

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        np.float64(1.0) / np.float64(0.0)
        np.float64(1.0) / np.float64(0.0)
    assert library_warnings(caught) == [
        "a numerical problem in the computation (divide by zero encountered in scalar divide); values it "
        "touched are left out or shown as not available"]
