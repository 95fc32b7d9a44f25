"""Benchmark: what a user waits for — gcplan commands as whole processes, start-up included.

Run:  python tests/benchmarks/bench_startup.py [--runs 5]

Each row runs the command in a fresh interpreter (``python -m planner ...``)
``--runs`` times and prints the median wall time, the median CPU time (user +
system) and the peak memory (largest resident set) of the child, read from the
child's own resource usage (``os.wait4``: ``resource.getrusage(RUSAGE_CHILDREN)``
for that one child).  The rows:

* ``gcplan --help``;
* ``night --site demo --targets all`` (157 clusters, one night);
* ``expose``, one question;
* ``observability`` of the whole catalog over a semester (183 nights) as JSON;
* ``expose --batch`` of 24 rows beside the same 24 questions as 24 commands;
* ``replan`` of the demo campaign's last night after a closure (its earlier nights kept in
  the campaign's night cache, filled by the warming run, as after any run on that campaign);
* ``schedule``, 60 targets (the 60 with the most observable hours, as
  bench_scheduler.py picks them), beside a script planning the same night with
  astroplan's PriorityScheduler, also a whole process (imports, the night's
  twilights and the plan), printed last with the ratio.

The machine's load shows in wall times (shared cores): read CPU times too.

gcplan's rows run with a warm Sun/Moon cache (``GCPLAN_CACHE_DIR`` set to a temporary
folder, filled by one run before the timing), as every run after the first does on a
user's machine; one cold row (an empty cache each time) shows the difference.  The children
may write Python's bytecode cache (``PYTHONDONTWRITEBYTECODE`` is dropped from their
environment): an installed gcplan has its modules compiled, and compiling them again in
every process would add about 0.1–0.3 s a command that no user waits for.
"""

from __future__ import annotations

import argparse
import csv
import datetime as dt
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

DATE = "2027-05-12"
#: The children's environment (main() points GCPLAN_CACHE_DIR at a temporary folder).
_ENV = dict(os.environ)
SEMESTER = ("2027-02-01", "2027-07-31")
VISIT = "filter=V,frames=2,exposure=300"
#: The demo campaign's last night re-planned after a closure (as the README's example).
REPLAN = ["replan", "--date", "2027-01-18", "--now", "2027-01-19T03:00:00Z", "--closed", "00:30-01:45", "--json"]


def run_once(argv: list[str]) -> tuple[float, float, float]:
    """Wall s, CPU s (user + system) and peak resident MB of one child process."""
    with tempfile.TemporaryFile() as err:
        t0 = time.perf_counter()
        child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=err, env=_ENV)
        _, status, usage = os.wait4(child.pid, 0)
        wall = time.perf_counter() - t0
        child.returncode = os.waitstatus_to_exitcode(status)  # reaped here, not by Popen
        if child.returncode != 0:
            err.seek(0)
            raise SystemExit(f"failed ({child.returncode}): {' '.join(argv)}\n{err.read().decode()}")
    # ru_maxrss is in kilobytes on Linux
    return wall, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024.0


def measure(argvs: list[list[str]], runs: int) -> tuple[float, float, float]:
    """Medians over ``runs`` of the summed wall and CPU times of ``argvs`` run one after another;
    the largest peak memory among them."""
    walls, cpus, peak = [], [], 0.0
    for _ in range(runs):
        wall = cpu = 0.0
        for argv in argvs:
            w, c, m = run_once(argv)
            wall, cpu, peak = wall + w, cpu + c, max(peak, m)
        walls.append(wall)
        cpus.append(cpu)
    return statistics.median(walls), statistics.median(cpus), peak


def row(label: str, result: tuple[float, float, float], goal: str = "") -> None:
    wall, cpu, peak = result
    print(f"{label:<58} {wall:7.2f} s {cpu:7.2f} s {peak:7.0f} MB  {goal}")


def _sixty_targets(folder: Path, n: int = 60) -> None:
    """The ``n`` clusters with the most observable hours on DATE (as bench_scheduler.py picks
    them), priorities 1..3: a target list for gcplan and a JSON for the astroplan script."""
    import numpy as np

    from planner.config import configure_runtime
    from planner.inputs.catalog import load_catalog
    from planner.inputs.sites import resolve_site
    from planner.inputs.targets import resolve_targets
    from planner.model.constraints import constraints_for_site
    from planner.sky.night_summary import run_of_nights

    configure_runtime()
    site = resolve_site("demo")
    everything = resolve_targets("all", [], load_catalog())
    run = run_of_nights(site, everything, [dt.date.fromisoformat(DATE)], constraints_for_site(site, max_airmass=2.0))
    order = np.argsort(-run.visibility.observable_hours[:, 0], kind="stable")[:n]
    targets = [everything[i] for i in sorted(order)]
    listing = folder / "targets60.csv"
    with open(listing, "w", newline="") as f:
        writer = csv.writer(f)
        writer.writerow(["name", "priority"])
        writer.writerows([t.name, 1 + k % 3] for k, t in enumerate(targets))
    loc = site.location
    setup = {"latitude_deg": loc.latitude_deg, "longitude_deg": loc.longitude_deg, "elevation_m": loc.elevation_m,
             "min_moon_separation_deg": site.limits.min_moon_separation_deg,
             "slew_rate_deg_s": site.telescope.slew_rate_deg_s, "filter_change_s": site.telescope.filter_change_s,
             "readout_s": site.camera.readout_s, "date": DATE,
             "targets": [[t.name, t.ra_deg, t.dec_deg, 1 + k % 3] for k, t in enumerate(targets)]}
    spec = folder / "targets60.json"
    spec.write_text(json.dumps(setup))


# The same night with astroplan, as a user of it would write it: its own twilights
# (astronomical), airmass ≤ 2, the Moon separation, 1-minute resolution, 2 × 300 s in V.
ASTROPLAN_SCRIPT = '''
import json, sys, warnings
warnings.filterwarnings("ignore")
import astropy.units as u
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time
from astroplan import FixedTarget, Observer, ObservingBlock, Transitioner
from astroplan.constraints import AirmassConstraint, AtNightConstraint, MoonSeparationConstraint
from astroplan.scheduling import PriorityScheduler, Schedule
from astropy.utils import iers
iers.conf.auto_download = False
s = json.load(open(sys.argv[1]))
observer = Observer(EarthLocation.from_geodetic(s["longitude_deg"] * u.deg, s["latitude_deg"] * u.deg,
                                                s["elevation_m"] * u.m), timezone="UTC")
# local evening of the date: the site is near 70 W, so its night falls around 04:00 UTC the next day
midnight = Time(s["date"] + "T12:00:00") + 16 * u.hour
start = observer.twilight_evening_astronomical(midnight, which="previous")
end = observer.twilight_morning_astronomical(midnight, which="next")
constraints = [AirmassConstraint(max=2.0, boolean_constraint=False), AtNightConstraint.twilight_astronomical(),
               MoonSeparationConstraint(min=s["min_moon_separation_deg"] * u.deg)]
blocks = [ObservingBlock.from_exposures(FixedTarget(SkyCoord(ra * u.deg, dec * u.deg), name=name), 4 - prio,
                                        300 * u.s, 2, s["readout_s"] * u.s, configuration={"filter": "V"})
          for name, ra, dec, prio in s["targets"]]
transitioner = Transitioner(s["slew_rate_deg_s"] * u.deg / u.s, {"filter": {"default": s["filter_change_s"] * u.s}})
scheduler = PriorityScheduler(constraints=constraints, observer=observer, transitioner=transitioner,
                              time_resolution=1 * u.min)
schedule = Schedule(start, end)
scheduler(blocks, schedule)
print(len([b for b in schedule.scheduled_blocks if isinstance(b, ObservingBlock)]), "visits")
'''


def _batch_rows(folder: Path) -> tuple[Path, list[list[str]]]:
    """24 exposure questions (6 targets or magnitudes × 4 filters) as a CSV, and as 24 commands."""
    whats = [("NGC 6397", "", "hb"), ("NGC 6397", "", "tip"), ("47 Tuc", "", "turnoff"), ("", "17.5", ""),
             ("NGC 6752", "", "hb"), ("M 3", "", "hb")]
    header = ["target", "mag", "level", "filter", "snr", "airmass", "moon_illumination", "moon_separation_deg",
              "moon_altitude_deg"]
    lines, singles = [], []
    for target, mag, level in whats:
        for band in ("V", "I", "B", "R"):
            lines.append([target, mag, level, band, "100", "1.3", "0.3", "70", "20"])
            argv = ["expose", "--site", "demo", "--filter", band, "--snr", "100", "--airmass", "1.3",
                    "--moon-illumination", "0.3", "--moon-separation", "70", "--moon-altitude", "20", "--json"]
            argv += ["--mag", mag] if mag else ["--target", target, "--level", level]
            singles.append(argv)
    path = folder / "batch24.csv"
    with open(path, "w", newline="") as f:
        writer = csv.writer(f)
        writer.writerow(header)
        writer.writerows(lines)
    return path, singles


def _demo_campaign(folder: Path) -> Path:
    """A copy of the demo campaign (its logbook, written by no row, would be beside it)."""
    import shutil

    from planner.inputs.resources import targets_dir

    copy = folder / "demo"
    shutil.copytree(targets_dir() / "demo", copy, ignore=shutil.ignore_patterns("logbook.sqlite*"))
    return copy / "campaign.toml"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--prepare", metavar="DIR", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.prepare:
        _sixty_targets(Path(args.prepare))
        return 0
    gcplan = [sys.executable, "-m", "planner"]
    runs = args.runs
    with tempfile.TemporaryDirectory(prefix="gcplan-bench-") as tmp:
        folder = Path(tmp)
        # Picked in a child: this process stays small, so no child's peak memory is its
        # own (a fork carries the parent's resident size into the child's peak).
        subprocess.run([sys.executable, __file__, "--prepare", tmp], check=True)
        targets60, spec = folder / "targets60.csv", folder / "targets60.json"
        batch, singles = _batch_rows(folder)
        script = folder / "astroplan_night.py"
        script.write_text(ASTROPLAN_SCRIPT)
        _ENV.pop("GCPLAN_NO_CACHE", None)
        _ENV.pop("PYTHONDONTWRITEBYTECODE", None)
        _ENV["GCPLAN_CACHE_DIR"] = str(folder / "cache")
        campaign = _demo_campaign(folder)
        replan = gcplan + REPLAN + ["--campaign", str(campaign)]
        run_once(gcplan + ["night", "--site", "demo", "--target", "NGC 104", "--date", DATE])  # fills the cache
        run_once(replan)  # the campaign's nights, kept in the cache
        print(f"whole processes, median of {runs} (wall, CPU = user + system), peak memory of the child; "
              "Sun/Moon cache warm unless said")
        print(f"{'':<58} {'wall':>9} {'CPU':>9} {'peak':>10}")
        row("gcplan --help", measure([gcplan + ["--help"]], runs))
        _ENV["GCPLAN_NO_CACHE"] = "1"
        row("night --site demo --targets all, no cache (Sun and Moon made)", measure(
            [gcplan + ["night", "--site", "demo", "--targets", "all", "--date", DATE]], runs))
        del _ENV["GCPLAN_NO_CACHE"]
        row("night --site demo --targets all", measure(
            [gcplan + ["night", "--site", "demo", "--targets", "all", "--date", DATE]], runs), "goal ≤ 0.3 s")
        row("expose, one question", measure([gcplan + singles[0]], runs), "goal ≤ 0.3 s")
        row("observability, 157 clusters × 181 nights, --json", measure(
            [gcplan + ["observability", "--site", "demo", "--targets", "all", "--start", SEMESTER[0],
                       "--end", SEMESTER[1], "--json"]], runs), "goal ≤ 0.6 s")
        many = measure([gcplan + s for s in singles], max(1, runs // 2))
        row("expose: 24 questions as 24 commands", many)
        try:
            one = measure([gcplan + ["expose", "--site", "demo", "--batch", str(batch), "--json"]], runs)
            row("expose --batch, 24 rows", one, "goal ≤ 0.5 s")
        except SystemExit:  # a gcplan from before --batch (PYTHONPATH pointing at an older tree)
            one = None
            print("expose --batch, 24 rows: not in this gcplan")
        row("replan, the demo campaign's last night", measure([replan], runs), "goal ≤ 0.3 s")
        ours = measure([gcplan + ["schedule", "--site", "demo", "--targets", str(targets60), "--date", DATE,
                                  "--visit", VISIT, "--max-airmass", "2", "--json"]], runs)
        theirs = measure([[sys.executable, str(script), str(spec)]], max(1, runs // 2))
        row("schedule, 60 targets", ours, "goal ≤ 0.35 s")
        row("astroplan PriorityScheduler script, the same night", theirs)
    if one is not None:
        print(f"expose --batch / 24 commands: {many[0] / one[0]:.0f}x faster (wall), {many[1] / one[1]:.0f}x (CPU)")
    print(f"speed ratio astroplan / gcplan schedule, whole processes: {theirs[0] / ours[0]:.1f}x (wall), "
          f"{theirs[1] / ours[1]:.1f}x (CPU) (goal ≥ 10x)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
