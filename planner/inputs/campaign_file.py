"""Reading a campaign file (TOML) into a :class:`~planner.model.campaign.Campaign`.

Schema (unknown keys are errors; paths are relative to the campaign file)::

    name = "..."                 free text
    invented = true              optional: demo data says so
    site = "demo"                a site profile path or a bundled profile's name
    targets = "clusters.ecsv"    target list (ECSV, CSV or TOML), or "all"
    variables = "variables.ecsv" optional: variables table (RR Lyrae with ephemerides)
    first_night = 2027-01-05     local evening date (TOML date or "YYYY-MM-DD")
    last_night = 2027-01-18      or nights = 14
    seeing_arcsec = 1.0          optional: the seeing planned for (default: the site's typical)
    max_frame_s = 600            optional: longest single frame of the depth goals (default: none
                                 but saturation; long frames collect cosmic rays and guiding drift)
    fill = "cadence-and-depth"   optional: what the time the goals leave is used for: extra cadence
                                 epochs and extra depth frames ("cadence-and-depth", the default),
                                 "cadence", "depth", or "none" (left idle)
    [constraints]                optional: twilight, max_airmass, min_altitude_deg,
                                 min_moon_separation_deg (default: the site profile's)
    [[goals]]                    depth goals: level "tip" | "hb" | "turnoff"; filter; snr;
                                 targets (names, default all); visits (times over the
                                 campaign, = 1); max_airmass; dark (= false: Moon down or
                                 ≤ 25 % lit); max_seeing_arcsec; priority (a weight, = 1);
                                 field_radius_arcmin (the stars' distance from the
                                 cluster centre: its unresolved light joins the sky)
    [cadence]                    optional variable-star cadence: filter = "V"; snr (on the cluster's
                                 HB, = 30) or exposure_s; visits_per_night; phase_bins = 20;
                                 min_spacing_min = 30; priority (a weight, = 1)

Every problem raises :class:`CampaignError` naming the file, the field and the
bad value, and what would be valid.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

from planner.errors import CampaignError, InputError
from planner.inputs.tomlcheck import Schema, Table, read_toml, show

_KEYS = {
    "": ("name", "invented", "site", "targets", "variables", "first_night", "last_night", "nights",
         "seeing_arcsec", "max_frame_s", "fill", "constraints", "goals", "cadence"),
    "constraints": ("twilight", "max_airmass", "min_altitude_deg", "min_moon_separation_deg"),
    "goal": ("level", "filter", "snr", "targets", "visits", "max_airmass", "dark", "max_seeing_arcsec",
             "priority", "field_radius_arcmin"),
    "cadence": ("filter", "snr", "exposure_s", "visits_per_night", "phase_bins", "min_spacing_min",
                "priority"),
}
MAX_NIGHTS = 366


_SCHEMA = Schema(_KEYS, CampaignError)


def _date(top: Table, key: str, required: bool) -> dt.date | None:
    value = top.get(key, required)
    if value is None:
        return None
    if isinstance(value, dt.datetime):
        top.fail(f"{key} must be a date YYYY-MM-DD, not a date and time (got {show(value)})")
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value.strip())
        except ValueError:
            pass
    top.fail(f"{key} must be a date YYYY-MM-DD (got {show(value)})")


def _path(top: Table, key: str, base: Path, required: bool, special: tuple[str, ...] = ()) -> str | None:
    value = top.get(key, required)
    if value is None:
        return None
    if not isinstance(value, str) or not value.strip():
        top.fail(f"{key} must be a file name (got {show(value)})")
    if value in special:
        return value
    p = Path(value)
    p = p if p.is_absolute() else base / p
    if not p.is_file():
        top.fail(f"{key} {show(value)}: no such file ({p})")
    return str(p)


def read_campaign_file(path: str | Path, catalog=None):
    """The :class:`~planner.model.campaign.Campaign` in the file at ``path`` (``catalog``:
    the bundled catalog if read already, else it is read here)."""
    from planner.inputs.catalog import load_catalog
    from planner.inputs.sites import resolve_site
    from planner.inputs.targets import resolve_targets
    from planner.inputs.variable_files import read_variables
    from planner.model.campaign import FILL_MODES, Campaign

    source = str(path)
    raw = read_toml(path, source, CampaignError, "campaign")
    base = Path(path).resolve().parent
    top = Table(raw, "", "", source, _SCHEMA)
    name = top.string("name", default=Path(path).stem)
    invented = top.get("invented", False)
    if invented is not None and not isinstance(invented, bool):
        top.fail(f"invented must be true or false (got {show(invented)})")
    site_spec = top.get("site", True)
    if not isinstance(site_spec, str):
        top.fail(f"site must be a profile file or a bundled profile's name (got {show(site_spec)})")
    local = base / site_spec
    site = resolve_site(str(local) if local.is_file() else site_spec)
    catalog = catalog if catalog is not None else load_catalog()
    targets_path = _path(top, "targets", base, True, special=("all",))
    targets = resolve_targets(targets_path, [], catalog)
    variables_path = _path(top, "variables", base, False)
    variables = read_variables(variables_path, catalog) if variables_path else ()
    nights = _nights(top)
    seeing = top.number("seeing_arcsec", 0.1, 10, required=False)
    max_frame = top.number("max_frame_s", 1.0, 7200.0, required=False)
    fill = top.string("fill", default=FILL_MODES[0], choices=FILL_MODES)
    constraints = _constraints(top, site)
    goals = _goals(top, source, site, targets)
    cadence = _cadence(raw, source, site, variables)
    return Campaign(name=name, source=source, site=site, targets=tuple(targets), variables=tuple(variables),
                    nights=nights, constraints=constraints, goals=tuple(goals), cadence=cadence,
                    seeing_arcsec=seeing, invented=bool(invented), max_frame_s=max_frame, fill=fill)


def _nights(top: Table) -> tuple[dt.date, ...]:
    """The campaign's nights, from first_night and last_night or a count of nights."""
    from planner.sky.nights import night_out_of_range

    first = _date(top, "first_night", True)
    last = _date(top, "last_night", False)
    n = top.whole("nights", 1, MAX_NIGHTS, required=False)
    if last is not None and n is not None:
        top.fail("give last_night or nights, not both")
    if last is None and n is None:
        top.fail("needs last_night (a date) or nights (a count)")
    if last is None:
        if n != int(n):
            top.fail(f"nights must be a whole number (got {show(n)})")
        last = first + dt.timedelta(days=int(n) - 1)
    if last < first:
        top.fail(f"last_night {last} is before first_night {first}")
    for key, night in (("first_night", first), ("last_night", last)):
        if night_out_of_range(night):
            top.fail(f"{key} {night_out_of_range(night)}")
    if (last - first).days + 1 > MAX_NIGHTS:
        top.fail(f"the campaign spans {(last - first).days + 1} nights; at most {MAX_NIGHTS}")
    return tuple(first + dt.timedelta(days=i) for i in range((last - first).days + 1))


def _constraints(top: Table, site):
    """The [constraints] table over the site profile's limits."""
    from planner.model.constraints import constraints_for_site

    ct = top.sub("constraints", "constraints", required=False)
    try:
        return constraints_for_site(
            site,
            twilight=ct.string("twilight", default=site.limits.twilight,
                               choices=("civil", "nautical", "astronomical")),
            max_airmass=ct.number("max_airmass", 1.0, 40.0, required=False),
            min_altitude_deg=ct.number("min_altitude_deg", 0.0, 89.0, required=False),
            min_moon_separation_deg=ct.number("min_moon_separation_deg", 0.0, 180.0, required=False),
        )
    except ValueError as exc:
        if isinstance(exc, InputError):
            raise
        ct.fail(str(exc))


def _site_filter(table: Table, site, default: str | None = None) -> str:
    """The table's filter, which must be one of the site's."""
    filt = table.string("filter", default=default)
    if filt not in site.filters:
        table.fail(f"filter {show(filt)} is not a filter of site {show(site.name)} "
                   f"(filters: {', '.join(site.filters)})")
    return filt


def _goals(top: Table, source: str, site, targets) -> list:
    """The [[goals]] depth goals."""
    raw_goals = top.get("goals", False) or []
    if not isinstance(raw_goals, list):
        top.fail("goals must be an array of tables ([[goals]])")
    return [_goal(Table(g, f"[[goals]] #{i + 1}", "goal", source, _SCHEMA), site, targets)
            for i, g in enumerate(raw_goals)]


def _goal(gt: Table, site, targets):
    from planner.model.campaign import DepthGoal

    names = {t.name for t in targets}
    level = gt.string("level", choices=("tip", "hb", "turnoff"))
    filt = _site_filter(gt, site)
    wanted = gt.get("targets", False)
    if wanted is None:
        chosen = tuple(t.name for t in targets)
    else:
        if not isinstance(wanted, list) or not all(isinstance(w, str) for w in wanted):
            gt.fail(f"targets must be a list of target names (got {show(wanted)})")
        if not wanted:
            gt.fail("targets is an empty list: the goal would plan nothing (leave targets out for all "
                    "of the campaign's targets)")
        missing = [w for w in wanted if w not in names]
        if missing:
            gt.fail(f"targets: {show(missing[0])} is not in the campaign's targets "
                    f"({', '.join(sorted(names))})")
        chosen = tuple(wanted)
    dark = gt.get("dark", False)
    if dark is not None and not isinstance(dark, bool):
        gt.fail(f"dark must be true or false (got {show(dark)})")
    visits = gt.whole("visits", 1, 1000, default=1)
    return DepthGoal(
        level=level, filter=filt, snr=gt.number("snr", 1.0, 10000.0), targets=chosen,
        visits=int(visits), max_airmass=gt.number("max_airmass", 1.0, 40.0, required=False),
        dark=bool(dark), max_seeing_arcsec=gt.number("max_seeing_arcsec", 0.1, 10.0, required=False),
        priority=gt.number("priority", 0.0, 1000.0, lo_open=True, default=1.0),
        field_radius_arcmin=gt.number("field_radius_arcmin", 0.0, 600.0, required=False))


def _cadence(raw: dict, source: str, site, variables):
    """The optional [cadence] table of the variable stars."""
    from planner.model.campaign import CadenceGoal

    if "cadence" not in raw:
        return None
    vt = Table(raw["cadence"], "[cadence]", "cadence", source, _SCHEMA)
    if not variables:
        vt.fail("needs a variables table: add variables = \"FILE\" at the top level")
    filt = _site_filter(vt, site, default="V")
    exposure = vt.number("exposure_s", 0.0, 36000.0, lo_open=True, required=False)
    snr = vt.number("snr", 1.0, 10000.0, required=False)
    if exposure is not None and snr is not None:
        vt.fail("give snr or exposure_s, not both")
    per_night = vt.whole("visits_per_night", 1, 200)
    bins = vt.whole("phase_bins", 2, 1000, default=20)
    return CadenceGoal(filter=filt, snr=30.0 if snr is None and exposure is None else snr,
                       exposure_s=exposure, visits_per_night=int(per_night), phase_bins=int(bins),
                       min_spacing_min=vt.number("min_spacing_min", 0.0, 720.0, default=30.0),
                       priority=vt.number("priority", 0.0, 1000.0, lo_open=True, default=1.0))
