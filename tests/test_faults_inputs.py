"""Fault injection on inputs: pipes and devices given as files, extreme values, and the
phase plot of a hundred thousand stars.

A FIFO as an input would block forever, a device never end: both are refused before
they are opened.  Commands that could hang run in a subprocess with a timeout.  Each
case is one line on stderr, exit 2 (common practice, no source), and creates nothing.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import numpy as np
import pytest

from helpers.faults import gcplan, one_line_error
from planner.logbook.store import Logbook

ROOT = Path(__file__).resolve().parents[1]
DATA = ROOT / "tests" / "data"
NIGHT = "2027-05-13"


@pytest.fixture
def fifo(tmp_path):
    path = tmp_path / "pipe.toml"
    os.mkfifo(path)
    return path


@pytest.mark.parametrize("where", ["site", "variables", "times", "campaign", "targets"])
def test_a_fifo_as_an_input_is_refused_at_once(tmp_path, fifo, where):
    csv_fifo = tmp_path / "pipe.csv"
    os.mkfifo(csv_fifo)
    argv = {
        "site": ["night", "--site", fifo, "--date", NIGHT, "--target", "NGC 104"],
        "variables": ["phases", "--variables", csv_fifo, "--times", DATA / "variables_times.csv"],
        "times": ["phases", "--variables", DATA / "variables_good.csv", "--times", csv_fifo],
        "campaign": ["campaign", "--campaign", fifo],
        "targets": ["night", "--site", "demo", "--date", NIGHT, "--targets", csv_fifo],
    }[where]
    one_line_error(gcplan(*argv, timeout=30), "not a regular file")


def test_a_fifo_named_without_a_suffix_is_still_a_path(tmp_path):
    pipe = tmp_path / "site"
    os.mkfifo(pipe)
    one_line_error(gcplan("night", "--site", "site", "--date", NIGHT, "--target", "NGC 104", cwd=tmp_path,
                          timeout=30), "not a regular file")


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom"])
def test_a_device_as_a_site_profile_is_refused(device):
    one_line_error(gcplan("night", "--site", device, "--date", NIGHT, "--target", "NGC 104", timeout=30),
                   "not a regular file")


def test_an_input_larger_than_any_profile_is_refused_unread(tmp_path):
    big = tmp_path / "big.toml"
    with open(big, "wb") as f:  # sparse: 1 GiB on paper, nothing on disk
        f.truncate(2**30)
    one_line_error(gcplan("night", "--site", big, "--date", NIGHT, "--target", "NGC 104", timeout=30),
                   "MiB")


@pytest.mark.parametrize("interval", ["nan", "inf", "0", "-1"])
def test_watch_refuses_an_interval_that_would_spin_or_never_scan(tmp_path, interval):
    (tmp_path / "frames").mkdir()
    one_line_error(gcplan("log", "ingest", tmp_path / "frames", "--watch", "--interval", interval,
                          "--logbook", tmp_path / "log.sqlite", "--site", "demo", timeout=30), "--interval")


ADD = ["log", "add", "--target", "NGC 104", "--filter", "V"]


@pytest.mark.parametrize("extra, word", [
    (["--exposure", "3", "--frames", "99999999999999999999"], "--frames"),
    (["--exposure", "inf"], "--exposure"),
    (["--exposure", "nan"], "--exposure"),
    (["--exposure", "1e300"], "--exposure"),
    (["--exposure", "600", "--frames", "1000"], "more than a day"),
    (["--exposure", "3", "--time", "0001-01-01T00:00"], "1900–2099"),
    (["--exposure", "3", "--time", "9999-12-31T23:59"], "1900–2099"),
])
def test_extreme_log_entries_are_refused_and_nothing_is_stored(tmp_path, extra, word):
    book = tmp_path / "log.sqlite"
    with Logbook(book) as b:
        first = b.add_note(2461538.5, "kept")
    one_line_error(gcplan(*ADD, *extra, "--logbook", book, "--site", "demo"), word)
    with Logbook(book, readonly=True) as b:
        assert b.count_entries() == 0 and [n.id for n in b.notes()] == [first]


def test_recover_refuses_a_negative_seed():
    one_line_error(gcplan("recover", "--site", "demo", "--population", "oosterhoff-1", "--nights", "3",
                          "--visits-per-night", "4", "--date", NIGHT, "--seed=-1"), "--seed")


@pytest.mark.slow
def test_recover_over_ten_years_is_refused_in_one_line_not_run_out_of_memory():
    """3700 nights × 4 visits: 2.2·10¹¹ terms in the period search (it asked for 12 GiB)."""
    r = gcplan("recover", "--site", "demo", "--population", "oosterhoff-1", "--nights", "3700",
               "--visits-per-night", "4", "--date", "2027-05-01", timeout=120)
    one_line_error(r, "period search", "fewer nights")


def test_the_period_search_in_blocks_gives_the_periodogram_of_one_block():
    """The blocks bound memory; the power is the same as one big block's (no source needed:
    the same sums in another order, to rounding)."""
    from planner.variables.period_search import _power, _prepare

    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0, 40, 60))
    mags = 15 + 0.4 * np.sin(2 * np.pi * t[None, :] / rng.uniform(0.3, 0.8, (7, 1))) + rng.normal(0, 0.02, (7, 60))
    prep = _prepare(t, mags, 0.02)
    freq = np.linspace(1.0, 5.0, 3001)
    whole = _power(prep, np.arange(7), freq, 1, max_elements=10**9)
    blocks = _power(prep, np.arange(7), freq, 1, max_elements=500)
    per_star = _power(prep, np.arange(7), np.broadcast_to(freq, (7, freq.size)).copy(), 2, max_elements=700)
    assert np.allclose(whole, blocks, rtol=1e-9, atol=1e-12)
    assert per_star.shape == whole.shape and np.isfinite(per_star).all()


@pytest.mark.slow
def test_the_phase_plot_of_a_hundred_thousand_stars_draws_a_readable_few(tmp_path):
    rng = np.random.default_rng(1)
    n = 100_000
    lines = ["id,period_d,epoch_hjd,ra_deg,dec_deg,type"] + [
        f"v{i},{p:.5f},{e:.4f},{ra:.4f},{dec:.4f},RRab" for i, (p, e, ra, dec) in enumerate(zip(
            rng.uniform(0.25, 0.9, n), 2461000 + rng.uniform(0, 1, n), rng.uniform(0, 360, n),
            rng.uniform(-80, 80, n)))]
    (tmp_path / "many.csv").write_text("\n".join(lines) + "\n")
    r = gcplan("phases", "--variables", tmp_path / "many.csv", "--times", DATA / "variables_times.csv",
               "--plot", tmp_path / "many.png", stdout=subprocess.DEVNULL, timeout=240)
    assert r.returncode == 0 and r.stderr.startswith("gcplan: warning: --plot draws 200 of 100000 stars")
    assert (tmp_path / "many.png").read_bytes().startswith(b"\x89PNG")


def test_the_strips_drawn_are_those_with_the_fewest_bins_covered():
    from planner.reports.phase_plot import strips_to_draw

    phases = np.full((5, 4), np.nan)
    phases[0] = [0.05, 0.15, 0.25, 0.35]  # 4 bins of 10
    phases[1, :1] = 0.5                   # 1 bin
    phases[2, :2] = [0.5, 0.55]           # 1 bin (the same one twice)
    phases[3, :3] = [0.1, 0.5, 0.9]       # 3 bins
    # phases[4]: never observed, 0 bins
    assert list(strips_to_draw(phases, 10, limit=3)) == [1, 2, 4]
    assert list(strips_to_draw(phases, 10, limit=10)) == [0, 1, 2, 3, 4]
