"""``gcplan recover``: would a campaign of K nights × V visits recover the RR Lyrae periods?"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path

from planner.commands import common

# A cluster horizontal branch at about 12 kpc with little reddening: M_V ≈ 0.6
# (Cacciari & Clementini 2003) + (m − M) ≈ 15.4.  Used when neither --mean-mag nor
# --cluster (nor the variables file) says how bright the stars are.
DEFAULT_MEAN_V_MAG = 16.0
DEFAULT_EXPOSURE_S = 120.0


def register(sub) -> None:
    # The error per visit added in quadrature to the exposure core's photon noise
    # (crowding, flat field) defaults to the core's floor, which the campaign forecast uses too.
    from planner.model.variable import NOISE_FLOOR_MAG, RECOVERY_TOLERANCE

    p = sub.add_parser(
        "recover",
        help="simulate a campaign's RR Lyrae light curves and see which periods it recovers",
        description="Lay V visits in each night's dark window for K nights, simulate the light "
        "curves of a synthetic Oosterhoff I/II population or of the variables in a file, add "
        "noise from the exposure calculation, search each with Lomb–Scargle and report the "
        f"fraction recovered (|ΔP|/P < {RECOVERY_TOLERANCE:g}), the one-day aliases and the failures.",
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
    p.add_argument("--noise-floor", type=float, default=NOISE_FLOOR_MAG, metavar="SIGMA",
                   help="error per visit added in quadrature to the exposure calculation's, mag "
                   f"(crowding, flat field; default {NOISE_FLOOR_MAG:g})")
    p.add_argument("--jitter-min", type=float, default=10.0, metavar="MIN",
                   help="random shift of each visit from its slot centre, minutes (default 10)")
    p.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    common.add_json_argument(p)
    p.set_defaults(run=run)


def check_options(args) -> None:
    from planner.inputs.variable_files import VariablesOptionError

    if args.schedule:
        if args.nights is not None or args.visits_per_night is not None:
            raise VariablesOptionError("--schedule gives the visit times; leave out --nights and --visits-per-night")
    elif args.nights is None or args.visits_per_night is None:
        raise VariablesOptionError("give --nights K and --visits-per-night V, or --schedule FILE")
    else:
        _check_counts(args.nights, args.visits_per_night)
    if args.seed < 0:
        raise VariablesOptionError(f"--seed must be a whole number ≥ 0 (got {args.seed})")
    if args.stars is not None and not 1 <= args.stars <= 100_000:
        raise VariablesOptionError(f"--stars must be between 1 and 100000 (got {args.stars})")
    if not args.exposure > 0:
        raise VariablesOptionError(f"--exposure must be a positive number of seconds (got {args.exposure:g})")
    common.check_magnitude(args.mean_mag, "--mean-mag")
    if args.noise_mag is not None and not 0 < args.noise_mag < 5:
        raise VariablesOptionError(f"--noise-mag must be between 0 and 5 mag (got {args.noise_mag:g})")
    if not 0 <= args.noise_floor < 5:
        raise VariablesOptionError(f"--noise-floor must be between 0 and 5 mag (got {args.noise_floor:g})")
    if not 0 <= args.jitter_min <= 120:
        raise VariablesOptionError(f"--jitter-min must be between 0 and 120 minutes (got {args.jitter_min:g})")


def _check_counts(nights: int, visits_per_night: int) -> None:
    from planner.inputs.variable_files import VariablesOptionError

    if not 1 <= nights <= 3700:
        raise VariablesOptionError(f"--nights must be between 1 and 3700 (got {nights})")
    if not 1 <= visits_per_night <= 500:
        raise VariablesOptionError(f"--visits-per-night must be between 1 and 500 (got {visits_per_night})")


#: The period search's coarse step, in stars × frequencies × times, that a command waits for:
#: 3·10¹⁰ is about two minutes on one core (1000 nights × 4 visits × 200 stars, 1.6·10¹⁰, took 64 s).
MAX_SEARCH_TERMS = 3e10


def _check_search_size(population, args) -> None:
    import numpy as np

    from planner.inputs.variable_files import VariablesOptionError
    from planner.variables.period_search import coarse_search_terms

    terms = coarse_search_terms(population.times, len(population.stars.star_id))
    if terms > MAX_SEARCH_TERMS:
        raise VariablesOptionError(
            f"{len(population.stars.star_id)} stars × {np.shape(population.times)[-1]} visits over "
            f"{np.ptp(population.times):.0f} days make a period search of {terms:.1e} terms, more than "
            f"{MAX_SEARCH_TERMS:.0e} (about two minutes): give fewer nights, visits per night or --stars")


def _first_night(date_text: str | None, site) -> dt.date:
    if date_text:
        return common.parse_night_date(date_text)
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
    from planner.light.photometry import LevelError, science_level

    band = site.filters[filter_name].band if filter_name in site.filters else filter_name
    try:
        return float(science_level(entry, "hb", band).magnitude)
    except LevelError as exc:
        raise LevelError(f"{exc}; give the stars' mean magnitude (--mean-mag)") from None


def population_from_file(path: str, n_stars: int | None, site, filter_name: str, default_mag: float | None):
    """(StarSample, per-star mean magnitude, variables) for the variables of a table."""
    import numpy as np

    from planner.inputs.variable_files import read_variables
    from planner.variables.recovery import OOSTERHOFF_I, StarSample, bailey_amplitude_mag

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


@dataclass(frozen=True)
class VisitTimes:
    """When the stars are observed: JD (UTC) of each visit and the nights they span."""

    jd: np.ndarray
    first_night: dt.date
    nights: int
    visits_per_night: float
    windows: np.ndarray  # (nights, 2) dark windows, JD; zeros when the times come from a plan


def times_from_plan(path: str, cluster: str | None, site) -> VisitTimes:
    """The variable-star visits of a plan file (of ``cluster``, if given)."""
    import numpy as np

    from planner.inputs.plan_files import variable_visit_times
    from planner.inputs.variable_files import VariablesOptionError
    from planner.logbook.store import night_of_jd

    jd = variable_visit_times(path, cluster)
    if jd.size < 4:
        raise VariablesOptionError(f"--schedule {path!r} holds {jd.size} usable visit(s)"
                                   + (f" of {cluster}" if cluster else "") + "; at least 4 are needed")
    seen = sorted({night_of_jd(t, site.location.timezone) for t in jd})
    return VisitTimes(jd, seen[0], (seen[-1] - seen[0]).days + 1, round(jd.size / len(seen), 2),
                      np.full((len(seen), 2), 0.0))


def times_in_dark_windows(site, first: dt.date, nights: int, visits_per_night: int, twilight: str,
                          jitter_min: float, rng) -> VisitTimes:
    """``visits_per_night`` visits spread through each night's dark window, ``nights`` nights from ``first``."""
    from planner.sky.almanac import dark_windows_jd
    from planner.variables.recovery import visit_times_in_windows

    windows = dark_windows_jd(site, first, nights, twilight)
    jd = visit_times_in_windows(windows, visits_per_night, rng, jitter_min / 1440.0)
    return VisitTimes(jd, first, nights, visits_per_night, windows)


@dataclass(frozen=True)
class Population:
    """The stars simulated, their mean magnitudes, their times (HJD or JD) and where they came from."""

    stars: object  # planner.variables.recovery.StarSample
    mean_mag: np.ndarray
    times: np.ndarray
    time_system: str
    source: str
    label: str


def synthetic_stars(name: str, n_stars: int, mean_mag: float | None, site, filter_name: str, entry,
                    jd: np.ndarray, rng) -> Population:
    """A synthetic Oosterhoff population; one position (the cluster's) for all stars."""
    import numpy as np

    from astropy.time import Time

    from planner.variables.phases import heliocentric_jd
    from planner.variables.recovery import POPULATIONS, synthetic_population

    model = POPULATIONS[name]
    if entry is not None:  # one position: the times stay shared by all stars
        t = heliocentric_jd(Time(jd, format="jd", scale="utc"), [entry.ra_deg], [entry.dec_deg])[0]
        time_system = f"HJD (UTC) for {entry.name}"
    else:
        t, time_system = jd, "JD (UTC); no cluster given, so no heliocentric correction"
    stars = synthetic_population(model, n_stars, rng, reference_time_d=float(t[0]))
    if mean_mag is None:
        mean_mag = _hb_mag(site, filter_name, entry) if entry else DEFAULT_MEAN_V_MAG
    return Population(stars, np.full(len(stars.star_id), mean_mag), t, time_system, model.source, model.name)


def file_stars(path: str, n_stars: int | None, mean_mag: float | None, site, filter_name: str, entry,
               jd: np.ndarray) -> Population:
    """The variables of a table, each at its own position."""
    from astropy.time import Time

    from planner.variables.phases import ephemeris_dates, time_system_label

    default = mean_mag if mean_mag is not None else (_hb_mag(site, filter_name, entry) if entry else None)
    stars, mean, variables = population_from_file(path, n_stars, site, filter_name, default)
    t = ephemeris_dates(Time(jd, format="jd", scale="utc"), variables)
    return Population(stars, mean, t, time_system_label(variables) + " per star", f"variables table {path}", path)


def visit_noise(site, filter_name: str, mean_mag: np.ndarray, exposure_s: float, noise_mag: float | None,
                floor_mag: float) -> tuple[np.ndarray, str]:
    """The error of each star per visit, mag, and a phrase saying where it came from."""
    import numpy as np

    from planner.light.exposure import snr_of_exposure
    from planner.variables.recovery import visit_noise_mag

    if noise_mag is not None:
        return np.full(mean_mag.shape, noise_mag), "--noise-mag"
    snr = np.asarray(snr_of_exposure(site, filter_name, mean_mag, exposure_s), dtype=float)
    return visit_noise_mag(snr, floor_mag), (
        f"exposure core ({exposure_s:g} s in {filter_name} at airmass 1.2, no Moon) "
        f"with a {floor_mag:g} mag floor in quadrature")


def run(args) -> int:
    import numpy as np

    from planner.inputs.variable_files import VariablesOptionError
    from planner.variables.recovery import POPULATIONS, simulate_recovery

    check_options(args)
    site = common.site_from_args(args)
    if args.filter not in site.filters:
        raise VariablesOptionError(
            f"--filter {args.filter!r} is not a filter of site {site.name!r} (filters: {', '.join(site.filters)})"
        )
    twilight = args.twilight or site.limits.twilight
    rng = np.random.default_rng(args.seed)
    if args.schedule:
        visits = times_from_plan(args.schedule, args.cluster, site)
    else:
        visits = times_in_dark_windows(site, _first_night(args.date, site), args.nights, args.visits_per_night,
                                       twilight, args.jitter_min, rng)
    if visits.jd.size < 4:
        raise VariablesOptionError(
            f"only {visits.jd.size} visits fit in {visits.nights} night(s) from {visits.first_night} at "
            f"{site.name!r} ({twilight} twilight): give more nights, more visits or a lighter twilight"
        )
    entry = _cluster_entry(args.cluster) if args.cluster else None
    if args.population.lower() in POPULATIONS:
        population = synthetic_stars(args.population.lower(), args.stars or 200, args.mean_mag, site, args.filter,
                                     entry, visits.jd, rng)
    elif Path(args.population).exists():  # the reader refuses a folder, a pipe or a device
        population = file_stars(args.population, args.stars, args.mean_mag, site, args.filter, entry, visits.jd)
    else:
        raise VariablesOptionError(f"--population {args.population!r} is neither {' nor '.join(POPULATIONS)} "
                                   "nor an existing variables file")
    sigma, noise_source = visit_noise(site, args.filter, population.mean_mag, args.exposure, args.noise_mag,
                                      args.noise_floor)
    _check_search_size(population, args)
    summary, search = simulate_recovery(population.times, population.stars, population.mean_mag, sigma, rng)
    result = recovery_result(summary, search, visits, population, sigma, noise_source, site=site.name,
                             twilight=twilight, filter_name=args.filter, exposure_s=args.exposure, seed=args.seed,
                             schedule=args.schedule)
    if args.json:
        common.print_json(result)
    else:
        from planner.reports.recovery_report import recover_text

        print(recover_text(result))
    return 0


def recovery_result(summary, search, visits: VisitTimes, population: Population, sigma, noise_source: str, *,
                    site: str, twilight: str, filter_name: str, exposure_s: float, seed: int,
                    schedule: str | None) -> dict:
    """Everything ``gcplan recover`` reports, as its JSON."""
    import numpy as np

    from planner.variables.recovery import RECOVERY_TOLERANCE

    jd = visits.jd
    return {
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
        "tolerance": RECOVERY_TOLERANCE,
        "population": population.label,
        "population_source": population.source,
        "site": site,
        "first_night": visits.first_night.isoformat(),
        "nights": visits.nights,
        "nights_with_dark_time": int(np.sum(np.all(np.isfinite(visits.windows), axis=1))),
        "visits_per_night": visits.visits_per_night,
        "n_epochs": int(jd.size),
        "baseline_d": round(float(jd.max() - jd.min()), 4),
        "twilight": twilight,
        "time_system": population.time_system,
        "filter": filter_name,
        "exposure_s": exposure_s,
        "mean_mag": round(float(np.median(population.mean_mag)), 3),
        "noise_mag": round(float(np.median(sigma)), 4),
        "noise_source": noise_source,
        "coarse_step_per_d": search.coarse_step_per_d,
        "seed": seed,
        "note": (f"visit times from the plan {schedule}" if schedule else
                 "visits fill each night's dark window; whether each cluster is above the horizon "
                 "then is not checked here (use a schedule for that)"),
    }
