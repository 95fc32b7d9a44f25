"""Benchmark: a semester of visibility for the whole bundled catalog, gcplan vs astroplan.

Run it (not part of the test suite; it takes a minute or two)::

    python tests/benchmarks/bench_visibility.py [--sample-nights 5] [--first-night 2027-04-01]

What it does, in ONE process:

1. astroplan's ``observability_table`` for every catalog cluster at the
   fictional demo site, one night at a time (local noon to local noon,
   ``time_grid_resolution`` = 1 minute), with AltitudeConstraint,
   AirmassConstraint, AtNightConstraint.twilight_astronomical and
   MoonSeparationConstraint.  astroplan is slow (about 0.6 s a night for 150
   targets), so it runs on a sample of nights spread over the semester and
   its time is scaled to 183 nights — the output says so.
2. gcplan's ``run_of_nights`` over all 183 nights: once with the same
   constraints as astroplan, once with the demo profile's own (Kasten &
   Young airmass, horizon mask, sun avoidance).
3. The agreement of observable hours on the sampled nights.  astroplan's
   airmass is sec z, so both get the same altitude limit (asin(1/2.5) =
   23.58°).  astroplan applies the Moon-separation limit even while the Moon
   is below the horizon and gcplan does not, so agreement is shown for all
   target-nights and for those the Moon never comes within the limit of.
4. The whole ``gcplan observability … --json`` command as a subprocess, if
   the command exists yet.

The speed ratio is printed last.
"""

from __future__ import annotations

import argparse
import datetime as dt
import shutil
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

SEMESTER_NIGHTS = 183


def astroplan_hours(site, targets, night, constraints_ap):
    """Observable hours per target on one night with astroplan (1-minute grid)."""
    import astropy.units as u
    from astroplan import Observer, observability_table
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time

    from planner.sky.nights import night_spans_jd

    loc = site.location
    observer = Observer(
        location=EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m),
        timezone=loc.timezone,
    )
    coords = SkyCoord([t.ra_deg for t in targets] * u.deg, [t.dec_deg for t in targets] * u.deg)
    start, end = night_spans_jd([night], loc.timezone)
    time_range = Time([start[0], end[0]], format="jd", scale="utc")
    table = observability_table(constraints_ap, observer, coords, time_range=time_range,
                                time_grid_resolution=1 * u.min)
    n_times = len(table.meta["times"])
    return np.asarray(table["fraction of time observable"], dtype=float) * n_times / 60.0


def stage_times(site, targets, nights, constraints):
    """Time the pieces run_of_nights is made of, once each (warm)."""
    from planner.sky.almanac import almanac_for_nights
    from planner.sky.ephemeris import build_ephemeris, site_geometry
    from planner.sky.nights import night_spans_jd
    from planner.sky.visibility import apparent_places
    from planner.sky.windows import visibility_for_nights

    out = {}
    loc = site.location
    t0 = time.perf_counter()
    start, end = night_spans_jd(list(nights), loc.timezone)
    eph = build_ephemeris(float(start.min()), float(end.max()))
    out["ephemeris"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    alm = almanac_for_nights(site, list(nights), eph)
    out["almanac"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    places = apparent_places([t.ra_deg for t in targets], [t.dec_deg for t in targets], float(start.min()), float(end.max()))
    out["apparent places"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    visibility_for_nights(eph, geo, places, alm, constraints)
    out["windows"] = time.perf_counter() - t0
    return out


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sample-nights", type=int, default=5, help="astroplan nights to time (default 5)")
    parser.add_argument("--first-night", default="2027-04-01", help="first night of the semester (ISO date)")
    args = parser.parse_args(argv)

    t_import = time.perf_counter()
    from planner.config import configure_runtime

    configure_runtime()
    import warnings

    import astropy.units as u
    from astropy.coordinates.baseframe import NonRotationTransformationWarning

    # astroplan's MoonSeparationConstraint separates GCRS (Moon) from ICRS
    # (targets) and astropy warns about it on every call: once is enough here.
    warnings.filterwarnings("ignore", category=NonRotationTransformationWarning)
    from astroplan import (
        AirmassConstraint,
        AltitudeConstraint,
        AtNightConstraint,
        MoonSeparationConstraint,
    )

    from planner.inputs.catalog import load_catalog
    from planner.inputs.sites import resolve_site
    from planner.inputs.targets import catalog_targets
    from planner.model.constraints import Constraints, constraints_for_site
    from planner.sky.night_summary import run_of_nights

    t_import = time.perf_counter() - t_import
    site = resolve_site("demo")
    targets = catalog_targets(load_catalog())
    first = dt.date.fromisoformat(args.first_night)
    nights = [first + dt.timedelta(days=i) for i in range(SEMESTER_NIGHTS)]
    lim = site.limits
    secz_limit_deg = float(np.degrees(np.arcsin(1.0 / lim.max_airmass)))
    print(f"site: {site.name}; {len(targets)} catalog clusters; nights {nights[0]} .. {nights[-1]} "
          f"({len(nights)}); imports {t_import:.2f} s")

    # --- astroplan on a sample of nights ---------------------------------
    constraints_ap = [
        AltitudeConstraint(min=lim.min_altitude_deg * u.deg),
        AirmassConstraint(max=lim.max_airmass),
        AtNightConstraint.twilight_astronomical(),
        MoonSeparationConstraint(min=lim.min_moon_separation_deg * u.deg),
    ]
    sample_idx = np.unique(np.linspace(0, len(nights) - 1, args.sample_nights).round().astype(int))
    astroplan_hours(site, targets[:2], nights[sample_idx[0]], constraints_ap)  # warm-up: IERS, ephemeris, imports
    ap_hours, ap_times = [], []
    for i in sample_idx:
        t0 = time.perf_counter()
        ap_hours.append(astroplan_hours(site, targets, nights[i], constraints_ap))
        ap_times.append(time.perf_counter() - t0)
    ap_per_night = float(np.mean(ap_times))
    ap_semester = ap_per_night * len(nights)
    print(f"astroplan observability_table, 1-min grid: {ap_per_night:.2f} s per night "
          f"(mean of {len(sample_idx)} nights: {', '.join(str(nights[i]) for i in sample_idx)}); "
          f"scaled to {len(nights)} nights: {ap_semester:.1f} s (estimate, not run)")

    # --- gcplan: all nights ----------------------------------------------
    matched = Constraints(
        min_altitude_deg=max(lim.min_altitude_deg, secz_limit_deg),
        max_airmass=None,
        twilight="astronomical",
        min_moon_separation_deg=lim.min_moon_separation_deg,
    )
    own = constraints_for_site(site)

    def timed(constraints, repeat=3):
        times, run = [], None
        for _ in range(repeat):
            t0 = time.perf_counter()
            run = run_of_nights(site, targets, nights, constraints)
            times.append(time.perf_counter() - t0)
        return run, times

    run_matched, t_matched = timed(matched)
    run_own, t_own = timed(own)
    stages = stage_times(site, targets, nights, matched)
    print(f"gcplan run_of_nights, astroplan's constraints: first {t_matched[0]:.3f} s, best {min(t_matched):.3f} s "
          f"for {len(nights)} nights x {len(targets)} targets")
    print("  stages (astroplan's constraints): " + ", ".join(f"{k} {v:.3f} s" for k, v in stages.items()))
    print(f"gcplan run_of_nights, the demo profile's constraints (K&Y airmass {lim.max_airmass}, horizon mask, "
          f"sun avoidance {lim.sun_avoidance_deg:.0f} deg): first {t_own[0]:.3f} s, best {min(t_own):.3f} s")

    # --- agreement on the sampled nights -----------------------------------
    ours = run_matched.visibility.observable_hours[:, sample_idx]  # (targets, sampled nights)
    theirs = np.column_stack(ap_hours)
    diff_min = np.abs(ours - theirs) * 60.0
    moon_clear = run_matched.visibility.min_moon_separation_deg[:, sample_idx] > lim.min_moon_separation_deg + 1.0
    observable = (ours > 0) | (theirs > 0)

    def summary(mask):
        d = diff_min[mask]
        if d.size == 0:
            return "none"
        return (f"{d.size} target-nights: median {np.median(d):.2f} min, 95th percentile "
                f"{np.percentile(d, 95):.2f} min, max {d.max():.2f} min; within 2 min: {np.mean(d <= 2.0):.1%}")

    print("agreement of observable hours, |gcplan - astroplan| on the sampled nights:")
    print(f"  all target-nights:                         {summary(np.ones_like(diff_min, bool))}")
    print(f"  observable by either:                      {summary(observable)}")
    print(f"  Moon never within the limit (+1 deg):      {summary(observable & moon_clear)}")
    print(f"  Moon within the limit at some time:        {summary(observable & ~moon_clear)}"
          "  (astroplan also applies the limit while the Moon is down)")

    # --- the whole command as a subprocess ---------------------------------
    gcplan = shutil.which("gcplan") or str(Path(sys.executable).with_name("gcplan"))
    have = False
    if Path(gcplan).exists():
        probe = subprocess.run([gcplan, "observability", "--help"], capture_output=True, text=True)
        have = probe.returncode == 0 and "--start" in probe.stdout
    if have:
        cmd = [gcplan, "observability", "--site", "demo", "--targets", "all",
               "--start", str(nights[0]), "--end", str(nights[-1]), "--json"]
        t0 = time.perf_counter()
        done = subprocess.run(cmd, capture_output=True, text=True)
        t_cli = time.perf_counter() - t0
        status = "ok" if done.returncode == 0 else f"exit {done.returncode}: {done.stderr.strip()[:200]}"
        print(f"whole command `{' '.join(cmd[1:])}`: {t_cli:.2f} s ({status}, {len(done.stdout)} bytes of JSON)")
    else:
        print("whole command: skipped — `gcplan observability` does not exist yet")

    ratio = ap_semester / min(t_matched)
    print(f"speed ratio (astroplan semester estimate / gcplan best, same constraints): {ratio:.0f}x")
    return 0


if __name__ == "__main__":
    sys.exit(main())
