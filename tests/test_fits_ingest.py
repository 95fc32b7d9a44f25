"""FITS ingestion: headers, keyword mapping, broken and half-written frames, the airmass.

The airmass check is against astropy's full ICRS → AltAz transform (no
refraction) fed to the same Kasten & Young (1989) formula; the parsing checks
against astropy.io.fits writing the frames.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.config import configure_runtime
from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.logbook.ingest import (
    FrameProblem,
    airmass_at,
    ingest_folder,
    parse_angle_deg,
    read_frame_header,
    watch_folder,
)
from planner.logbook.store import Logbook
from planner.reports.demo_night import write_invented_frame
from planner.sky.nights import datetime_to_jd

CARDS = {"DATE-OBS": "2027-05-13T03:10:00.5", "EXPTIME": 120.0, "OBJECT": "NGC 362", "FILTER": "V",
         "RA": "01:03:14.26", "DEC": "-70:50:55.6"}


@pytest.fixture(scope="module")
def site():
    configure_runtime()
    return resolve_site("demo")


def test_header_fields_are_read(tmp_path):
    import datetime as dt

    h = read_frame_header(write_invented_frame(tmp_path / "a.fits", CARDS))
    assert h.time_jd == pytest.approx(datetime_to_jd(dt.datetime(2027, 5, 13, 3, 10, 0, 500000)), abs=1e-9)
    assert (h.exposure_s, h.target, h.filter, h.airmass) == (120.0, "NGC 362", "V", None)
    # 01h03m14.26s = 15.809417°; -70°50'55.6" = -70.848778° (arithmetic)
    assert h.ra_deg == pytest.approx(15.0 * (1 + 3 / 60 + 14.26 / 3600), abs=1e-9)
    assert h.dec_deg == pytest.approx(-(70 + 50 / 60 + 55.6 / 3600), abs=1e-9)


def test_the_sites_keyword_mapping_is_used(tmp_path):
    # The bundled 4 m template maps FILTER to FILTNAME (its [camera.fits_keywords]).
    site = resolve_site("template_4m_wide_field")
    assert site.camera.fits_keywords["FILTER"] == "FILTNAME"
    cards = {k: v for k, v in CARDS.items() if k != "FILTER"} | {"FILTNAME": "Ic", "FILTER": "wrong"}
    path = write_invented_frame(tmp_path / "a.fits", cards)
    assert read_frame_header(path, site.camera.fits_keywords).filter == "Ic"
    assert read_frame_header(path).filter == "wrong"


def test_date_and_time_in_two_keywords(tmp_path):
    cards = CARDS | {"DATE-OBS": "2027-05-13", "TIME-OBS": "03:10:00.5"}
    h = read_frame_header(write_invented_frame(tmp_path / "a.fits", cards))
    assert h.time_jd == pytest.approx(read_frame_header(write_invented_frame(tmp_path / "b.fits", CARDS)).time_jd)


@pytest.mark.parametrize("value, hours, expected", [
    (15.5, True, 15.5), ("15.5", True, 15.5), ("1 2 3", True, 15 * (1 + 2 / 60 + 3 / 3600)),
    ("-0:30:00", False, -0.5), ("+45d30m00s", False, 45.5)])
def test_angles(value, hours, expected):
    assert parse_angle_deg(value, hours, "RA") == pytest.approx(expected)


@pytest.mark.parametrize("value", ["north", "25:00:00x", 400.0])
def test_bad_angles(value):
    with pytest.raises(FrameProblem, match="RA"):
        parse_angle_deg(value, True, "RA")


@pytest.mark.parametrize("drop, reason", [("DATE-OBS", "no DATE-OBS"), ("EXPTIME", "no EXPTIME"),
                                          ("OBJECT", "no OBJECT")])
def test_missing_keywords_are_named(tmp_path, drop, reason):
    path = write_invented_frame(tmp_path / "a.fits", {k: v for k, v in CARDS.items() if k != drop})
    with pytest.raises(FrameProblem, match=reason):
        read_frame_header(path)


def test_missing_mapped_keyword_names_both(tmp_path):
    path = write_invented_frame(tmp_path / "a.fits", {k: v for k, v in CARDS.items() if k != "OBJECT"})
    with pytest.raises(FrameProblem, match=r"TARGNAME \(for OBJECT\)"):
        read_frame_header(path, {"OBJECT": "TARGNAME"})


@pytest.mark.parametrize("cards, reason", [
    (CARDS | {"DATE-OBS": "last night"}, "DATE-OBS 'last night'"),
    (CARDS | {"EXPTIME": "long"}, "EXPTIME 'long' is not a number"),
    (CARDS | {"EXPTIME": -5.0}, "must be ≥ 0"),
    (CARDS | {"DEC": "-95:00:00"}, "DEC"),
])
def test_malformed_values_are_reasons(tmp_path, cards, reason):
    with pytest.raises(FrameProblem, match=reason):
        read_frame_header(write_invented_frame(tmp_path / "a.fits", cards))


def _broken_files(tmp_path):
    good = write_invented_frame(tmp_path / "good.fits", CARDS, shape=(64, 64)).read_bytes()
    (tmp_path / "empty.fits").write_bytes(b"")
    (tmp_path / "noise.fits").write_bytes(np.random.default_rng(1).bytes(5760))
    (tmp_path / "no_end.fits").write_bytes(good[:2880].replace(b"END" + b" " * 77, b"X" * 80))
    (tmp_path / "half.fits").write_bytes(good[: len(good) // 2])  # mid-write: the data cut
    (tmp_path / "header_only.fits").write_bytes(good[:1600])  # cut inside the header
    return good


def test_broken_files_are_skipped_with_reasons_and_retried(tmp_path, site):
    frames = tmp_path / "frames"
    frames.mkdir()
    good = _broken_files(frames)
    with Logbook(tmp_path / "log.sqlite") as book:
        report = ingest_folder(book, frames, site, load_catalog())
        assert len(report.added) == 1
        reasons = dict((p.rsplit("/", 1)[-1], r) for p, r in report.skipped)
        assert set(reasons) == {"empty.fits", "noise.fits", "no_end.fits", "half.fits", "header_only.fits"}
        assert "still being written" in reasons["half.fits"]
        # the writer finishes: the next pass takes the frame, the others are still skipped
        (frames / "half.fits").write_bytes(good)
        (frames / "half.fits").write_bytes(good.replace(b"NGC 362", b"NGC 104"))
        again = ingest_folder(book, frames, site, load_catalog())
        assert len(again.added) == 1 and len(again.skipped) == 4 and again.already == 1
        assert sorted(e.target for e in book.entries()) == ["NGC 104", "NGC 362"]
        assert book.integrity_ok()


def test_a_frame_twice_is_one_entry_even_copied(tmp_path, site):
    frames = tmp_path / "frames"
    frames.mkdir()
    path = write_invented_frame(frames / "a.fits", CARDS)
    with Logbook(tmp_path / "log.sqlite") as book:
        assert len(ingest_folder(book, frames, site).added) == 1
        (frames / "copy.fits").write_bytes(path.read_bytes())  # same content, another name
        second = ingest_folder(book, frames, site)
        assert second.added == () and second.already == 2
        assert book.count_entries() == 1


def test_header_airmass_is_kept_and_an_absurd_one_recomputed(tmp_path, site):
    frames = tmp_path / "frames"
    frames.mkdir()
    write_invented_frame(frames / "a.fits", CARDS | {"AIRMASS": 1.234})
    write_invented_frame(frames / "b.fits", CARDS | {"AIRMASS": 0.2})
    with Logbook(tmp_path / "log.sqlite") as book:
        ingest_folder(book, frames, site)
        a, b = sorted(book.entries(), key=lambda e: e.file)
    assert (a.airmass, a.airmass_source) == (1.234, "header")
    # recomputed at mid-exposure (NGC 362 is low at 03:10 UTC in May: about 4.7)
    mid = b.time_jd + 60.0 / 86400.0
    assert b.airmass_source == "computed"
    assert b.airmass == pytest.approx(float(airmass_at(site, [b.ra_deg], [b.dec_deg], [mid])[0]), rel=1e-12)


def test_position_from_the_catalog_when_the_header_has_none(tmp_path, site):
    frames = tmp_path / "frames"
    frames.mkdir()
    write_invented_frame(frames / "a.fits", {k: v for k, v in CARDS.items() if k not in ("RA", "DEC")})
    write_invented_frame(frames / "b.fits", CARDS)
    write_invented_frame(frames / "c.fits", {k: v for k, v in CARDS.items() if k not in ("RA", "DEC")}
                         | {"OBJECT": "flat field"})
    with Logbook(tmp_path / "log.sqlite") as book:
        report = ingest_folder(book, frames, site, load_catalog())
        a, b, c = sorted(book.entries(), key=lambda e: e.file)
    # The catalog's NGC 362 and the header's (the same cluster) agree to well under 0.001 in airmass.
    assert a.airmass == pytest.approx(b.airmass, abs=1e-3)
    assert c.airmass is None and any("flat field" in w for w in report.warnings)


def test_airmass_agrees_with_astropy_altaz(site):
    """Tolerance: 2″ in altitude (the core's apparent place and sidereal time are held to
    astropy elsewhere to under 1″; measured here 0.7″), and the same airmass formula."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    from planner.sky.airmass import airmass_kasten_young, altitude_for_airmass

    rng = np.random.default_rng(7)
    n = 120
    ra, dec = rng.uniform(0, 360, n), rng.uniform(-85, 25, n)
    jd = 2461538.5 + rng.uniform(0, 150, n)  # frames spread over a semester
    ours = airmass_at(site, ra, dec, jd)
    loc = site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    altaz = SkyCoord(ra * u.deg, dec * u.deg).transform_to(
        AltAz(obstime=Time(jd, format="jd", scale="utc"), location=where, pressure=0 * u.hPa))
    alt = altaz.alt.deg
    up = alt > 2.0
    assert np.all(np.isnan(ours[alt < -0.01]))  # below the horizon: no airmass
    assert up.sum() > 40
    assert np.all(np.abs(altitude_for_airmass(ours[up]) - alt[up]) * 3600 < 2.0)
    assert np.allclose(ours[up], airmass_kasten_young(alt[up]), rtol=2e-4)


def test_watch_ends_cleanly_on_ctrl_c(tmp_path, site):
    frames = tmp_path / "frames"
    frames.mkdir()
    write_invented_frame(frames / "a.fits", CARDS | {"AIRMASS": 1.5})
    passes = []

    def on_pass(report):
        passes.append(report)
        if len(passes) == 2:
            raise KeyboardInterrupt  # as Ctrl-C would, between two passes
        write_invented_frame(frames / "b.fits", CARDS | {"AIRMASS": 1.6})

    with Logbook(tmp_path / "log.sqlite") as book:
        total = watch_folder(book, frames, site, interval_s=0.01, on_pass=on_pass)
        assert len(total.added) == 2 and book.count_entries() == 2 and book.integrity_ok()
