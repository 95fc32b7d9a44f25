"""``gcplan recover``: would a campaign of K nights × V visits recover the RR Lyrae periods?"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np

from planner.commands import common

# A cluster horizontal branch at about 12 kpc with little reddening: M_V ≈ 0.6
# (Cacciari & Clementini 2003) + (m − M) ≈ 15.4.  Used when neither --mean-mag nor
# --cluster (nor the variables file) says how bright the stars are.
DEFAULT_MEAN_V_MAG = 16.0
DEFAULT_EXPOSURE_S = 120.0
# σ_mag = 2.5 / ln 10 / (S/N): the magnitude error of a flux measured to S/N.
MAG_PER_INVERSE_SNR = 2.5 / np.log(10.0)
# Crowding, flat fielding and the comparison stars rarely let cluster photometry do
# better than about 0.01 mag per point, whatever the photon statistics (a rule of
# thumb, from memory); added in quadrature to the exposure core's noise.
DEFAULT_NOISE_FLOOR_MAG = 0.01


def register(sub) -> None:
    p = sub.add_parser(
        "recover",
        help="simulate a campaign's RR Lyrae light curves and see which periods it recovers",
        description="Lay V visits in each night's dark window for K nights, simulate the light "
        "curves of a synthetic Oosterhoff I/II population or of the variables in a file, add "
        "noise from the exposure calculation, search each with Lomb–Scargle and report the "
        "fraction recovered (|ΔP|/P < 1e-3), the one-day aliases and the failures.",
    )
    common.add_site_arguments(p)
    p.add_argument("--population", required=True, metavar="oosterhoff-1|oosterhoff-2|FILE",
                   help="a synthetic population by Oosterhoff type, or a variables table")
    p.add_argument("--stars", type=int, metavar="N",
                   help="stars to simulate (default 200; for a file: all of its rows)")
    p.add_argument("--nights", type=int, metavar="K", help="consecutive nights (not with --schedule)")
    p.add_argument("--visits-per-night", type=int, metavar="V",
                   help="visits spread evenly through each night's dark window (not with --schedule)")
    p.add_argument("--schedule", metavar="FILE",
                   help="take the visit times from a plan instead: gcplan schedule --out (.ecsv) or the "
                   "--json of schedule/campaign/replan (.json); its variable-star visits (of --cluster, if "
                   "given) are used")
    p.add_argument("--date", metavar="YYYY-MM-DD",
                   help="local evening date of the first night (default: today at the site)")
    p.add_argument("--twilight", choices=("civil", "nautical", "astronomical"),
                   help="twilight that bounds the dark window (default: the site profile's)")
    p.add_argument("--filter", default="V", metavar="NAME", help="filter for the noise (default V)")
    p.add_argument("--exposure", type=float, default=DEFAULT_EXPOSURE_S, metavar="S",
                   help=f"exposure per visit, seconds (default {DEFAULT_EXPOSURE_S:g})")
    p.add_argument("--cluster", metavar="NAME",
                   help="host cluster: its HB level sets the stars' mean magnitude and its "
                   "position the heliocentric correction")
    p.add_argument("--mean-mag", type=float, metavar="MAG",
                   help=f"mean magnitude of the stars (default: the cluster's HB, else {DEFAULT_MEAN_V_MAG:g})")
    p.add_argument("--noise-mag", type=float, metavar="SIGMA",
                   help="photometric error per visit, mag (default: from the exposure calculation)")
    p.add_argument("--noise-floor", type=float, default=DEFAULT_NOISE_FLOOR_MAG, metavar="SIGMA",
                   help="error per visit added in quadrature to the exposure calculation's, mag "
                   f"(crowding, flat field; default {DEFAULT_NOISE_FLOOR_MAG:g})")
    p.add_argument("--jitter-min", type=float, default=10.0, metavar="MIN",
                   help="random shift of each visit from its slot centre, minutes (default 10)")
    p.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    common.add_json_argument(p)
    p.set_defaults(run=run)


def check_options(args) -> None:
    from planner.inputs.variable_files import VariablesOptionError as E

    if args.schedule:
        if args.nights is not None or args.visits_per_night is not None:
            raise E("--schedule gives the visit times; leave out --nights and --visits-per-night")
    elif args.nights is None or args.visits_per_night is None:
        raise E("give --nights K and --visits-per-night V, or --schedule FILE")
    else:
        _check_counts(args, E)
    if args.stars is not None and not 1 <= args.stars <= 100_000:
        raise E(f"--stars must be between 1 and 100000 (got {args.stars})")
    if not args.exposure > 0:
        raise E(f"--exposure must be a positive number of seconds (got {args.exposure:g})")
    if args.noise_mag is not None and not 0 < args.noise_mag < 5:
        raise E(f"--noise-mag must be between 0 and 5 mag (got {args.noise_mag:g})")
    if not 0 <= args.noise_floor < 5:
        raise E(f"--noise-floor must be between 0 and 5 mag (got {args.noise_floor:g})")
    if not 0 <= args.jitter_min <= 120:
        raise E(f"--jitter-min must be between 0 and 120 minutes (got {args.jitter_min:g})")


def _check_counts(args, E) -> None:
    if not 1 <= args.nights <= 3700:
        raise E(f"--nights must be between 1 and 3700 (got {args.nights})")
    if not 1 <= args.visits_per_night <= 500:
        raise E(f"--visits-per-night must be between 1 and 500 (got {args.visits_per_night})")


def _first_night(args, site) -> dt.date:
    if args.date:
        return common.parse_night_date(args.date)
    from zoneinfo import ZoneInfo

    # The shell reads the clock (the core never does): tonight at the site.
    return (dt.datetime.now(ZoneInfo(site.location.timezone)) - dt.timedelta(hours=12)).date()


def _cluster_entry(name: str):
    from planner.inputs.catalog import load_catalog
    from planner.inputs.variable_files import VariablesOptionError

    catalog = load_catalog()
    entry = catalog.lookup(name)
    if entry is None:
        hints = catalog.suggestions(name)
        raise VariablesOptionError(
            f"--cluster {name!r} is not in the catalog" + (f"; did you mean {' or '.join(hints)}?" if hints else "")
        )
    return entry


def _hb_mag(site, filter_name: str, entry) -> float:
    from planner.light.photometry import science_level

    band = site.filters[filter_name].band if filter_name in site.filters else filter_name
    return float(science_level(entry, "hb", band).magnitude)


def population_from_file(path: str, n_stars: int | None, site, filter_name: str, default_mag: float | None):
    """(StarSample, per-star mean magnitude, variables) for the variables of a table."""
    from planner.inputs.variable_files import read_variables
    from planner.variables.recovery import (
        OOSTERHOFF_I,
        StarSample,
        bailey_amplitude_mag,
    )

    variables = read_variables(path)[: n_stars or None]
    types = tuple(v.type if v.type in ("RRab", "RRc") else ("RRc" if v.type == "RRd" else "RRab") for v in variables)
    period = np.array([v.period_d for v in variables])
    # Missing amplitudes: the Oosterhoff I Bailey locus for RRab, 0.45 mag (mid-range) for RRc.
    guess = np.where(
        [t == "RRc" for t in types], 0.45,
        np.clip(bailey_amplitude_mag(period), *OOSTERHOFF_I.rrab_amplitude_range_mag),
    )
    amp = np.array([v.amplitude_mag if v.amplitude_mag is not None else g for v, g in zip(variables, guess)])
    cache: dict[str, float] = {}
    mags = []
    for v in variables:  # per star, but only table rows: no simulation work here
        if v.mean_mag is not None:
            mags.append(v.mean_mag)
        elif default_mag is not None:
            mags.append(default_mag)
        elif v.cluster:
            if v.cluster not in cache:
                cache[v.cluster] = _hb_mag(site, filter_name, _cluster_entry(v.cluster))
            mags.append(cache[v.cluster])
        else:
            mags.append(DEFAULT_MEAN_V_MAG)
    stars = StarSample(
        star_id=tuple(v.id for v in variables), period_d=period, amplitude_mag=amp, types=types,
        epoch_d=np.array([v.epoch_hjd for v in variables]),
    )
    return stars, np.array(mags), variables


def run(args) -> int:
    from astropy.time import Time

    from planner.inputs.variable_files import VariablesOptionError
    from planner.light.exposure import snr_of_exposure
    from planner.sky.almanac import dark_windows_jd
    from planner.variables.phases import heliocentric_jd
    from planner.variables.recovery import (
        POPULATIONS,
        simulate_recovery,
        synthetic_population,
        visit_times_in_windows,
    )

    check_options(args)
    site = common.site_from_args(args)
    if args.filter not in site.filters:
        raise VariablesOptionError(
            f"--filter {args.filter!r} is not a filter of site {site.name!r} (filters: {', '.join(site.filters)})"
        )
    twilight = args.twilight or site.limits.twilight
    rng = np.random.default_rng(args.seed)
    if args.schedule:
        from planner.inputs.plan_files import variable_visit_times
        from planner.logbook.store import night_of_jd

        jd = variable_visit_times(args.schedule, args.cluster)
        if jd.size < 4:
            raise VariablesOptionError(f"--schedule {args.schedule!r} holds {jd.size} usable visit(s)"
                                       + (f" of {args.cluster}" if args.cluster else "") + "; at least 4 are needed")
        nights_seen = sorted({night_of_jd(t, site.location.timezone) for t in jd})
        first = nights_seen[0]
        args.nights = (nights_seen[-1] - first).days + 1
        args.visits_per_night = round(jd.size / len(nights_seen), 2)
        windows = np.full((len(nights_seen), 2), 0.0)
    else:
        first = _first_night(args, site)
        windows = dark_windows_jd(site, first, args.nights, twilight)
        jd = visit_times_in_windows(windows, args.visits_per_night, rng, args.jitter_min / 1440.0)
    if jd.size < 4:
        raise VariablesOptionError(
            f"only {jd.size} visits fit in {args.nights} night(s) from {first} at {site.name!r} "
            f"({twilight} twilight): give more nights, more visits or a lighter twilight"
        )
    times = Time(jd, format="jd", scale="utc")
    entry = _cluster_entry(args.cluster) if args.cluster else None

    population = args.population
    if population.lower() in POPULATIONS:
        model = POPULATIONS[population.lower()]
        if entry is not None:  # one position: the times stay shared by all stars
            t = heliocentric_jd(times, [entry.ra_deg], [entry.dec_deg])[0]
            time_system = f"HJD (UTC) for {entry.name}"
        else:
            t, time_system = jd, "JD (UTC); no cluster given, so no heliocentric correction"
        stars = synthetic_population(model, args.stars or 200, rng, reference_time_d=float(t[0]))
        if args.mean_mag is not None:
            mean = np.full(len(stars.star_id), args.mean_mag)
        else:
            mean = np.full(len(stars.star_id), _hb_mag(site, args.filter, entry) if entry else DEFAULT_MEAN_V_MAG)
        source, label = model.source, model.name
    elif Path(population).is_file():
        default = args.mean_mag if args.mean_mag is not None else (_hb_mag(site, args.filter, entry) if entry else None)
        stars, mean, variables = population_from_file(population, args.stars, site, args.filter, default)
        t = heliocentric_jd(times, [v.ra_deg for v in variables], [v.dec_deg for v in variables])
        time_system = "HJD (UTC) per star, as the file's epochs"
        source, label = f"variables table {population}", population
    else:
        raise VariablesOptionError(
            f"--population {population!r} is neither {' nor '.join(POPULATIONS)} nor an existing variables file"
        )

    if args.noise_mag is not None:
        sigma = np.full(mean.shape, args.noise_mag)
        noise_source = "--noise-mag"
    else:
        snr = np.asarray(snr_of_exposure(site, args.filter, mean, args.exposure), dtype=float)
        photon = np.where(snr > 0, MAG_PER_INVERSE_SNR / np.where(snr > 0, snr, 1.0), np.inf)
        sigma = np.hypot(photon, args.noise_floor)
        noise_source = (f"exposure core ({args.exposure:g} s in {args.filter} at airmass 1.2, no Moon) "
                        f"with a {args.noise_floor:g} mag floor in quadrature")
    summary, search = simulate_recovery(t, stars, mean, sigma, rng)

    result = {
        "recovered_fraction": round(summary.recovered_fraction, 4),
        "alias_fraction": round(summary.alias_fraction, 4),
        "stars": summary.n_stars,
        "failures": [
            {"id": f.star_id, "type": f.type, "period_d": round(f.period_d, 6),
             "recovered_period_d": None if f.recovered_period_d is None else round(f.recovered_period_d, 6),
             "outcome": f.outcome}
            for f in summary.failures
        ],
        "outcome_fractions": {k: round(v, 4) for k, v in summary.fractions.items()},
        "tolerance": 1e-3,
        "population": label,
        "population_source": source,
        "site": site.name,
        "first_night": first.isoformat(),
        "nights": args.nights,
        "nights_with_dark_time": int(np.sum(np.all(np.isfinite(windows), axis=1))),
        "visits_per_night": args.visits_per_night,
        "n_epochs": int(jd.size),
        "baseline_d": round(float(jd.max() - jd.min()), 4),
        "twilight": twilight,
        "time_system": time_system,
        "filter": args.filter,
        "exposure_s": args.exposure,
        "mean_mag": round(float(np.median(mean)), 3),
        "noise_mag": round(float(np.median(sigma)), 4),
        "noise_source": noise_source,
        "coarse_step_per_d": search.coarse_step_per_d,
        "seed": args.seed,
        "note": (f"visit times from the plan {args.schedule}" if args.schedule else
                 "visits fill each night's dark window; whether each cluster is above the horizon "
                 "then is not checked here (use a schedule for that)"),
    }
    if args.json:
        common.print_json(result)
    else:
        print(recover_text(result))
    return 0


def recover_text(r: dict) -> str:
    lines = [
        f"{r['stars']} stars ({r['population']}), {r['nights']} nights from {r['first_night']} at "
        f"{r['site']} ({r['nights_with_dark_time']} with {r['twilight']} darkness), "
        f"{r['visits_per_night']} visits a night: {r['n_epochs']} epochs over {r['baseline_d']:.2f} d",
        f"noise {r['noise_mag']:.4f} mag at {r['filter']} = {r['mean_mag']:.2f} ({r['noise_source']})",
        "",
        f"recovered (|ΔP|/P < 1e-3): {100 * r['recovered_fraction']:5.1f} %",
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
