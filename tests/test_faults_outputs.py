"""Fault injection on outputs: a full disk, /dev/full, a folder that is not there.

Every output file of every command goes through one writer (a new file beside the
target, renamed once complete), and stdout through the command line's one handler: a
fault is one line on stderr, exit 2, with no partial file left and nothing stored lost.
A full disk is imitated with the file-size limit (RLIMIT_FSIZE, as POSIX gives it: a
write past it fails with EFBIG), and with a path that leads to /dev/full (ENOSPC on
every write, the Linux device made for this test).
"""

from __future__ import annotations

import os
import resource
import signal
import subprocess
from pathlib import Path

import pytest

from helpers.faults import digest, gcplan, one_line_error
from planner.logbook.store import Logbook, NewEntry

ROOT = Path(__file__).resolve().parents[1]
CAMPAIGN = ROOT / "targets" / "demo" / "campaign.toml"
DATA = ROOT / "tests" / "data"
NIGHT = "2027-01-05"

#: Each command with one output, as (argv with OUT for the path, the output's suffix).
OUTPUTS = {
    "night --plot": (["night", "--site", "demo", "--date", NIGHT, "--target", "NGC 104", "--plot", "OUT"], ".png"),
    "observability --plot": (["observability", "--site", "demo", "--start", NIGHT, "--end", "2027-01-09",
                              "--target", "NGC 104", "--plot", "OUT"], ".pdf"),
    "expose --plot": (["expose", "--site", "demo", "--filter", "V", "--mag", "18", "--snr", "50",
                       "--plot", "OUT"], ".png"),
    "schedule --plot": (["schedule", "--campaign", CAMPAIGN, "--date", NIGHT, "--plot", "OUT"], ".png"),
    "schedule --out": (["schedule", "--campaign", CAMPAIGN, "--date", NIGHT, "--out", "OUT"], ".ecsv"),
    "phases --plot": (["phases", "--variables", DATA / "variables_good.csv", "--times",
                       DATA / "variables_times.csv", "--plot", "OUT"], ".png"),
    "log print --pdf": (["log", "print", "--logbook", "BOOK", "--night", "2027-01-05", "--pdf", "OUT"], ".pdf"),
    "log export --out": (["log", "export", "--logbook", "BOOK", "--format", "ecsv", "--out", "OUT"], ".ecsv"),
}


def _book(folder: Path) -> Path:
    path = folder / "book" / "log.sqlite"
    path.parent.mkdir()
    with Logbook(path) as b:
        b.set_meta("site", "demo")
        for k in range(150):
            b.add_entry(NewEntry(time_jd=2461411.5 + 0.05 + k * 0.002, target="NGC 104", filter="V",
                                 exposure_s=60.0, note="a note long enough to fill the page " * 3))
    return path


def _argv(case: str, out, book) -> list:
    argv, _ = OUTPUTS[case]
    return [out if a == "OUT" else book if a == "BOOK" else a for a in argv]


def _small_disk(limit=4_000):
    """preexec: files may not grow past ``limit`` bytes (a full disk, as the writer sees it);
    every output of these cases is larger (the smallest, a night's ECSV plan, some 17 kB)."""
    def apply():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # EFBIG instead of the signal's default kill
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
    return apply


@pytest.mark.slow
@pytest.mark.parametrize("case", sorted(OUTPUTS))
def test_a_full_disk_leaves_no_partial_file_and_gives_one_line(tmp_path, case):
    book = _book(tmp_path)
    before = digest(book)
    work = tmp_path / "work"
    work.mkdir()
    out = work / f"result{OUTPUTS[case][1]}"
    r = gcplan(*_argv(case, out, book), stdout=subprocess.DEVNULL, preexec=_small_disk(), timeout=120)
    one_line_error(r, OUTPUTS[case][0][OUTPUTS[case][0].index("OUT") - 1], "File too large")
    assert list(work.iterdir()) == []  # neither the file nor its partial copy
    assert digest(book) == before


@pytest.mark.slow
@pytest.mark.parametrize("case", ["night --plot", "log export --out", "schedule --out", "log print --pdf"])
def test_a_path_to_dev_full_gives_one_line(tmp_path, case):
    book = _book(tmp_path)
    link = tmp_path / f"full{OUTPUTS[case][1]}"
    link.symlink_to("/dev/full")
    r = gcplan(*_argv(case, link, book), stdout=subprocess.DEVNULL, timeout=120)
    one_line_error(r, "No space left on device")
    assert link.is_symlink() and os.readlink(link) == "/dev/full"


def test_an_existing_output_survives_a_failed_write(tmp_path):
    out = tmp_path / "night.png"
    out.write_bytes(b"yesterday's chart")
    r = gcplan(*_argv("night --plot", out, None), stdout=subprocess.DEVNULL, preexec=_small_disk())
    one_line_error(r, "--plot")
    assert out.read_bytes() == b"yesterday's chart" and [p.name for p in tmp_path.iterdir()] == ["night.png"]


def test_a_written_output_is_complete_and_has_the_users_permissions(tmp_path):
    out = tmp_path / "night.png"
    r = gcplan(*_argv("night --plot", out, None), stdout=subprocess.DEVNULL)
    assert r.returncode == 0 and out.read_bytes().startswith(b"\x89PNG")
    umask = os.umask(0)
    os.umask(umask)
    assert out.stat().st_mode & 0o777 == 0o666 & ~umask
    assert [p.name for p in tmp_path.iterdir()] == ["night.png"]


@pytest.mark.parametrize("argv", [
    ["night", "--site", "demo", "--date", NIGHT, "--targets", "all"],
    ["night", "--site", "demo", "--date", NIGHT, "--targets", "all", "--json"],
    ["observability", "--site", "demo", "--start", NIGHT, "--end", "2027-01-09", "--targets", "all", "--json"],
    ["log", "list", "--logbook", "BOOK"],
    ["log", "list", "--logbook", "BOOK", "--json"],
], ids=lambda a: " ".join(map(str, a[:3])))
def test_stdout_on_a_full_disk_is_one_line(tmp_path, argv):
    book = _book(tmp_path)
    argv = [book if a == "BOOK" else a for a in argv]
    with open("/dev/full", "w") as full:
        r = gcplan(*argv, stdout=full)
    one_line_error(r, "cannot write the output", "No space left on device")


def test_a_closed_pipe_is_not_an_error(tmp_path):
    """`gcplan … | head -1`: the reader leaves early; nothing on stderr, exit 0."""
    p = subprocess.Popen(["sh", "-c", f"'{os.sys.executable}' -m planner night --site demo --date {NIGHT} "
                          "--targets all | head -1"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    out, err = p.communicate(timeout=60)
    assert out.startswith("Night of") and err == ""


def test_campaign_out_on_a_full_disk_leaves_no_partial_file(tmp_path):
    out = tmp_path / "camp"
    r = gcplan("campaign", "--campaign", CAMPAIGN, "--out", out, stdout=subprocess.DEVNULL,
               preexec=_small_disk(30_000), timeout=180)
    one_line_error(r, "--out", "File too large")
    assert not [p for p in out.iterdir() if p.name.startswith(".")]  # no partial copies
    for p in out.iterdir():  # what was written before the disk filled is whole
        assert p.suffix != ".png" or p.read_bytes().endswith(b"IEND\xaeB`\x82")
