"""Benchmark: re-planning a campaign night, without the nights' cache (every earlier night
planned again) and with it, cold and warm, in one process and as whole processes.

Run:  python tests/benchmarks/bench_replan.py [--skip-60]

The re-plan is the same on every night: from local 01:00, with a closed period (weather)
01:30–02:30, so the rest of the night is planned again.  Nights 1, 7 and 14 of the demo
campaign, and night 60 of a 60-night campaign made from the demo file in a temporary folder
(its ``last_night`` moved on).  In one process: ``replan_night`` without a cache (what every
re-plan cost before), with an empty cache (cold: it plans every night up to this one and keeps
them) and with the cache filled (warm: median of 3).  Then ``gcplan replan`` as a whole
process, cold and warm (each with its own cache folder, ``GCPLAN_CACHE_DIR``; Python's bytecode
cache allowed, as for an installed gcplan).  Times are
CPU seconds (user + system), which a machine shared with other work does not inflate.  The goal is
≤ 0.3 s on any night with a warm cache; the ratio without / warm on the latest night is last.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

NOW, CLOSED = "01:00", "01:30-02:30"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--skip-60", action="store_true", help="only the demo campaign's nights")
    args = ap.parse_args(argv)

    from planner.config import configure_runtime

    configure_runtime()
    warnings.filterwarnings("ignore")
    from planner.commands.replan import parse_closed, parse_now
    from planner.inputs.campaign_file import read_campaign_file
    from planner.inputs.resources import targets_dir
    from planner.cache.plans import FilePlanCache
    from planner.scheduling.replan import replan_night

    tmp = Path(tempfile.mkdtemp(prefix="gcplan-bench-replan-"))
    try:
        demo = tmp / "demo"
        shutil.copytree(targets_dir() / "demo", demo)
        long = tmp / "long"
        shutil.copytree(targets_dir() / "demo", long)
        text = (long / "campaign.toml").read_text()
        first = dt.date(2027, 1, 5)
        (long / "campaign.toml").write_text(text.replace("last_night = 2027-01-18",
                                                         f"last_night = {first + dt.timedelta(days=59)}"))
        cases = [(demo / "campaign.toml", n) for n in (1, 7, 14)]
        if not args.skip_60:
            cases.append((long / "campaign.toml", 60))
        rows = []
        for path, n in cases:
            campaign = read_campaign_file(path)
            night = campaign.nights[n - 1]
            zone = campaign.site.location.timezone
            now = parse_now(NOW, night, zone)
            closed = (parse_closed(CLOSED, night, zone),)

            def once(cache):  # CPU seconds (the machine may be shared: wall time says less)
                t0 = time.process_time()
                replan_night(campaign, night, now, closed=closed, cache=cache)
                return time.process_time() - t0

            t_none = once(None)
            cold_store = FilePlanCache(tmp / f"cache-{path.parent.name}-{n}")
            t_cold = once(cold_store)
            t_warm = statistics.median(once(FilePlanCache(cold_store.folder)) for _ in range(3))
            p_cold, p_warm = _processes(path, night, tmp / f"proc-{path.parent.name}-{n}")
            rows.append((n, len(campaign.nights), t_none, t_cold, t_warm, p_cold, p_warm))
            print(f"night {n:2d} of {len(campaign.nights):2d}: in one process — no cache {t_none:6.2f} s, "
                  f"cold cache {t_cold:6.2f} s, warm cache {t_warm:5.3f} s (goal ≤ 0.3 s); "
                  f"whole process `gcplan replan` cold {p_cold:6.2f} s, warm {p_warm:5.2f} s", flush=True)
        n, total, t_none, _, t_warm, _, p_warm = rows[-1]
        print("(CPU seconds: user + system, of this process or of the child process)")
        print(f"re-plan on night {n} of {total}, no cache / warm cache: {t_none / t_warm:.0f}x "
              f"(in one process; whole process warm {p_warm:.2f} s)")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


def _processes(path: Path, night: dt.date, cache_dir: Path) -> tuple[float, float]:
    """CPU time (user + system) of ``gcplan replan`` as a whole process: cold (empty cache
    folder), then warm (median of 3)."""
    # As an installed gcplan runs: Python's bytecode cache may be written (and then read).
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["GCPLAN_CACHE_DIR"] = str(cache_dir)
    cmd = [sys.executable, "-m", "planner", "replan", "--campaign", str(path), "--date", night.isoformat(),
           "--now", NOW, "--closed", CLOSED, "--json"]

    def run():
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        subprocess.run(cmd, env=env, check=True, stdout=subprocess.DEVNULL)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)

    cold = run()
    return cold, statistics.median(run() for _ in range(3))


if __name__ == "__main__":
    sys.exit(main())
