"""Regenerate targets/demo/variables.ecsv: INVENTED RR Lyrae for the demo campaign.

Run from the repository root:  python tests/data/variables_make_demo.py

Nothing here is a real star.  Periods, amplitudes and types are drawn from the
Oosterhoff models of planner.variables.recovery (seeded); positions are random offsets of
1–4 arcmin from the cluster centres of the bundled catalog; epochs are random times
of maximum in 2025; mean V is the cluster's horizontal-branch level from
planner.light.photometry plus a small scatter.  Two stars are placed near 1/2 d and 1/3 d
on purpose so that the demo shows the one-day alias warning.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from planner.inputs.catalog import load_catalog  # noqa: E402
from planner.light.photometry import science_level  # noqa: E402
from planner.variables.recovery import OOSTERHOFF_I, synthetic_population  # noqa: E402

# (catalog name, short label for ids, Oosterhoff model, number of stars): the
# clusters of the demo campaign (targets/demo/clusters.ecsv).  All five are
# usually counted Oosterhoff I (from memory); 47 Tuc is metal-rich and gets a
# single star, NGC 2808 a few.
CLUSTERS = (
    ("NGC 104", "47Tuc", OOSTERHOFF_I, 1),
    ("NGC 362", "N362", OOSTERHOFF_I, 9),
    ("NGC 1851", "N1851", OOSTERHOFF_I, 10),
    ("NGC 2808", "N2808", OOSTERHOFF_I, 4),
    ("NGC 3201", "N3201", OOSTERHOFF_I, 14),
)
SEED = 20270512
EPOCH_RANGE_HJD = (2460676.5, 2461041.5)  # 2025


def main() -> None:
    from astropy.table import Table

    rng = np.random.default_rng(SEED)
    catalog = load_catalog()
    rows = []
    for name, label, model, n in CLUSTERS:
        entry = catalog.lookup(name)
        stars = synthetic_population(model, n, rng)
        periods = stars.period_d.copy()
        amplitudes = stars.amplitude_mag.copy()
        types = list(stars.types)
        if label == "M15":  # an RRab very near 1/2 d: nightly visits repeat phases
            periods[2], types[2], amplitudes[2] = 0.500112, "RRab", 1.05
        if label == "N3201":  # an RRc very near 1/3 d
            periods[4], types[4], amplitudes[4] = 0.333395, "RRc", 0.45
        hb_v = science_level(entry, "hb", "V").magnitude
        radius = rng.uniform(1.0, 4.0, n) / 60.0
        angle = rng.uniform(0.0, 2.0 * np.pi, n)
        dec = entry.dec_deg + radius * np.cos(angle)
        ra = entry.ra_deg + radius * np.sin(angle) / np.cos(np.radians(entry.dec_deg))
        epochs = rng.uniform(*EPOCH_RANGE_HJD, n)
        mean_v = hb_v + rng.normal(0.0, 0.05, n)
        for i in range(n):
            rows.append(
                (f"{label}-inv{i + 1:02d}", name, types[i], round(float(periods[i]), 6),
                 round(float(epochs[i]), 5), round(float(ra[i] % 360.0), 5), round(float(dec[i]), 5),
                 round(float(amplitudes[i]), 2), round(float(mean_v[i]), 2))
            )
    names = ("id", "cluster", "type", "period_d", "epoch_hjd", "ra_deg", "dec_deg", "amplitude_mag", "mean_mag")
    table = Table(rows=rows, names=names)
    table.meta["title"] = "gcplan demo campaign: INVENTED RR Lyrae variables"
    table.meta["invented"] = True
    table.meta["comments"] = [
        "INVENTED DATA for the gcplan demo: none of these stars is real.",
        "Periods, types and amplitudes drawn from planner.variables.recovery's Oosterhoff models;",
        "positions are random offsets of 1-4 arcmin from the catalog cluster centres;",
        "epochs (times of maximum light, HJD UTC) are random dates in 2025;",
        "mean V is the cluster's horizontal-branch level (planner.light.photometry) plus scatter.",
        f"Made by tests/data/variables_make_demo.py with seed {SEED}.",
    ]
    units = {"period_d": "d", "epoch_hjd": "d", "ra_deg": "deg", "dec_deg": "deg",
             "amplitude_mag": "mag", "mean_mag": "mag"}
    descriptions = {
        "id": "invented identifier (cluster label, 'inv', number)",
        "cluster": "host cluster, catalog name",
        "type": "RRab or RRc",
        "period_d": "pulsation period",
        "epoch_hjd": "a time of maximum light, heliocentric JD (UTC)",
        "ra_deg": "invented ICRS right ascension",
        "dec_deg": "invented ICRS declination",
        "amplitude_mag": "V amplitude, peak to peak",
        "mean_mag": "mean V magnitude",
    }
    for col in names:
        table[col].description = descriptions[col]
        if col in units:
            table[col].unit = units[col]
    out = ROOT / "targets" / "demo" / "variables.ecsv"
    out.parent.mkdir(parents=True, exist_ok=True)
    table.write(out, format="ascii.ecsv", overwrite=True)
    print(f"wrote {len(table)} invented variables to {out}")


if __name__ == "__main__":
    main()
