"""Reading a written plan back: visit times from ``gcplan schedule --out`` (ECSV) or from the
JSON of ``gcplan schedule``/``campaign``/``replan --json`` (shell module: it reads files)."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import numpy as np

from planner.errors import InputError
from planner.model.names import normalize_name
from planner.sky.nights import datetime_to_jd


class PlanFileError(InputError):
    """A plan file that cannot be read."""


def _jd(text, path, where):
    try:
        return datetime_to_jd(dt.datetime.fromisoformat(str(text).replace("Z", "+00:00")))
    except ValueError:
        raise PlanFileError(f"{where}: {text!r} is not an ISO 8601 time", path) from None


def read_plan_visits(path: str | Path) -> list[dict]:
    """Visits of a plan file: dicts with target, purpose, start_jd, end_jd, status."""
    p = Path(path)
    source = str(path)
    from planner.inputs.files import TABLE_LIMIT_BYTES, read_input

    raw = read_input(p, source, PlanFileError, "plan", TABLE_LIMIT_BYTES)
    if p.suffix.lower() == ".ecsv":
        from astropy.table import Table

        try:
            t = Table.read(raw.decode("utf-8"), format="ascii.ecsv")
        except Exception as exc:  # astropy raises many kinds for a broken table
            raise PlanFileError(f"not a readable ECSV table ({exc})", source) from None
        need = {"target", "start_jd", "end_jd"}
        if not need <= set(t.colnames):
            raise PlanFileError(f"needs columns {', '.join(sorted(need))} (as gcplan schedule --out writes; "
                                f"got {', '.join(t.colnames)})", source)
        return [{"target": str(r["target"]), "purpose": str(r["purpose"]) if "purpose" in t.colnames else "",
                 "start_jd": float(r["start_jd"]), "end_jd": float(r["end_jd"]),
                 "status": str(r["status"]) if "status" in t.colnames else "planned"} for r in t]
    if p.suffix.lower() == ".json":
        try:
            data = json.loads(raw.decode("utf-8"))
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise PlanFileError(f"not readable JSON ({exc})", source) from None
        nights = data.get("nights") if isinstance(data, dict) and "nights" in data else [data]
        out = []
        for k, night in enumerate(nights):
            if not isinstance(night, dict) or not isinstance(night.get("visits"), list):
                raise PlanFileError(f"night #{k + 1} has no visits list (not a gcplan plan)", source)
            for i, v in enumerate(night["visits"]):
                where = f"night #{k + 1} visit #{i + 1}"
                try:
                    out.append({"target": v["target"], "purpose": v.get("purpose", ""),
                                "start_jd": _jd(v["start"], source, where), "end_jd": _jd(v["end"], source, where),
                                "status": v.get("status", "planned")})
                except (KeyError, TypeError):
                    raise PlanFileError(f"{where} lacks target, start or end", source) from None
        return out
    raise PlanFileError("a plan must be .ecsv (gcplan schedule --out) or .json (--json output)", source)


def variable_visit_times(path: str | Path, cluster: str | None = None) -> np.ndarray:
    """Middle times (JD UTC) of the plan's variable-star visits (all visits if it has none),
    of ``cluster`` only when given; missed visits left out."""
    visits = [v for v in read_plan_visits(path) if v["status"] != "missed"]
    if cluster:
        visits = [v for v in visits if normalize_name(v["target"]) == normalize_name(cluster)]
    var = [v for v in visits if v["purpose"] == "variables"]
    chosen = var or visits
    return np.array(sorted(0.5 * (v["start_jd"] + v["end_jd"]) for v in chosen))
