"""``gcplan log``: the sub-commands end to end through :func:`planner.cli.main`.

External references: astropy's ECSV reader for the export, the PDF page sizes
of ISO 216 A4 (210 × 297 mm = 595.3 × 841.9 pt) and US letter (8.5 × 11 in =
612 × 792 pt), and the almanac's own times for the printed header.
"""

from __future__ import annotations

import csv
import datetime as dt
import json
import os
import re
import signal
import subprocess
import sys
import time

import pytest

from planner.cli import main
from planner.logbook.store import Logbook
from planner.reports.demo_night import write_invented_frame

NIGHT = "2027-05-12"
CARDS = {"DATE-OBS": "2027-05-13T03:10:00", "EXPTIME": 60.0, "OBJECT": "NGC 2808", "FILTER": "V"}


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def book(tmp_path):
    return str(tmp_path / "log.sqlite")


def _frames(folder, n=3):
    folder.mkdir(exist_ok=True)
    for i in range(n):
        write_invented_frame(folder / f"f{i}.fits", CARDS | {"DATE-OBS": f"2027-05-13T03:1{i}:00"}, seed=i)


def test_ingest_json_reports_added_and_skipped(tmp_path, book, capsys):
    _frames(tmp_path / "frames")
    (tmp_path / "frames" / "broken.fits").write_bytes(b"SIMPLE  =")
    code, out, err = run(capsys, "log", "ingest", str(tmp_path / "frames"), "--logbook", book, "--site", "demo", "--json")
    assert code == 0 and err == f"gcplan: created a new logbook at {book}\n"  # said once, on stderr
    report = json.loads(out)
    assert report["added"] == 3
    assert [s["file"].rsplit("/", 1)[-1] for s in report["skipped"]] == ["broken.fits"]
    assert report["skipped"][0]["reason"]
    # again: nothing new, and the site is remembered
    code, out, _ = run(capsys, "log", "ingest", str(tmp_path / "frames"), "--logbook", book, "--json")
    assert code == 0 and json.loads(out)["added"] == 0


def test_add_note_weather_and_list(tmp_path, book, capsys):
    code, out, _ = run(capsys, "log", "add", "--logbook", book, "--site", "demo", "--target", "NGC 104",
                       "--filter", "V", "--exposure", "30", "--frames", "4", "--time", "2027-05-13T01:00:00Z",
                       "--note", "focus ok", "--seeing", "1.1")
    assert code == 0 and out.strip().isdigit()
    entry_id = int(out)
    assert run(capsys, "log", "note", "cirrus in the west", "--logbook", book, "--time", "2027-05-13T02:00Z")[0] == 0
    assert run(capsys, "log", "weather", "closed", "--logbook", book, "--time", "2027-05-13T02:30Z")[0] == 0
    assert run(capsys, "log", "weather", "open", "--logbook", book, "--time", "2027-05-13T03:00Z")[0] == 0
    code, out, _ = run(capsys, "log", "list", "--logbook", book, "--night", NIGHT, "--json")
    entries = json.loads(out)["entries"]
    assert [e["id"] for e in entries] == [entry_id]
    e = entries[0]
    assert {"id", "time", "target", "filter", "exposure_s", "frames", "airmass", "file", "note"} <= set(e)
    assert (e["time"], e["target"], e["filter"], e["exposure_s"], e["frames"], e["note"]) == (
        "2027-05-13T01:00:00Z", "NGC 104", "V", 30.0, 4, "focus ok")
    assert e["airmass"] == pytest.approx(_astropy_airmass("NGC 104", "2027-05-13T01:01:00"), rel=2e-4)
    # another night: empty
    code, out, _ = run(capsys, "log", "list", "--logbook", book, "--night", "2027-05-20", "--json")
    assert json.loads(out)["entries"] == []
    with Logbook(book) as b:
        assert [w.state for w in b.weather()] == ["closed", "open"]
        assert [n.text for n in b.notes()] == ["cirrus in the west"]


def _astropy_airmass(name: str, utc: str) -> float:
    """Kasten & Young airmass of a catalog cluster from astropy's full AltAz transform (no refraction),
    at the demo site: the reference for a computed entry (mid-sequence: 4 × 30 s from 01:00 is 01:01)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    from planner.inputs.catalog import load_catalog
    from planner.inputs.sites import resolve_site
    from planner.sky.airmass import airmass_kasten_young

    loc = resolve_site("demo").location
    hit = load_catalog().lookup(name)
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    alt = SkyCoord(hit.ra_deg * u.deg, hit.dec_deg * u.deg).transform_to(
        AltAz(obstime=Time(utc, scale="utc"), location=where, pressure=0 * u.hPa)).alt.deg
    return float(airmass_kasten_young(alt))


@pytest.mark.parametrize("argv, fragment", [
    (["log", "add", "--target", "NGC 104", "--filter", "V", "--exposure", "-3"], "--exposure"),
    (["log", "add", "--target", "NGC 104", "--filter", "V", "--exposure", "3", "--frames", "0"], "--frames"),
    (["log", "add", "--target", "NGC 104", "--filter", "V", "--exposure", "3", "--time", "tonight"], "--time"),
    (["log", "list", "--night", "12/05/2027"], "--night"),
    (["log", "print", "--night", NIGHT], "no site"),
])
def test_bad_input_is_one_line_exit_2(book, capsys, argv, fragment):
    Logbook(book).close()  # a reading action needs the logbook to exist
    code, out, err = run(capsys, *argv, "--logbook", book)
    assert code == 2 and out == ""
    assert err.startswith("gcplan: error:") and err.count("\n") == 1 and fragment in err


@pytest.mark.parametrize("kind", ["parent_is_file", "missing_folder"])
def test_unwritable_logbook_is_one_line_exit_2(tmp_path, capsys, kind):
    (tmp_path / "plain").write_text("x")
    path = tmp_path / ("plain" if kind == "parent_is_file" else "nowhere") / "log.sqlite"
    code, out, err = run(capsys, "log", "note", "hello", "--logbook", str(path))
    assert code == 2 and out == ""
    assert err.startswith("gcplan: error:") and err.count("\n") == 1 and str(path) in err


def test_export_csv_and_ecsv_round_trip(tmp_path, book, capsys):
    from astropy.table import Table

    _frames(tmp_path / "frames")
    run(capsys, "log", "ingest", str(tmp_path / "frames"), "--logbook", book, "--site", "demo")
    run(capsys, "log", "add", "--logbook", book, "--target", "NGC 104", "--filter", "I", "--exposure", "5",
        "--time", "2027-05-13T04:00:00Z")
    listed = json.loads(run(capsys, "log", "list", "--logbook", book, "--json")[1])["entries"]
    assert run(capsys, "log", "export", "--logbook", book, "--format", "ecsv", "--out", str(tmp_path / "x.ecsv"))[0] == 0
    assert run(capsys, "log", "export", "--logbook", book, "--format", "csv", "--out", str(tmp_path / "x.csv"))[0] == 0
    table = Table.read(tmp_path / "x.ecsv", format="ascii.ecsv")
    assert list(table["target"]) == [e["target"] for e in listed]
    assert list(table["time"]) == [e["time"] for e in listed]
    assert table["exposure_s"].unit == "s"
    assert table["file"].mask[-1]  # the manual entry has no file: masked, not "None"
    with open(tmp_path / "x.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert [float(r["airmass"]) for r in rows] == pytest.approx([e["airmass"] for e in listed])
    code, _, err = run(capsys, "log", "export", "--logbook", book, "--format", "csv", "--out", str(tmp_path / "x.txt"))
    assert code == 2 and "--out" in err


def _page_sizes_pt(pdf_bytes: bytes) -> list[tuple[float, float]]:
    return [(float(w), float(h)) for w, h in re.findall(rb"/MediaBox \[ ?0 0 ([\d.]+) ([\d.]+) ?\]", pdf_bytes)]


@pytest.mark.slow
def test_print_text_and_pdf_on_a4_and_letter(tmp_path, book, capsys):
    from planner.inputs.sites import resolve_site
    from planner.sky.almanac import almanac_for_nights
    from planner.sky.nights import local_hhmm

    folder = tmp_path / "frames"
    folder.mkdir()
    for i in range(70):  # more rows than one page holds: the table must continue
        write_invented_frame(folder / f"f{i:02d}.fits",
                             CARDS | {"DATE-OBS": (dt.datetime(2027, 5, 13, 1, 0) + dt.timedelta(minutes=3 * i)).isoformat()},
                             shape=(4, 4), seed=i)
    run(capsys, "log", "ingest", str(folder), "--logbook", book, "--site", "demo")
    run(capsys, "log", "observer", "A. Tester", "--logbook", book, "--night", NIGHT)
    code, out, _ = run(capsys, "log", "print", "--logbook", book, "--night", NIGHT)
    assert code == 0
    alm = almanac_for_nights(resolve_site("demo"), [dt.date(2027, 5, 12)])
    sunset = local_hhmm(alm.sunset_jd[0], "America/Santiago")
    assert re.search(rf"^sunset\s+{sunset}\b", out, re.M)
    assert "A. Tester" in out and out.count("NGC 2808") >= 70
    sizes = {}
    for paper in ("a4", "letter"):
        pdf = tmp_path / f"{paper}.pdf"
        code, out, _ = run(capsys, "log", "print", "--logbook", book, "--night", NIGHT, "--pdf", str(pdf),
                           "--paper", paper)
        assert code == 0
        sizes[paper] = _page_sizes_pt(pdf.read_bytes())
    # ISO 216 A4 portrait, US letter portrait; the last page (the chart) landscape
    a4, letter = sizes["a4"], sizes["letter"]
    assert len(a4) >= 3 and len(letter) >= 3
    assert all(abs(w - 595.3) < 1 and abs(h - 841.9) < 1 for w, h in a4[:-1])
    assert abs(a4[-1][0] - 841.9) < 1 and abs(a4[-1][1] - 595.3) < 1
    assert all(abs(w - 612) < 1 and abs(h - 792) < 1 for w, h in letter[:-1])


def test_cli_watcher_and_manual_entries_at_once_then_ctrl_c(tmp_path, book, capsys):
    folder = tmp_path / "frames"
    folder.mkdir()
    Logbook(book).close()
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    watcher = subprocess.Popen([sys.executable, "-m", "planner", "log", "ingest", str(folder), "--watch",
                                "--interval", "0.1", "--logbook", book, "--site", "demo"],
                               stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    try:
        assert "watching" in watcher.stdout.readline()
        for i in range(15):
            write_invented_frame(tmp_path / "tmp.fits", CARDS | {"DATE-OBS": f"2027-05-13T03:{i:02d}:00",
                                                                "AIRMASS": 1.3}, shape=(4, 4), seed=i)
            os.replace(tmp_path / "tmp.fits", folder / f"f{i:02d}.fits")
            code, out, err = run(capsys, "log", "add", "--logbook", book, "--target", "NGC 104", "--filter", "V",
                                 "--exposure", "10", "--time", f"2027-05-13T04:{i:02d}:00Z")
            assert code == 0, err
        deadline = time.monotonic() + 15
        while time.monotonic() < deadline:
            with Logbook(book) as b:
                if b.count_entries() == 30:
                    break
            time.sleep(0.1)
    finally:
        watcher.send_signal(signal.SIGINT)
        out, err = watcher.communicate(timeout=20)
    assert watcher.returncode == 0, err
    assert "Traceback" not in err
    with Logbook(book) as b:
        entries = b.entries()
        assert b.integrity_ok()
    assert sum(e.source == "fits" for e in entries) == 15 and sum(e.source == "manual" for e in entries) == 15


def test_default_logbook_is_in_the_user_data_folder(tmp_path, monkeypatch, capsys):
    # platformdirs follows the XDG base directory spec on Linux: $XDG_DATA_HOME/<app>
    if sys.platform != "linux":
        pytest.skip("XDG_DATA_HOME is the Linux convention")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))
    code, out, _ = run(capsys, "log", "note", "first light")
    assert code == 0
    with Logbook(tmp_path / "data" / "gcplan" / "logbook.sqlite") as b:
        assert [n.text for n in b.notes()] == ["first light"]


def test_demo_log_is_invented_frames_of_the_demo_clusters(tmp_path):
    from astropy.io import fits

    from planner.inputs.sites import resolve_site
    from planner.reports.demo_night import write_demo_log

    result = write_demo_log(tmp_path, resolve_site("demo"), dt.date(2027, 5, 12))
    assert result["added"] > 20 and result["skipped"] == 0
    assert result["pdf"] == tmp_path / "nightlog.pdf" and result["pdf"].read_bytes().startswith(b"%PDF")
    with Logbook(tmp_path / "demo_logbook.sqlite") as b:
        targets = {e.target for e in b.entries()}
        assert b.weather() and b.observers("2027-05-12")
    assert targets <= {"NGC 104", "NGC 362", "NGC 1851", "NGC 2808", "NGC 3201"} and len(targets) >= 3
    first = sorted((tmp_path / "demo_frames").glob("*.fits"))[0]
    header = fits.getheader(first)
    assert "INVENTED" in str(header["COMMENT"])
    assert {"DATE-OBS", "EXPTIME", "OBJECT", "FILTER", "RA", "DEC"} <= set(header)


def test_recorded_plan_is_marked_done_by_ingested_frames(tmp_path, capsys):
    """schedule --record stores the night's planned visits; frames of a planned
    target and filter, ingested afterwards, mark the matching visit done."""
    import shutil

    from planner.inputs.resources import targets_dir
    from planner.sky.nights import jd_to_datetime

    camp_dir = tmp_path / "camp"
    shutil.copytree(targets_dir() / "demo", camp_dir)
    campaign = camp_dir / "campaign.toml"
    code, out, err = run(capsys, "schedule", "--campaign", str(campaign), "--date", "2027-01-06", "--record", "--json")
    assert code == 0, err
    plan = json.loads(out)
    with Logbook(camp_dir / "logbook.sqlite") as lb:
        planned = lb.planned_visits("2027-01-06")
    assert len(planned) == sum(len(v["exposures"]) for v in plan["visits"]) > 0
    first = planned[0]
    frames = tmp_path / "frames"
    frames.mkdir()
    mid = jd_to_datetime(0.5 * (first.start_jd + first.end_jd))
    write_invented_frame(frames / "f1.fits", {
        "DATE-OBS": mid.strftime("%Y-%m-%dT%H:%M:%S"), "EXPTIME": float(first.exposure_s),
        "OBJECT": first.target, "FILTER": first.filter})
    code, _, err = run(capsys, "log", "ingest", str(frames), "--campaign", str(campaign), "--site", "demo")
    assert code == 0, err
    with Logbook(camp_dir / "logbook.sqlite") as lb:
        done = [v for v in lb.planned_visits("2027-01-06") if v.done_entry_id is not None]
    assert len(done) == 1 and done[0].target == first.target and done[0].filter == first.filter


def test_print_json_holds_the_night_almanac_entries_and_weather(tmp_path, book, capsys):
    from planner.inputs.sites import resolve_site
    from planner.sky.almanac import almanac_for_nights
    from planner.sky.nights import iso_utc

    _frames(tmp_path / "frames")
    run(capsys, "log", "ingest", str(tmp_path / "frames"), "--logbook", book, "--site", "demo")
    run(capsys, "log", "weather", "closed", "--logbook", book, "--time", "2027-05-13T04:00Z", "--note", "fog")
    run(capsys, "log", "note", "dew on the secondary", "--logbook", book, "--time", "2027-05-13T04:05Z")
    code, out, err = run(capsys, "log", "print", "--logbook", book, "--night", NIGHT, "--json")
    assert code == 0 and err == ""
    data = json.loads(out)
    assert data["night"] == NIGHT and data["site"]["timezone"] == "America/Santiago"
    alm = almanac_for_nights(resolve_site("demo"), [dt.date(2027, 5, 12)])
    assert data["almanac"]["sun"]["set"] == iso_utc(alm.sunset_jd[0])
    assert data["almanac"]["twilight"]["astronomical"]["morning"] == iso_utc(alm.morning_jd["astronomical"][0])
    assert [e["time"] for e in data["entries"]] == [f"2027-05-13T03:1{i}:00Z" for i in range(3)]
    assert {e["target"] for e in data["entries"]} == {"NGC 2808"}
    assert data["weather"] == [{"id": data["weather"][0]["id"], "time": "2027-05-13T04:00:00Z", "state": "closed",
                                "note": "fog"}]
    assert [n["text"] for n in data["notes"]] == ["dew on the secondary"]
    # the PDF and the JSON together: the file is written, stdout stays JSON
    pdf = tmp_path / "log.pdf"
    code, out, _ = run(capsys, "log", "print", "--logbook", book, "--night", NIGHT, "--json", "--pdf", str(pdf))
    assert code == 0 and json.loads(out)["night"] == NIGHT and pdf.read_bytes().startswith(b"%PDF")
