"""The observability report (``gcplan observability``): hours per night per target over a
range of nights, the best night and the best months, as text and as JSON."""

from __future__ import annotations

import datetime as dt
import functools
import math
import textwrap
from typing import Iterator

import numpy as np

from planner.cautions import PLAN_CAUTION as CAUTION
from planner.reports.night_report import constraints_json, site_json


def observability_json(run_, summary) -> dict:
    hours = run_.visibility.observable_hours
    nights = [n.isoformat() for n in run_.nights]
    targets = []
    for k, (t, season) in enumerate(zip(run_.targets, summary)):
        head, tail = _target_parts(t, season)
        nights_k = [{"night": n, "observable_hours": round(float(h), 3)} for n, h in zip(nights, hours[k])]
        targets.append({**head, "nights": nights_k, **tail})
    return {**_header(run_, nights), "targets": targets, "warnings": list(run_.warnings)}


def _header(run_, nights) -> dict:
    dark = run_.almanac.dark_hours(run_.constraints.twilight)
    return {
        "site": site_json(run_.site),
        "start": nights[0],
        "end": nights[-1],
        "constraints": constraints_json(run_.constraints),
        "nights": [
            {
                "night": n,
                "usable_hours": round(float(d), 3),
                "moon_illumination": round(float(m), 3),
            }
            for n, d, m in zip(nights, dark, run_.almanac.moon_illumination)
        ],
    }


def _target_parts(t, season) -> tuple[dict, dict]:
    """A target's entry without its nights: the keys before them, and those after."""
    head = {"name": t.name, "ra_deg": t.ra_deg, "dec_deg": t.dec_deg}
    tail = {
        "best_night": season.best_night.isoformat() if season.best_night else None,
        "best_night_hours": round(season.best_hours, 3),
        "total_hours": round(season.total_hours, 3),
        "nights_observable": season.nights_observable,
        "hours_by_month": {m: round(h, 2) for m, h in season.hours_by_month.items()},
        "best_months": best_months(season),
    }
    return head, tail


def observability_json_pieces(run_, summary, encode) -> Iterator[str]:
    """The compact JSON text of :func:`observability_json`, one target at a time.

    ``encode`` turns a small object into compact JSON (the commands' encoder);
    each target's nights — the bulk of a large output — are written here
    directly, number by number as the encoder writes them (a float's ``repr``,
    ``null`` for NaN), so the whole document is never held in memory and the
    text is the same, byte for byte, as encoding :func:`observability_json`.
    """
    hours = run_.visibility.observable_hours
    nights = [n.isoformat() for n in run_.nights]
    prefixes = [f'{{"night":"{n}","observable_hours":' for n in nights]
    yield encode(_header(run_, nights))[:-1] + ',"targets":['
    for k, (t, season) in enumerate(zip(run_.targets, summary)):
        head, tail = _target_parts(t, season)
        body = "},".join(map(str.__add__, prefixes, _hours_text(hours[k]))) + "}"
        yield ("," if k else "") + encode(head)[:-1] + ',"nights":[' + body + "]," + encode(tail)[1:]
    yield '],"warnings":' + encode(list(run_.warnings)) + "}"


@functools.cache
def _millihours() -> np.ndarray:
    """The text of every hour count to 0.001 h in a day, by thousandths: repr(n / 1000)."""
    return np.array([repr(n / 1000) for n in range(24001)], dtype=object)


def _hours_text(hours: np.ndarray) -> list[str]:
    """The JSON text of ``round(float(h), 3)`` for each value, as the encoder writes it.

    round(h, 3) is the float nearest n / 1000 with n = h × 1000 rounded — which
    np.rint gives too unless h × 1000 lies within rounding of a half; those,
    negative values (−0.0 prints its sign), NaN and more than a day go the
    slow way.  Three times faster than rounding and printing every value.
    """
    v = hours * 1000.0
    n = np.rint(v)
    with np.errstate(invalid="ignore"):
        odd = ~(np.abs(np.abs(v - n) - 0.5) > 1e-6) | np.signbit(v) | ~(n <= 24000)
    texts = _millihours()[np.where(odd, 0, n).astype(np.intp)].tolist()
    for i in np.flatnonzero(odd).tolist():
        value = round(float(hours[i]), 3)
        texts[i] = repr(value) if math.isfinite(value) else "null"
    return texts


def best_months(season, share: float = 0.8) -> list[str]:
    """The months holding the most hours: those within ``share`` of the best month."""
    if season.total_hours <= 0:
        return []
    top = max(season.hours_by_month.values())
    return [m for m, h in season.hours_by_month.items() if h >= share * top and h > 0]


def observability_text(run_, summary) -> str:
    nights = run_.nights
    site = run_.site
    c = run_.constraints
    lines = [
        f"Observable hours, nights of {nights[0]} to {nights[-1]} ({len(nights)} nights)",
        f"  at {site.name}",
    ]
    lines += textwrap.wrap(f"limits: {c.describe()}; {c.twilight} twilight", 78, initial_indent="  ",
                           subsequent_indent="    ")
    lines += [
        "",
    ]
    months = list(summary[0].hours_by_month) if summary else []
    show_months = months[:6] if len(months) <= 6 else None
    head = f"  {'target':<13s}{'total h':>8s}{'nights':>7s}  {'best night':<10s}{'h':>5s}  best months"
    if show_months:
        head = f"  {'target':<13s}{'total h':>8s}{'nights':>7s}  {'best night':<10s}{'h':>5s}" + "".join(
            f"{m[2:]:>7s}" for m in show_months
        )
    lines.append(head)
    order = np.argsort([-s.total_hours for s in summary], kind="stable")
    for k in order:
        s = summary[k]
        name = s.name if len(s.name) <= 13 else s.name[:12] + "…"
        best = f"{s.best_night}" if s.best_night else "never"
        row = f"  {name:<13s}{s.total_hours:8.1f}{s.nights_observable:7d}  {best:<10s}{s.best_hours:5.1f}"
        if show_months:
            row += "".join(f"{s.hours_by_month[m]:7.1f}" for m in show_months)
        else:
            row += "  " + month_ranges(best_months(s))
        lines.append(row)
    lines.append("")
    lines.extend("  " + part for part in textwrap.wrap(CAUTION, 76))
    return "\n".join(lines)


def month_ranges(keys: list[str]) -> str:
    """'YYYY-MM' keys as compact runs: ['2027-01', '2027-02', '2027-04'] -> 'Jan–Feb, Apr 2027'."""
    if not keys:
        return "—"
    months = [dt.date.fromisoformat(k + "-01") for k in keys]
    runs: list[list[dt.date]] = []
    for m in months:
        prev = runs[-1][-1] if runs else None
        if prev is not None and (m.year * 12 + m.month) - (prev.year * 12 + prev.month) == 1:
            runs[-1].append(m)
        else:
            runs.append([m])
    years = {m.year for m in months}
    fmt = "%b" if len(years) == 1 else "%b %Y"
    parts = [r[0].strftime(fmt) if len(r) == 1 else f"{r[0].strftime(fmt)}–{r[-1].strftime(fmt)}" for r in runs]
    return ", ".join(parts) + (f" {years.pop()}" if len(years) == 1 else "")
