"""``gcplan expose --batch``'s table: one row per exposure question, as CSV or ECSV, and its text.

Each row holds the fields ``expose --json`` gives for one question, flattened:
the nested ``inputs`` become ``inputs.airmass``, ``inputs.read_noise_e``, …, and
the list of warnings one cell joined by `` | ``.  Empty cells are nulls (no
saturation, no cluster light).  The ECSV is written here directly (plain
scalar columns, space-delimited, quoted where needed), so a batch does not
load astropy; astropy's reader reads it back.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

WARNING_JOINER = " | "


def flat_record(record: dict) -> dict:
    """One question's JSON fields as one table row (nested dicts as ``outer.inner``, lists joined)."""
    out: dict = {}
    for key, value in record.items():
        if isinstance(value, dict):
            for inner, v in value.items():
                out[f"{key}.{inner}"] = v
        elif isinstance(value, (list, tuple)):
            out[key] = WARNING_JOINER.join(str(v) for v in value)
        else:
            out[key] = value
    return out


def _datatype(values: list) -> str:
    present = [v for v in values if v is not None]
    if present and all(isinstance(v, bool) for v in present):
        return "bool"
    if present and all(isinstance(v, int) and not isinstance(v, bool) for v in present):
        return "int64"
    if present and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in present):
        return "float64"
    return "string"


def _text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ("nan" if math.isnan(value) else repr(value))
    return str(value)


def _ecsv_cell(text: str) -> str:
    if text == "" or any(c in text for c in ' "\t\n,'):
        return '"' + text.replace('"', '""') + '"'
    return text


def write_expose_table(path: Path, records: list[dict]) -> Path:
    """The rows as ``path`` (its suffix, .csv or .ecsv, says which)."""
    rows = [flat_record(r) for r in records]
    names = list(rows[0]) if rows else []
    path = Path(path)
    if path.suffix.lower() == ".csv":
        with open(path, "w", encoding="utf-8", newline="") as f:
            writer = csv.writer(f, lineterminator="\n")
            writer.writerow(names)
            writer.writerows([_text(row.get(n)) for n in names] for row in rows)
        return path
    kinds = {n: _datatype([row.get(n) for row in rows]) for n in names}
    lines = ["# %ECSV 1.0", "# ---", "# datatype:"]
    lines += [f"# - {{name: {n}, datatype: {kinds[n]}}}" for n in names]
    lines += ["# meta:", "#   source: 'gcplan expose --batch, one row per exposure question'",
              "# schema: astropy-2.0", " ".join(names)]
    lines += [" ".join(_ecsv_cell(_text(row.get(n))) for n in names) for row in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def batch_text(records: list[dict], row_numbers: list[int]) -> str:
    """One line per row (80 columns): what (cluster and level: tip, hb, turnoff; or the magnitude
    given), filter, S/N, the frames, the total, how many notes."""
    lines = [f"{'row':>3}  {'what':<26} {'filter':<6} {'S/N':>6}  {'frames':>14}  {'total':>9}  notes"]
    for number, r in zip(row_numbers, records):
        what = f"{r['target']}, {r['level']}" if r["level"] != "user" else f"{r['band']} = {r['magnitude']:.2f}"
        frames = f"{r['frames']} x {r['frame_s']:g} s"
        lines.append(f"{number:>3}  {what[:26]:<26} {r['filter'][:6]:<6} {r['snr_goal']:>6g}  {frames:>14}  "
                     f"{r['exposure_s']:>7.4g} s  {len(r['warnings']):>5}")
    lines.append("")
    lines.append("Twilight is not modelled (astronomical night). Each row's notes and details:")
    lines.append("--json, or --out FILE.ecsv|.csv.")
    return "\n".join(lines)
