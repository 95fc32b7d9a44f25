"""The on-disk cache of the Sun and Moon samples (planner.cache.sun_moon).

The reference is the computation without a cache (common practice, no source): the
ephemeris built from cached years must give the same samples — and so the same
Sun, Moon and sidereal time — as one built afresh.  The faults a cache meets are
made here: a corrupt file, a truncated one, one from another version, two
processes writing the same year at once, a folder that cannot be written.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
import warnings
from pathlib import Path

import numpy as np
import pytest

import planner.sky.ephemeris as ephemeris
from planner.cache.sun_moon import SunMoonStore, cache_folder, default_store
from planner.sky.ephemeris import (
    SAMPLE_FIELDS,
    SAMPLE_STEP_D,
    build_ephemeris,
    local_sidereal_deg,
    moon_radec_deg,
    site_geometry,
    sun_radec_deg,
    year_grid,
)

#: 2027-03-01 .. 2027-09-01 and 2027-12-10 .. 2028-01-20 (JD, UTC): a semester, and a
#: span across the new year (two files).
SEMESTER = (2461465.5, 2461649.5)
NEW_YEAR = (2461749.5, 2461790.5)
STEP = SAMPLE_STEP_D


def _ephemeris_arrays(eph):
    return {f: getattr(eph, f) for f in ("sun_ra_deg", "sun_dec_deg", "sun_distance_km", "moon_ra_deg",
                                          "moon_dec_deg", "moon_distance_km", "eqeq_deg", "dut1_s")}


def _assert_same(a, b):
    assert (a.jd0, a.step_d, a.jd_end) == (b.jd0, b.step_d, b.jd_end)
    for name, x in _ephemeris_arrays(a).items():
        y = getattr(b, name)
        scale = np.max(np.abs(y))
        np.testing.assert_allclose(x, y, rtol=0, atol=1e-12 * scale, err_msg=name)


def _counting(monkeypatch):
    """Count the years computed (each is one call of sun_moon_samples)."""
    calls = []
    real = ephemeris.sun_moon_samples

    def counted(jd):
        calls.append(len(jd))
        return real(jd)

    monkeypatch.setattr(ephemeris, "sun_moon_samples", counted)
    return calls


@pytest.mark.parametrize("span", [SEMESTER, NEW_YEAR], ids=["semester", "new year"])
def test_cached_years_give_the_fresh_ephemeris(tmp_path, monkeypatch, span):
    fresh = build_ephemeris(*span)
    store = SunMoonStore(tmp_path)
    calls = _counting(monkeypatch)
    cold = build_ephemeris(*span, store=store)
    years = sorted(p.name for p in tmp_path.iterdir())
    assert len(years) == len(calls) == (2 if span == NEW_YEAR else 1)
    warm = build_ephemeris(*span, store=store)
    assert len(calls) == len(years)  # nothing computed the second time
    _assert_same(cold, fresh)
    _assert_same(warm, fresh)
    # And what the kernels make of them: the Sun, the topocentric Moon, sidereal time.
    geo = site_geometry(-30.95, -70.45, 2310.0)
    jd = np.linspace(span[0], span[1], 5001)
    for f in (lambda e: sun_radec_deg(e, jd), lambda e: moon_radec_deg(e, geo, jd),
              lambda e: (local_sidereal_deg(e, jd, geo.longitude_deg),)):
        for x, y in zip(f(warm), f(fresh)):
            np.testing.assert_allclose(x, y, rtol=1e-12, atol=0)


def test_a_year_file_holds_the_whole_calendar_year(tmp_path):
    store = SunMoonStore(tmp_path)
    build_ephemeris(*SEMESTER, store=store)
    samples = store.load(2027, STEP)
    k0, k1 = year_grid(2027, STEP)
    assert set(samples) == set(SAMPLE_FIELDS)
    assert all(len(a) == k1 - k0 + 1 == 730 for a in samples.values())  # 365 days, two samples a day
    assert ephemeris.GRID_ORIGIN_JD + STEP * k0 == 2461406.5  # 2027-01-01 0h UTC


@pytest.fixture(scope="module")
def year_2027(tmp_path_factory):
    """A good file for 2027 (made once), copied by the tests that spoil it."""
    folder = tmp_path_factory.mktemp("good")
    build_ephemeris(*SEMESTER, store=SunMoonStore(folder))
    return next(folder.iterdir())


@pytest.mark.parametrize("spoil", ["garbage", "truncated", "empty", "field missing", "nan", "short"])
def test_a_spoilt_file_is_ignored_and_made_again(tmp_path, monkeypatch, year_2027, spoil):
    path = tmp_path / year_2027.name
    good = year_2027.read_bytes()
    if spoil == "garbage":
        path.write_bytes(b"not a cache file\n" * 100)
    elif spoil == "truncated":
        path.write_bytes(good[: len(good) // 2])
    elif spoil == "empty":
        path.write_bytes(b"")
    else:
        with np.load(year_2027) as data:
            arrays = {k: data[k] for k in data.files}
        if spoil == "field missing":
            del arrays["moon_dec_deg"]
        elif spoil == "nan":
            arrays["sun_dec_deg"] = arrays["sun_dec_deg"].copy()
            arrays["sun_dec_deg"][100] = np.nan
        else:
            arrays["eqeq_deg"] = arrays["eqeq_deg"][:-1]
        with open(path, "wb") as f:
            np.savez(f, **arrays)
    store = SunMoonStore(tmp_path)
    calls = _counting(monkeypatch)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        eph = build_ephemeris(*SEMESTER, store=store)
    assert len(calls) == 1  # made again ...
    _assert_same(eph, build_ephemeris(*SEMESTER))
    assert path.read_bytes() == good  # ... and saved over the spoilt file
    assert [p.name for p in tmp_path.iterdir()] == [path.name]  # no temporary file left


@pytest.mark.parametrize("other", [{"gcplan": "0.0.1"}, {"astropy": "5.0"}, {"pyerfa": "1.0"}, {"format": 0}])
def test_a_file_from_another_version_is_not_used(tmp_path, monkeypatch, year_2027, other):
    (tmp_path / year_2027.name).write_bytes(year_2027.read_bytes())
    mine = SunMoonStore(tmp_path)
    assert mine.load(2027, STEP) is not None
    theirs = SunMoonStore(tmp_path, stamp={**mine.stamp, **other})
    assert theirs.load(2027, STEP) is None
    calls = _counting(monkeypatch)
    build_ephemeris(*SEMESTER, store=theirs)
    assert len(calls) == 1
    assert theirs.load(2027, STEP) is not None and mine.load(2027, STEP) is None  # re-stamped


_WRITER = textwrap.dedent("""
    import sys
    from pathlib import Path
    from planner.cache.sun_moon import SunMoonStore
    from planner.sky.ephemeris import build_ephemeris
    store = SunMoonStore(Path(sys.argv[1]))
    for _ in range(3):  # make and write 2027 three times over, racing the other process
        for p in Path(sys.argv[1]).glob("*.npz"):
            p.unlink(missing_ok=True)
        build_ephemeris(2461465.5, 2461649.5, store=store)
    print("done")
""")


@pytest.mark.slow
def test_two_processes_writing_the_same_year(tmp_path):
    folder = tmp_path / "cache"
    procs = [subprocess.Popen([sys.executable, "-c", _WRITER, str(folder)], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True) for _ in range(2)]
    results = [p.communicate(timeout=300) for p in procs]
    for p, (out, err) in zip(procs, results):
        assert p.returncode == 0 and out.strip() == "done", err
        assert err == ""
    files = sorted(folder.iterdir())
    assert [f.suffix for f in files] == [".npz"]  # one whole file, no temporary left
    _assert_same(build_ephemeris(*SEMESTER, store=SunMoonStore(folder)), build_ephemeris(*SEMESTER))


def test_an_unwritable_folder_falls_back_to_computing(tmp_path, monkeypatch):
    blocker = tmp_path / "a file, not a folder"
    blocker.write_text("x")
    store = SunMoonStore(blocker / "sun-moon")
    calls = _counting(monkeypatch)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        eph = build_ephemeris(*SEMESTER, store=store)
        again = build_ephemeris(*SEMESTER, store=store)
    assert len(calls) == 2  # computed each time, nothing saved
    _assert_same(eph, build_ephemeris(*SEMESTER))
    _assert_same(again, eph)


@pytest.mark.slow
def test_the_command_with_an_unwritable_cache_folder(tmp_path):
    blocker = tmp_path / "blocker"
    blocker.write_text("x")
    gcplan = Path(sys.executable).with_name("gcplan")
    env = {**os.environ, "GCPLAN_CACHE_DIR": str(blocker)}
    done = subprocess.run([str(gcplan), "observability", "--site", "demo", "--target", "NGC 104",
                           "--start", "2027-06-01", "--end", "2027-06-03", "--json"],
                          capture_output=True, text=True, env=env, timeout=300)
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    assert '"name": "NGC 104"' in done.stdout


def test_where_the_cache_is(monkeypatch, tmp_path):
    monkeypatch.setenv("GCPLAN_CACHE_DIR", str(tmp_path))
    monkeypatch.delenv("GCPLAN_NO_CACHE", raising=False)
    assert cache_folder() == tmp_path / "sun-moon"
    assert default_store().folder == tmp_path / "sun-moon"
    monkeypatch.setenv("GCPLAN_NO_CACHE", "1")
    assert cache_folder() is None and default_store() is None
    monkeypatch.setenv("GCPLAN_NO_CACHE", "0")
    monkeypatch.delenv("GCPLAN_CACHE_DIR")
    from platformdirs import user_cache_dir

    assert cache_folder() == Path(user_cache_dir("gcplan", appauthor=False)) / "sun-moon"


def test_versions_read_without_importing_agree_with_the_packages():
    import astropy
    import erfa

    from planner.cache.sun_moon import package_version

    assert package_version("astropy") == astropy.__version__
    assert package_version("erfa") == erfa.__version__


_SCHEDULE = ["schedule", "--site", "demo", *[a for name in ("NGC 104", "NGC 362", "NGC 1851", "NGC 2808",
                                                            "NGC 6397", "NGC 6752") for a in ("--target", name)],
             "--date", "2027-05-12", "--visit", "filter=V,frames=2,exposure=300", "--max-airmass", "2", "--json"]
_NIGHT = ["night", "--site", "demo", "--targets", "all", "--date", "2027-01-10", "--json"]
_CAMPAIGN_NIGHT = ["schedule", "--campaign", str(Path(__file__).resolve().parents[1] / "targets" / "demo" / "campaign.toml"),
                   "--date", "2027-01-07", "--json"]

# Runs the command and says which heavy modules it loaded (stdout: the command's own, then one line).
_PROBE = textwrap.dedent("""
    import contextlib, io, json, sys
    import planner.sky.ephemeris as ephemeris
    from planner.cli import main
    made = []
    compute = ephemeris.sun_moon_samples
    ephemeris.sun_moon_samples = lambda jd: made.append(len(jd)) or compute(jd)
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        status = main(sys.argv[1:])
    print(out.getvalue())
    print(json.dumps({"status": status, "made": len(made), "coordinates": "astropy.coordinates" in sys.modules}))
""")


def _run(argv, env):
    done = subprocess.run([sys.executable, "-c", _PROBE, *argv], capture_output=True, text=True, env=env,
                          timeout=300)
    assert done.returncode == 0, done.stderr
    text, _, probe = done.stdout.rstrip("\n").rpartition("\n")
    probe = json.loads(probe)
    assert probe["status"] == 0, done.stderr
    return text, probe


@pytest.mark.slow
@pytest.mark.parametrize("argv", [_SCHEDULE, _NIGHT, _CAMPAIGN_NIGHT], ids=["schedule", "night", "campaign night"])
def test_plans_are_the_same_with_and_without_the_cache(tmp_path, argv):
    """The command's JSON without a cache, with an empty one and with a warm one: the same bytes;
    the warm run makes no Sun and Moon samples (they come from the file) and, for the one-night
    commands, loads no astropy.coordinates at all."""
    base = {k: v for k, v in os.environ.items() if k not in ("GCPLAN_CACHE_DIR", "GCPLAN_NO_CACHE")}
    fresh, p0 = _run(argv, {**base, "GCPLAN_NO_CACHE": "1"})
    cached = {**base, "GCPLAN_CACHE_DIR": str(tmp_path)}
    cold, p1 = _run(argv, cached)
    assert list((tmp_path / "sun-moon").glob("*.npz"))  # the year was saved
    warm, p2 = _run(argv, cached)
    assert json.loads(fresh)  # a whole JSON document
    assert cold == fresh and warm == fresh
    assert p0["made"] and p1["made"]  # computed with astropy's ephemeris
    assert not p2["made"]
    if argv is not _CAMPAIGN_NIGHT:  # (the demo campaign's ECSV target list is read by astropy.table, which loads it)
        assert p0["coordinates"] and not p2["coordinates"]
