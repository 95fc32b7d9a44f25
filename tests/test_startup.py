"""Start-up: the commands that need no sky computation load none of its libraries.

Each case runs ``gcplan`` in a fresh interpreter (the test process has long
imported everything) and lists the heavy packages it loaded: ``--help`` loads
none of numpy, astropy, scipy or matplotlib; ``expose`` (one question, a
magnitude or a cluster's level, and a batch) loads numpy but not
astropy.coordinates, scipy or matplotlib.  Common practice, no source: the
import cost of each is in DEVELOPERS.md's benchmarks (tests/benchmarks/bench_startup.py).
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

_PROBE = """
import contextlib, io, json, sys
from planner.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    try:
        status = main(sys.argv[1:])
    except SystemExit as exc:
        status = exc.code
heavy = ("numpy", "astropy", "astropy.coordinates", "astropy.table", "astropy.time", "scipy", "matplotlib")
print(json.dumps({"status": status, "loaded": [m for m in heavy if m in sys.modules]}))
"""


def _loaded(argv):
    done = subprocess.run([sys.executable, "-c", _PROBE, *argv], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout.strip().splitlines()[-1])
    assert result["status"] == 0, done.stderr
    return set(result["loaded"])


def test_help_loads_nothing_heavy():
    assert _loaded(["--help"]) == set()
    assert _loaded(["expose", "--help"]) == set()


@pytest.mark.parametrize("argv", [
    ["--filter", "V", "--mag", "17.5", "--snr", "80", "--json"],
    ["--filter", "I", "--target", "NGC 6397", "--level", "hb", "--snr", "50", "--field-radius", "2"],
])
def test_expose_loads_no_astropy_coordinates_scipy_or_matplotlib(argv):
    loaded = _loaded(["expose", "--site", "demo", *argv])
    assert "numpy" in loaded  # the exposure core's own
    assert not loaded & {"astropy.coordinates", "astropy.table", "scipy", "matplotlib"}, loaded


def test_expose_batch_loads_no_astropy_coordinates(tmp_path):
    path = tmp_path / "q.csv"
    path.write_text("target,mag,level,filter,snr\nNGC 6397,,hb,V,50\n,17,,I,80\n")
    loaded = _loaded(["expose", "--site", "demo", "--batch", str(path), "--out", str(tmp_path / "a.ecsv")])
    assert not loaded & {"astropy.coordinates", "astropy.table", "scipy", "matplotlib"}, loaded


@pytest.mark.parametrize("given, expected", [(None, "1"), ("2", "2")])
def test_openblas_on_one_thread_unless_the_user_chose(given, expected):
    """Set before numpy loads (OpenBLAS reads it then); a user's own setting is kept."""
    import os

    probe = ("import os, sys\nfrom planner.cli import main\nmain(sys.argv[1:])\n"
             "print(os.environ.get('OPENBLAS_NUM_THREADS'), 'numpy' in sys.modules)")
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    if given:
        env["OPENBLAS_NUM_THREADS"] = given
    done = subprocess.run([sys.executable, "-c", probe, "expose", "--site", "demo", "--filter", "V", "--mag", "17",
                           "--snr", "50"], capture_output=True, text=True, timeout=120, env=env)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip().splitlines()[-1] == f"{expected} True"


def test_a_warm_replan_without_a_logbook_reads_neither_sqlite_nor_the_iers_table(tmp_path, monkeypatch):
    """With the night kept in the cache, a re-plan takes the night's Sun and Moon from it
    (no IERS table, no year of samples) and, with no logbook file, opens no SQLite."""
    import shutil

    from planner.inputs.resources import targets_dir

    shutil.copytree(targets_dir() / "demo", tmp_path / "demo")
    monkeypatch.setenv("GCPLAN_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.delenv("GCPLAN_NO_CACHE", raising=False)
    argv = ["replan", "--campaign", str(tmp_path / "demo" / "campaign.toml"), "--date", "2027-01-06",
            "--now", "01:00", "--closed", "01:30-02:30", "--json"]
    probe = _PROBE.replace('"matplotlib")', '"matplotlib", "sqlite3", "planner.logbook.store", "astropy_iers_data")')
    done = []
    for _ in range(2):  # cold (the nights planned and kept), then warm
        run = subprocess.run([sys.executable, "-c", probe, *argv], capture_output=True, text=True, timeout=300)
        assert run.returncode == 0, run.stderr
        done.append(json.loads(run.stdout.strip().splitlines()[-1]))
    assert done[0]["status"] == done[1]["status"] == 0
    assert "astropy_iers_data" in done[0]["loaded"]  # cold: the IERS table was read
    assert not set(done[1]["loaded"]) & {"sqlite3", "planner.logbook.store", "astropy_iers_data", "astropy.time",
                                          "astropy.coordinates"}, done[1]["loaded"]


def test_the_exit_leaves_out_the_last_collection_but_not_the_output():
    """skip_final_collection: a cycle left at exit is not collected (its __del__ never runs),
    while what was printed still reaches the pipe."""
    code = """
from planner.config import skip_final_collection
class Loop:
    def __del__(self):
        print("collected", end="")
def loop():
    a = Loop()
    a.me = a
if __import__("sys").argv[1] == "skip":
    skip_final_collection()
    skip_final_collection()
loop()
print("written", end="")
"""
    runs = {how: subprocess.run([sys.executable, "-c", code, how], capture_output=True, text=True, timeout=60)
            for how in ("skip", "keep")}
    assert runs["keep"].stdout == "writtencollected"  # Python's own exit collects the cycle
    assert runs["skip"].stdout == "written" and runs["skip"].returncode == 0, runs["skip"].stderr
