"""The phase-coverage report (``gcplan phases``): each variable's phases at a set of
times, the bins covered and what is missed, as plain data, text and JSON."""

from __future__ import annotations

import textwrap
from dataclasses import asdict

import numpy as np

from planner.sky.nights import iso_utc

def phase_report(variables, times, n_bins: int, max_drift_per_day: float):
    """Everything the command shows, as plain data (also used by the plot)."""
    from planner.variables.phases import (
        alias_warnings,
        cluster_coverage_summary,
        ephemeris_dates,
        phase_coverage,
        phase_drift_per_day,
        phases,
    )

    ids = [v.id for v in variables]
    periods = np.array([v.period_d for v in variables])
    types = [v.type for v in variables]
    hjd = ephemeris_dates(times, variables)  # HJD(UTC) or BJD(TDB), as each star's epoch
    phase = phases(hjd, [v.epoch_hjd for v in variables], periods)
    coverage = phase_coverage(phase, n_bins, types)
    jd = times.utc.jd
    baseline = float(np.max(jd) - np.min(jd))
    # The drift between nights only matters when the times span more than one night.
    aliases = alias_warnings(ids, periods, max_drift_per_day) if baseline >= 1.0 else ()
    per_star: dict[str, list[str]] = {i: [] for i in ids}
    for w in aliases:
        per_star[w.star_id].append(w.message)
    for k, star in enumerate(ids):
        if coverage.rising_branch_applies[k] and not coverage.rising_branch_sampled[k]:
            per_star[star].append(f"{star}: the rising branch (phase 0.85–1.00) is never observed")
        if not coverage.minimum_light_sampled[k]:
            per_star[star].append(f"{star}: minimum light is never observed")
    clusters = cluster_coverage_summary(ids, [v.cluster for v in variables], coverage)
    return {
        "ids": ids, "periods": periods, "types": types, "phase": phase, "coverage": coverage,
        "drift": phase_drift_per_day(periods), "warnings": per_star, "clusters": clusters,
        "baseline_d": baseline, "jd": jd,
    }


def report_json(variables, report) -> dict:
    cov = report["coverage"]
    stars = []
    for k, v in enumerate(variables):
        stars.append({
            "id": v.id,
            "cluster": v.cluster,
            "type": v.type,
            "period_d": v.period_d,
            "epoch_hjd": v.epoch_hjd if v.time_system == "HJD_UTC" else None,
            "epoch_bjd_tdb": v.epoch_hjd if v.time_system == "BJD_TDB" else None,
            "time_system": v.time_system,
            "ra_deg": v.ra_deg,
            "dec_deg": v.dec_deg,
            "phases": [None if not np.isfinite(p) else round(float(p), 6) for p in report["phase"][k]],
            "bins_covered": int(cov.bins_covered[k]),
            "largest_gap": round(float(cov.largest_gap[k]), 6),
            "rising_branch_sampled": bool(cov.rising_branch_sampled[k]) if cov.rising_branch_applies[k] else None,
            "minimum_light_sampled": bool(cov.minimum_light_sampled[k]),
            "phase_drift_per_day": round(float(report["drift"][k]), 6),
            "warnings": report["warnings"][v.id],
        })
    jd = report["jd"]
    return {
        "n_bins": cov.n_bins,
        "time_system": _time_system(variables),
        "n_times": int(jd.size),
        "first_time": iso_utc(float(np.min(jd))),
        "last_time": iso_utc(float(np.max(jd))),
        "baseline_d": round(report["baseline_d"], 6),
        "stars": stars,
        "clusters": [asdict(c) for c in report["clusters"]],
        "warnings": [m for v in variables for m in report["warnings"][v.id]],
    }


def _time_system(variables) -> str:
    from planner.variables.phases import time_system_label

    return time_system_label(variables)


def report_text(variables, report) -> str:
    cov = report["coverage"]
    lines = textwrap.wrap(
        f"{len(variables)} variables at {report['jd'].size} times over {report['baseline_d']:.2f} d; "
        f"phase 0 = maximum light; dates {_time_system(variables)}",
        80,
    ) + [
        "",
        f"{'id':<16} {'cluster':<10} {'type':<5} {'P (d)':>9} {'bins':>7} {'gap':>6} "
        f"{'rise':>5} {'min':>4} {'drift/d':>8}",
    ]
    for k, v in enumerate(variables):
        rise = "—" if not cov.rising_branch_applies[k] else ("yes" if cov.rising_branch_sampled[k] else "no")
        lines.append(
            f"{v.id:<16} {(v.cluster or '—'):<10} {(v.type or '?'):<5} {v.period_d:>9.5f} "
            f"{cov.bins_covered[k]:>3}/{cov.n_bins:<3} {cov.largest_gap[k]:>6.3f} {rise:>5} "
            f"{'yes' if cov.minimum_light_sampled[k] else 'no':>4} {report['drift'][k]:>+8.4f}"
        )
    if report["clusters"]:
        lines += ["", f"{'cluster':<10} {'stars':>5} {'median bins':>11} {'worst':>22} {'max gap':>8} "
                      f"{'rise':>7} {'min':>7}"]
        for c in report["clusters"]:
            lines.append(
                f"{c.cluster:<10} {c.n_stars:>5} {c.median_bins_covered:>11.1f} "
                f"{c.worst_star + f' ({c.min_bins_covered})':>22} {c.max_largest_gap:>8.3f} "
                f"{c.n_rising_branch_sampled:>3}/{c.n_rising_branch_applies:<3} "
                f"{c.n_minimum_light_sampled:>3}/{c.n_stars}"
            )
    warnings = [m for v in variables for m in report["warnings"][v.id]]
    if warnings:
        lines += ["", "Warnings:"]
        for m in warnings:
            lines += textwrap.wrap(m, 80, initial_indent="  ", subsequent_indent="    ")
    return "\n".join(lines)
