"""Benchmark: observability at scale — 10,000 targets × 365 nights — and the Sun/Moon cache.

Run it (not part of the test suite; a minute or two)::

    python tests/benchmarks/bench_scale.py [--targets 10000] [--nights 365]

What it does:

1. Writes a SYNTHETIC target list in a temporary folder: random positions,
   uniform on the sphere, from a fixed seed (no real objects; nothing is
   committed).
2. ``gcplan observability --site demo --targets <that list> --json`` over
   ``--nights`` nights as a whole process, once with an empty Sun/Moon cache
   (a temporary ``GCPLAN_CACHE_DIR``) and once warm: wall and CPU seconds, the
   JSON's size, and the process's peak resident memory
   (``resource.getrusage(RUSAGE_CHILDREN)`` read by a wrapper process of its
   own, so each figure is that command's peak alone) — per target-night too.
3. A semester of the whole bundled catalog the same way, cold and warm cache.
4. astroplan's ``observability_table`` (1-minute grid; altitude, airmass,
   astronomical twilight and Moon separation, as in bench_visibility.py) on a
   small subset of the same targets and nights, in this process; its time
   per target-night is scaled to the full run (an estimate, not run).

The speed ratio (astroplan's estimate / gcplan's warm whole process) is printed last.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

FIRST_NIGHT = dt.date(2027, 1, 1)
SEED = 20261204

# Runs one command as its own child and reports that child's wall time, CPU time and peak
# RSS (Linux: kB), so no other process's peak is mixed in.
_WRAPPER = """
import json, resource, subprocess, sys, time
t0 = time.perf_counter()
done = subprocess.run(sys.argv[2:], stdout=open(sys.argv[1], "wb"), stderr=subprocess.PIPE)
wall = time.perf_counter() - t0
ru = resource.getrusage(resource.RUSAGE_CHILDREN)
print(json.dumps({"wall_s": wall, "cpu_s": ru.ru_utime + ru.ru_stime, "peak_kb": ru.ru_maxrss,
                  "status": done.returncode, "stderr": done.stderr.decode()[-300:]}))
"""


def write_synthetic_targets(path: Path, n: int) -> None:
    rng = np.random.default_rng(SEED)
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))
    with open(path, "w") as f:
        f.write(f"# SYNTHETIC targets for a benchmark: {n} random positions, uniform on the sphere "
                f"(numpy seed {SEED}); not real objects\n")
        f.write("name,ra_deg,dec_deg\n")
        for i, (a, d) in enumerate(zip(ra, dec)):
            f.write(f"SYN-{i:05d},{a:.6f},{d:.6f}\n")


def whole_process(cmd: list[str], cache: Path, out: Path) -> dict:
    env = {**os.environ, "GCPLAN_CACHE_DIR": str(cache)}
    env.pop("GCPLAN_NO_CACHE", None)
    done = subprocess.run([sys.executable, "-c", _WRAPPER, str(out), *cmd], capture_output=True, text=True,
                          env=env, check=True)
    result = json.loads(done.stdout)
    result["bytes"] = out.stat().st_size
    return result


def show(label: str, r: dict, target_nights: int, base_kb: float) -> None:
    status = "ok" if r["status"] == 0 else f"exit {r['status']}: {r['stderr'].strip()}"
    per = (r["peak_kb"] - base_kb) * 1024 / target_nights
    print(f"  {label:<12s} wall {r['wall_s']:6.2f} s, CPU {r['cpu_s']:6.2f} s, peak RSS "
          f"{r['peak_kb'] / 1024:7.1f} MB ({per:,.0f} B per target-night above one target-night's run), "
          f"JSON {r['bytes'] / 1e6:.1f} MB ({status})")


def astroplan_per_target_night(site, targets, nights) -> float:
    """astroplan's seconds per target-night on a subset (warm: one night run first)."""
    import warnings

    import astropy.units as u
    from astroplan import AirmassConstraint, AltitudeConstraint, AtNightConstraint, MoonSeparationConstraint
    from astropy.coordinates.baseframe import NonRotationTransformationWarning

    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_visibility import astroplan_hours

    warnings.filterwarnings("ignore", category=NonRotationTransformationWarning)
    lim = site.limits
    constraints = [
        AltitudeConstraint(min=lim.min_altitude_deg * u.deg),
        AirmassConstraint(max=lim.max_airmass),
        AtNightConstraint.twilight_astronomical(),
        MoonSeparationConstraint(min=lim.min_moon_separation_deg * u.deg),
    ]
    astroplan_hours(site, targets[:2], nights[0], constraints)  # warm-up: imports, IERS, ephemeris
    t0 = time.perf_counter()
    for night in nights:
        astroplan_hours(site, targets, night, constraints)
    return (time.perf_counter() - t0) / (len(targets) * len(nights))


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", type=int, default=10_000, help="synthetic targets (default 10000)")
    parser.add_argument("--nights", type=int, default=365, help="nights from 2027-01-01 (default 365)")
    parser.add_argument("--astroplan-targets", type=int, default=100, help="astroplan subset (default 100)")
    parser.add_argument("--astroplan-nights", type=int, default=3, help="astroplan subset (default 3)")
    args = parser.parse_args(argv)

    from planner.config import configure_runtime

    configure_runtime()
    from planner.inputs.sites import resolve_site
    from planner.inputs.targets import read_target_list

    gcplan = str(Path(sys.executable).with_name("gcplan"))
    last = FIRST_NIGHT + dt.timedelta(days=args.nights - 1)
    with tempfile.TemporaryDirectory(prefix="gcplan-bench-") as tmp:
        tmp = Path(tmp)
        targets_csv = tmp / f"synthetic_{args.targets}.csv"
        write_synthetic_targets(targets_csv, args.targets)
        n_tn = args.targets * args.nights
        one_csv = tmp / "synthetic_1.csv"
        write_synthetic_targets(one_csv, 1)
        one = [gcplan, "observability", "--site", "demo", "--targets", str(one_csv), "--start", str(FIRST_NIGHT),
               "--end", str(FIRST_NIGHT), "--json"]
        whole_process(one, tmp / "cache-one", tmp / "one.json")
        base = whole_process(one, tmp / "cache-one", tmp / "one.json")
        print(f"one target x one night, whole process, warm cache: wall {base['wall_s']:.2f} s, "
              f"CPU {base['cpu_s']:.2f} s, peak RSS {base['peak_kb'] / 1024:.1f} MB (start-up and imports)")
        print(f"observability, demo site, {args.targets} SYNTHETIC targets x {args.nights} nights "
              f"({FIRST_NIGHT} .. {last}) = {n_tn:,} target-nights, whole process, --json:")
        cmd = [gcplan, "observability", "--site", "demo", "--targets", str(targets_csv),
               "--start", str(FIRST_NIGHT), "--end", str(last), "--json"]
        cold = whole_process(cmd, tmp / "cache-big", tmp / "big.json")
        warm = whole_process(cmd, tmp / "cache-big", tmp / "big.json")
        show("cold cache", cold, n_tn, base["peak_kb"])
        show("warm cache", warm, n_tn, base["peak_kb"])

        sem_first, sem_nights = dt.date(2027, 4, 1), 183
        sem_cmd = [gcplan, "observability", "--site", "demo", "--targets", "all", "--start", str(sem_first),
                   "--end", str(sem_first + dt.timedelta(days=sem_nights - 1)), "--json"]
        print(f"semester, the bundled catalog x {sem_nights} nights from {sem_first}, whole process, --json:")
        sem_cold = whole_process(sem_cmd, tmp / "cache-sem", tmp / "sem.json")
        sem_warm = whole_process(sem_cmd, tmp / "cache-sem", tmp / "sem.json")
        n_catalog = len(json.loads((tmp / "sem.json").read_text())["targets"])
        show("cold cache", sem_cold, n_catalog * sem_nights, base["peak_kb"])
        show("warm cache", sem_warm, n_catalog * sem_nights, base["peak_kb"])
        print(f"  the cache saves {sem_cold['wall_s'] - sem_warm['wall_s']:.2f} s wall, "
              f"{sem_cold['cpu_s'] - sem_warm['cpu_s']:.2f} s CPU of a semester")

        site = resolve_site("demo")
        subset = read_target_list(targets_csv)[: args.astroplan_targets]
        idx = np.linspace(0, args.nights - 1, args.astroplan_nights).round().astype(int)
        nights = [FIRST_NIGHT + dt.timedelta(days=int(i)) for i in idx]
    per_tn = astroplan_per_target_night(site, subset, nights)
    estimate = per_tn * n_tn
    print(f"astroplan observability_table, 1-min grid: {per_tn * 1e3:.2f} ms per target-night "
          f"({len(subset)} targets x {len(nights)} nights); scaled to {n_tn:,} target-nights: "
          f"{estimate:,.0f} s (estimate, not run)")
    print(f"speed ratio (astroplan estimate / gcplan whole process, warm cache, wall): "
          f"{estimate / warm['wall_s']:.0f}x")
    return 0


if __name__ == "__main__":
    sys.exit(main())
