"""The period-recovery report of ``gcplan recover``, as text (its JSON is the result itself)."""

from __future__ import annotations


def recover_text(r: dict) -> str:
    lines = [
        f"{r['stars']} stars ({r['population']}), {r['nights']} nights from {r['first_night']} at "
        f"{r['site']} ({r['nights_with_dark_time']} with {r['twilight']} darkness), "
        f"{r['visits_per_night']} visits a night: {r['n_epochs']} epochs over {r['baseline_d']:.2f} d",
        f"noise {r['noise_mag']:.4f} mag at {r['filter']} = {r['mean_mag']:.2f} ({r['noise_source']})",
        "",
        f"recovered (|ΔP|/P < {r['tolerance']:g}): {100 * r['recovered_fraction']:5.1f} %",
    ]
    for name, frac in r["outcome_fractions"].items():
        if name != "recovered":
            lines.append(f"{name + ':':<27}{100 * frac:5.1f} %")
    if r["failures"]:
        lines += ["", f"{'id':<16} {'type':<5} {'P (d)':>9} {'found (d)':>10}  outcome"]
        for f in r["failures"][:30]:
            found = "—" if f["recovered_period_d"] is None else f"{f['recovered_period_d']:.5f}"
            lines.append(f"{f['id']:<16} {f['type']:<5} {f['period_d']:>9.5f} {found:>10}  {f['outcome']}")
        if len(r["failures"]) > 30:
            lines.append(f"... and {len(r['failures']) - 30} more (see --json)")
    lines += ["", f"Note: {r['note']}."]
    return "\n".join(lines)
