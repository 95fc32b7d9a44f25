"""The night's report: the almanac and each target's window as text (``gcplan night``)
and as JSON, and the JSON of a site and of the constraints shared by the other reports."""

from __future__ import annotations

import textwrap

import numpy as np

from planner.cautions import PLAN_CAUTION as CAUTION
from planner.inputs.sites import mean_solar_zone
from planner.sky.nights import iso_utc, jd_to_datetime, local_hhmm, utc_hhmm


def site_json(site) -> dict:
    loc = site.location
    return {
        "name": loc.name,
        "latitude_deg": loc.latitude_deg,
        "longitude_deg": loc.longitude_deg,
        "elevation_m": loc.elevation_m,
        "timezone": loc.timezone,
    }


def constraints_json(c) -> dict:
    return {
        "min_altitude_deg": c.min_altitude_deg,
        "max_airmass": c.max_airmass,
        "twilight": c.twilight,
        "min_moon_separation_deg": c.min_moon_separation_deg,
        "altitude_limit_deg": round(c.altitude_limit_deg, 3),
        "sun_avoidance_deg": c.sun_avoidance_deg,
        "horizon_mask": bool(c.horizon_az_deg),
    }


def almanac_json(alm, i: int = 0, usable=None) -> dict:
    """The Sun, twilights, darkness and Moon of night ``i`` (times ISO 8601 UTC, null:
    does not happen); ``usable`` (start, end JD) adds the usable window under the constraints."""
    usable_window = {} if usable is None else {
        "usable_window": {"start": iso_utc(usable[0]), "end": iso_utc(usable[1])}}
    return {
        "sun": {"set": iso_utc(alm.sunset_jd[i]), "rise": iso_utc(alm.sunrise_jd[i])},
        "twilight": {
            name: {"evening": iso_utc(alm.evening_jd[name][i]), "morning": iso_utc(alm.morning_jd[name][i])}
            for name in ("civil", "nautical", "astronomical")
        },
        "dark_hours": round(float(alm.dark_hours("astronomical")[i]), 3),
        **usable_window,
        "moon": {
            "illumination": round(float(alm.moon_illumination[i]), 4),
            "phase_angle_deg": round(float(alm.moon_phase_angle_deg[i]), 2),
            "rise": iso_utc(alm.moonrise_jd[i]),
            "set": iso_utc(alm.moonset_jd[i]),
            "up_all_night": bool(alm.moon_up_all_span is not None and alm.moon_up_all_span[i] > 0),
            "down_all_night": bool(alm.moon_up_all_span is not None and alm.moon_up_all_span[i] < 0),
        },
    }


def night_json(run_, i: int = 0) -> dict:
    alm, vis = run_.almanac, run_.visibility
    targets = []
    for k, t in enumerate(run_.targets):
        targets.append(
            {
                "name": t.name,
                "ra_deg": t.ra_deg,
                "dec_deg": t.dec_deg,
                "transit": iso_utc(vis.transit_jd[k, i]),
                "max_altitude_deg": rounded(vis.max_altitude_deg[k, i], 2),
                "min_airmass": rounded(vis.min_airmass[k, i], 3),
                "observable_hours": rounded(vis.observable_hours[k, i], 3),
                "window": {"start": iso_utc(vis.window_start_jd[k, i]), "end": iso_utc(vis.window_end_jd[k, i])},
                "windows": [{"start": iso_utc(a), "end": iso_utc(b)} for a, b in vis.windows(k, i)],
                "moon_separation_deg": rounded(vis.moon_separation_deg[k, i], 1),
                "min_moon_separation_deg": rounded(vis.min_moon_separation_deg[k, i], 1),
            }
        )
    return {
        "site": site_json(run_.site),
        "night": alm.nights[i].isoformat(),
        **almanac_json(alm, i, usable=(vis.dark_start_jd[i], vis.dark_end_jd[i])),
        "constraints": constraints_json(run_.constraints),
        "targets": targets,
        "warnings": list(run_.warnings),
    }


def rounded(x, nd: int) -> float | None:
    """``x`` rounded to ``nd`` decimals for JSON; None (null) for NaN or no value."""
    if x is None:
        return None
    x = float(x)
    return None if not np.isfinite(x) else round(x, nd)


def utc_offset_label(jd: float, zone: str) -> str:
    moment = jd_to_datetime(jd, zone)
    off = moment.utcoffset()
    minutes = int(off.total_seconds() // 60)
    sign = "+" if minutes >= 0 else "−"
    return f"UTC{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def night_text(run_, i: int = 0) -> str:
    site, alm, vis, c = run_.site, run_.almanac, run_.visibility, run_.constraints
    loc = site.location
    zone = loc.timezone
    lines = []
    lines.append(f"Night of {alm.nights[i]:%a %Y-%m-%d} at {loc.name}")
    lines.append(
        f"  {loc.latitude_deg:+.4f}°, {loc.longitude_deg:+.4f}°, {loc.elevation_m:.0f} m · {zone} "
        f"({utc_offset_label(alm.middle_jd[i], zone)} at midnight)"
    )
    if zone.startswith("Etc/") and zone == mean_solar_zone(loc.longitude_deg):
        lines.append("  local clock: the whole hour nearest the site's mean solar time")
    lines.append("")
    lines.append(f"  {'':20s}{'evening':^14s}  {'morning':^14s}")
    lines.append(f"  {'':20s}{'local':>7s}{'UTC':>7s}  {'local':>7s}{'UTC':>7s}")

    def row(label, jd_a, jd_b):
        lines.append(
            f"  {label:20s}{local_hhmm(jd_a, zone):>7s}{utc_hhmm(jd_a):>7s}  "
            f"{local_hhmm(jd_b, zone):>7s}{utc_hhmm(jd_b):>7s}"
        )

    row("sun (−0.833°)", alm.sunset_jd[i], alm.sunrise_jd[i])
    for name, level in (("civil", 6), ("nautical", 12), ("astronomical", 18)):
        row(f"{name} (−{level}°)", alm.evening_jd[name][i], alm.morning_jd[name][i])
    always = 0 if alm.moon_up_all_span is None else int(alm.moon_up_all_span[i])
    if always:
        lines.append("  the Moon is up all night" if always > 0 else "  the Moon stays below the horizon all night")
    else:
        events = sorted((("moonrise", alm.moonrise_jd[i]), ("moonset", alm.moonset_jd[i])),
                        key=lambda e: np.nan_to_num(e[1], nan=np.inf))  # in the order they happen
        lines.append("  " + ", ".join(f"{name} {local_hhmm(jd, zone)} local ({utc_hhmm(jd)} UTC)"
                                      + (" before sunset" if jd < alm.sunset_jd[i] else "")
                                      for name, jd in events))
    before, after = (utc_offset_label(jd, zone) for jd in (alm.span_start_jd[i], alm.span_end_jd[i]))
    if before != after:
        lines.append(f"  the clocks change tonight: {before} in the evening, {after} in the morning")
    lines.append(
        f"  Moon {alm.moon_illumination[i] * 100:.0f}% illuminated (phase angle "
        f"{alm.moon_phase_angle_deg[i]:.0f}°) at the middle of the night"
    )
    dark = float(alm.dark_hours("astronomical")[i])
    lines.append(f"  astronomically dark: {dark:.1f} h" if dark > 0 else "  astronomically dark: never tonight")
    s, e = vis.dark_start_jd[i], vis.dark_end_jd[i]
    if np.isfinite(s):
        lines.append(
            f"  usable ({c.twilight}): {local_hhmm(s, zone)}–{local_hhmm(e, zone)} local, "
            f"{utc_hhmm(s)}–{utc_hhmm(e)} UTC, {(e - s) * 24:.1f} h"
        )
    else:
        lines.append(f"  usable ({c.twilight}): no such darkness tonight")
    lines.extend(textwrap.wrap(f"limits: {c.describe()}", 78, initial_indent="  ", subsequent_indent="    "))
    lines.append("")
    lines.append(
        f"  {'target':<12s}{'transit':>13s} {'max alt':>7s} {'min X':>5s}  {'window':<11s}  {'window':<11s} "
        f"{'hours':>5s} {'moon':>5s}"
    )
    lines.append(f"  {'':<12s}{'local':>7s}{'UTC':>6s} {'':>7s} {'':>5s}  {'local':<11s}  {'UTC':<11s}")
    order = np.argsort(np.nan_to_num(vis.window_start_jd[:, i], nan=np.inf), kind="stable")
    for k in order:
        t = run_.targets[k]
        name = t.name if len(t.name) <= 12 else t.name[:11] + "…"
        hours = vis.observable_hours[k, i]
        w_s, w_e = vis.window_start_jd[k, i], vis.window_end_jd[k, i]
        max_alt = vis.max_altitude_deg[k, i]
        if hours > 0:
            wl = f"{local_hhmm(w_s, zone)}–{local_hhmm(w_e, zone)}"
            wu = f"{utc_hhmm(w_s)}–{utc_hhmm(w_e)}"
        else:
            wl, wu = ("below limit" if np.isfinite(max_alt) else "no darkness"), ""
        min_x = vis.min_airmass[k, i]
        lines.append(
            f"  {name:<12s}{local_hhmm(vis.transit_jd[k, i], zone):>7s}{utc_hhmm(vis.transit_jd[k, i]):>6s} "
            f"{_fmt(max_alt, '7.1f', '°')} {_fmt(min_x, '5.2f')}  {wl:<11s}  {wu:<11s} {hours:5.1f} "
            f"{_fmt(vis.moon_separation_deg[k, i], '4.0f', '°')}"
        )
        parts = vis.windows(k, i)
        if len(parts) > 1:  # the upper altitude limit cuts the window around transit
            g0, g1 = parts[0][1], parts[1][0]
            lines.append(f"  {'':<12s}above {c.max_altitude_deg:g}° (not usable) {local_hhmm(g0, zone)}–"
                         f"{local_hhmm(g1, zone)} local, {utc_hhmm(g0)}–{utc_hhmm(g1)} UTC")
    lines.append("")
    lines.append("  Sunset, sunrise: the Sun's centre at −0.833°; moonrise, moonset: the Moon's")
    lines.append("  upper limb on the horizon; twilights, altitudes, separations: centres.")
    lines.append("  Altitudes geometric; airmass Kasten & Young 1989.")
    lines.extend("  " + part for part in textwrap.wrap(CAUTION, 76))
    return "\n".join(line.rstrip() for line in lines)


def _fmt(x, spec, unit=""):
    x = float(x)
    width = int(spec.split(".")[0]) + len(unit)
    return f"{'—':>{width}s}" if not np.isfinite(x) else f"{x:{spec}}{unit}"
