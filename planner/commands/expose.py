"""``gcplan expose``: how long to expose, in how many frames, to reach an S/N at a level."""

from __future__ import annotations

import dataclasses
import math

from planner.commands import common
from planner.model.levels import LEVEL_NAMES, LEVELS, LevelError
from planner.model.bands import EXTINCTION_LAW

PLOT_SUFFIXES = (".png", ".pdf", ".svg")


def register(sub) -> None:
    p = sub.add_parser(
        "expose",
        help="exposure time and frames for an S/N at the RGB tip, the HB, the turnoff or a magnitude",
        description="Exposure for a target S/N in one filter: the CCD equation with the site's "
        "telescope, camera and sky, the Moon from Krisciunas & Schaefer (1991), frames kept "
        "below the linearity limit of the level's brightest stars.  Twilight is not modelled: "
        "the times assume astronomical night.",
    )
    common.add_site_arguments(p)
    p.add_argument("--filter", metavar="F", help="filter name as in the site profile, e.g. V (required without --batch)")
    what = p.add_argument_group("what to reach (--mag, or --target with --level)")
    what.add_argument("--mag", type=float, metavar="M", help="magnitude of the star, as observed (with extinction)")
    what.add_argument("--target", metavar="NAME", help="cluster by catalog name or alias, e.g. 'NGC 6397'")
    what.add_argument("--level", choices=LEVELS, help="science level of the cluster: tip, hb or turnoff")
    what.add_argument("--r-v", type=float, metavar="R", dest="r_v",
                      help="R_V = A_V/E(B-V) towards the cluster, 2..6 (default 3.1, the law's mean)")
    p.add_argument("--snr", type=float, metavar="X", help="S/N goal for the stacked frames (required without --batch)")
    cond = p.add_argument_group("conditions (defaults: the site's typical seeing, airmass 1.2, no Moon)")
    cond.add_argument("--seeing", type=float, metavar="FWHM", help="seeing FWHM on the frame, arcsec")
    cond.add_argument("--airmass", type=float, default=1.2, metavar="X", help="airmass (default 1.2)")
    cond.add_argument("--moon-illumination", type=float, default=0.0, metavar="0..1",
                      help="illuminated fraction of the Moon (default 0)")
    cond.add_argument("--moon-separation", type=float, default=90.0, metavar="DEG",
                      help="Moon-target distance, degrees (default 90)")
    cond.add_argument("--moon-altitude", type=float, default=-90.0, metavar="DEG",
                      help="Moon's altitude, degrees (default -90: below the horizon)")
    cond.add_argument("--field-radius", type=float, metavar="ARCMIN",
                      help="the star's distance from the cluster centre: adds the cluster's unresolved light "
                      "there (King 1962 profile) to the sky; needs --target")
    p.add_argument("--shortest-period", type=float, metavar="DAYS",
                   help="flag frames longer than 1%% of this period (phase smearing); "
                   "default 0.2 d for --level hb (the shortest RR Lyrae periods)")
    common.add_json_argument(p)
    p.add_argument("--plot", metavar="FILE", help="S/N against frame time, saturation marked (.png/.pdf/.svg)")
    batch = p.add_argument_group(
        "many questions at once",
        "--batch FILE.csv|.ecsv: one question per row, in columns target, mag, level, filter, snr, seeing_arcsec, "
        "airmass, moon_illumination, moon_separation_deg, moon_altitude_deg, field_radius_arcmin, r_v, "
        "shortest_period_d (any may be left out; an empty cell takes the option given here, else its "
        "default). Every row gets the fields --json gives for one question. A bad row stops the batch "
        "with one error naming the file, the row and the column; nothing is written.")
    batch.add_argument("--batch", metavar="FILE", help="a table of questions (.csv or .ecsv)")
    batch.add_argument("--out", metavar="FILE", help="with --batch: write the answers as a table (.csv or .ecsv)")
    p.set_defaults(run=run)


# Catelan & Cortés 2008: RR Lyrae periods lie within 0.2–1.0 d.
SHORTEST_RR_LYRAE_PERIOD_D = 0.2


def _level_from_args(args, band, catalog=None):
    from planner.light.photometry import science_level, user_level

    if args.mag is not None:
        common.check_magnitude(args.mag, "--mag")
        if args.level is not None:
            raise LevelError("give either --mag or --level, not both")
        return user_level(args.mag, band, args.target), None
    if args.target is None or args.level is None:
        raise LevelError("say what to reach: --mag M, or --target NAME with --level tip|hb|turnoff")
    from planner.inputs.catalog import load_catalog
    from planner.inputs.targets import targets_from_names

    target = targets_from_names([args.target], catalog if catalog is not None else load_catalog())[0]
    if args.r_v is not None:
        if not 2.0 <= args.r_v <= 6.0:  # the range target lists accept
            raise LevelError(f"--r-v must be between 2 and 6 (got {args.r_v:g})")
        target = dataclasses.replace(target, r_v=args.r_v)
    try:
        return science_level(target, args.level, band), target
    except LevelError as exc:
        raise LevelError(f"{exc} (give it with --mag)") from None


NO_CLUSTER_LIGHT = "crowding and the cluster's own light are not included (give --field-radius)"


def _cluster_light(args, target, band):
    """The cluster's surface brightness at ``--field-radius`` (None without one) and the JSON fields."""
    from planner.light.cluster_light import KING_SOURCE, cluster_surface_brightness

    extra = {"field_radius_arcmin": args.field_radius, "cluster_surface_brightness_mag_arcsec2": None,
             "cluster_light": NO_CLUSTER_LIGHT, "cluster_light_notes": []}
    if args.field_radius is None:
        return None, extra
    if target is None:
        raise LevelError("--field-radius needs --target (the cluster whose light is added)")
    mu, notes = cluster_surface_brightness(target, band, args.field_radius)
    extra["cluster_light_notes"] = list(notes)
    if not math.isfinite(mu):
        extra["cluster_light"] = "none (beyond the tidal radius)"
        return None, extra
    extra.update(cluster_surface_brightness_mag_arcsec2=mu,
                 cluster_light=f"added to the sky: {KING_SOURCE}; crowding not included")
    return mu, extra


def _row_inputs(args, site, catalog=None):
    """What one question needs before the exposure core: the filter's setup, the level and
    target, the phase-smearing period, the cluster's light and the conditions."""
    from planner.light.exposure import band_setup

    setup = band_setup(site, args.filter)
    level, target = _level_from_args(args, setup.band, catalog)
    period = args.shortest_period
    if period is None and level.level == "hb":
        period = SHORTEST_RR_LYRAE_PERIOD_D
    cluster_sb, cluster_extra = _cluster_light(args, target, setup.band)
    conditions = dict(airmass=args.airmass, seeing_fwhm_arcsec=args.seeing, moon_illumination=args.moon_illumination,
                      moon_separation_deg=args.moon_separation, moon_altitude_deg=args.moon_altitude,
                      cluster_sb_mag_arcsec2=cluster_sb)
    return setup, level, target, period, cluster_extra, conditions


def _tip_magnitude(target, level, band):
    """The RGB tip's magnitude, whose saturation a fainter level's frames are checked against (or None)."""
    from planner.light.photometry import science_level

    if target is None or level.level == "tip":
        return None
    try:
        return science_level(target, "tip", band).magnitude
    except LevelError:
        return None


def _finish(plan, setup, level, period, cluster_extra, tip_mag, t_sat):
    """The plan with the cluster's notes and the tip's saturation added, and the extra JSON fields."""
    notes = tuple(cluster_extra.pop("cluster_light_notes"))  # they join the warnings
    if notes:
        plan = dataclasses.replace(plan, warnings=plan.warnings + notes)
    extra = {"band": setup.band, "level_name": LEVEL_NAMES[level.level], "calibration": level.calibration,
             "level_from_observed_hb": level.observed,
             "colour_source": level.colour_source, "absolute_mag": level.absolute_mag,
             "interstellar_extinction_mag": level.extinction_mag, "r_v": level.r_v,
             "extinction_law": EXTINCTION_LAW if level.r_v is not None else None, "rule_of_thumb": level.rule_of_thumb,
             "shortest_period_d": period, "tip_saturation_s": None, "twilight": "not modelled (astronomical night)",
             **cluster_extra}
    if t_sat is not None:
        extra["tip_saturation_s"] = t_sat
        if plan.frame_s > t_sat:
            plan = dataclasses.replace(plan, warnings=plan.warnings + (
                f"the RGB tip stars ({setup.band} = {tip_mag:.1f}) saturate after {t_sat:.2g} s: "
                "the brightest giants will be saturated in these frames",))
    return plan, extra


def plan_from_args(args, site, max_frame_s: float | None = None):
    """The exposure plan (and extra JSON fields) for parsed ``args`` at ``site``; frames no
    longer than ``max_frame_s`` if given.

    The same road as one row of ``--batch`` (the core's vectorised form with one
    element), so a row of a batch and the question asked alone give the same
    numbers to the last bit."""
    inputs = _row_inputs(args, site)
    (plan, extra), = _filter_records(site, args.filter, [(args, *inputs)], max_frame_s)
    return plan, inputs[1], inputs[2], extra


def run(args) -> int:
    if args.batch:
        return run_batch(args)
    if args.out:
        raise common.OptionError("--out writes a batch's table: use it with --batch FILE")
    missing = [o for o, v in (("--filter", args.filter), ("--snr", args.snr)) if v is None]
    if missing:
        raise common.OptionError(f"the following arguments are required: {', '.join(missing)} (or --batch FILE)")
    site = common.site_from_args(args)
    plot_path = common.check_output_path(args.plot, PLOT_SUFFIXES, "--plot") if args.plot else None
    plan, level, target, extra = plan_from_args(args, site)
    night_s, where = longest_night(site)
    if math.isfinite(plan.frame_s) and plan.frame_s > night_s:  # no frame outlasts the night
        plan, level, target, extra = plan_from_args(args, site, max_frame_s=night_s)
        plan = dataclasses.replace(plan, warnings=tuple(
            w.replace("(the longest frame asked for)", f"({where})") for w in plan.warnings))
    if plan.elapsed_s > 365 * night_s:  # more nights than a year has: not a plan
        raise common.OptionError(
            f"S/N {plan.snr_goal:g} on {plan.filter} = {plan.magnitude:.2f} would take {plan.elapsed_s / 3600:.0f} h, "
            f"{plan.elapsed_s / night_s:,.0f} times {where} (more than a year of nights): out of reach here; "
            "lower --snr, choose a brighter level, or a larger telescope")
    loud = [] if not plan.elapsed_s > night_s else [
        f"the {plan.frames} frames take {plan.elapsed_s / 3600:.1f} h with readout, "
        f"{plan.elapsed_s / night_s:.1f} times {where}: a stack over several nights"]
    if args.json:
        common.print_json({**dataclasses.asdict(plan), **extra})
    else:
        from planner.reports.expose_text import expose_text

        print(expose_text(plan, level, target, site, cluster_light=extra["cluster_light"]))
    if plot_path is not None:
        with common.output_file(plot_path, "--plot") as tmp:
            write_plot(tmp, plan, site, args)
        if not args.json:
            print(f"\nplot written to {plot_path}")
    common.warn_all(loud)
    return 0


def longest_night(site) -> tuple[float, str]:
    """Seconds of the site's longest night (its profile's twilight), and how to name it."""
    from planner.sky.almanac import TWILIGHT_ALTITUDE_DEG
    from planner.sky.sidereal import longest_night_hours

    twilight = site.limits.twilight
    hours = longest_night_hours(site.location.latitude_deg, TWILIGHT_ALTITUDE_DEG[twilight])
    return hours * 3600.0, (f"the longest {twilight} night at {site.name} "
                            f"({site.location.latitude_deg:.1f}°), {hours:.1f} h")


def write_plot(path, plan, site, args):
    import numpy as np

    from planner.light.exposure import snr_of_exposure
    from planner.reports.exposure_plot import save_snr_plot

    c = plan.inputs
    lo = 0.1 * min(plan.frame_s, plan.saturation_s or plan.frame_s, c.min_exposure_s or plan.frame_s)
    hi = 10.0 * max(plan.single_frame_s, plan.frame_s, plan.saturation_s or 0.0)
    times = np.geomspace(max(lo, 1e-3), hi, 200)
    snr = snr_of_exposure(site, plan.filter, plan.magnitude, times, airmass=c.airmass,
                          seeing_fwhm_arcsec=c.seeing_fwhm_arcsec, moon_illumination=c.moon_illumination,
                          moon_separation_deg=c.moon_separation_deg, moon_altitude_deg=c.moon_altitude_deg,
                          cluster_sb_mag_arcsec2=plan.cluster_surface_brightness_mag_arcsec2)
    what = f"{plan.target}, {LEVEL_NAMES[plan.level]}" if plan.target else LEVEL_NAMES[plan.level]
    return save_snr_plot(path, times, snr, snr_goal=plan.snr_goal, saturation_s=plan.saturation_s,
                         frame_s=plan.frame_s, frames=plan.frames, min_exposure_s=c.min_exposure_s,
                         title=f"{what}: {plan.filter} = {plan.magnitude:.2f}, {site.name}")


# ------------------------------------------------------------------ --batch

BATCH_SUFFIXES = (".csv", ".ecsv")


def run_batch(args) -> int:
    """Every row of ``--batch`` answered as ``expose --json`` answers one question."""
    from planner.inputs.exposure_batch import BatchFileError, read_exposure_batch

    if args.plot:
        raise common.OptionError("--plot draws one question: leave it out with --batch")
    out_path = common.check_output_path(args.out, BATCH_SUFFIXES, "--out") if args.out else None
    site = common.site_from_args(args)
    rows = read_exposure_batch(args.batch)
    try:
        records = batch_records(args, site, rows)
    except BatchRowError as exc:
        raise BatchFileError(exc.detail, args.batch) from None
    if out_path is not None:
        from planner.reports.expose_table import write_expose_table

        write_expose_table(out_path, records)
    if args.json:
        common.print_json(records)
    else:
        from planner.reports.expose_table import batch_text

        print(batch_text(records, [row["row"] for row in rows]))
        if out_path is not None:
            print(f"\nwritten: {out_path}")
    return 0


class BatchRowError(LevelError):
    """A row of a batch that the exposure core refuses (the message names the row)."""


def batch_records(args, site, rows: list[dict]) -> list[dict]:
    """The ``expose --json`` fields of every row, the exposure core called once per filter."""
    import argparse

    from planner.errors import InputError
    from planner.inputs.catalog import load_catalog

    catalog = load_catalog() if any(r.get("target") for r in rows) or args.target else None
    prepared = []
    for row in rows:
        question = argparse.Namespace(**{**vars(args), **{k: v for k, v in row.items() if v is not None}})
        try:
            prepared.append((question, *_checked_row_inputs(question, site, catalog)))
        except InputError as exc:
            raise BatchRowError(f"row {row['row']}: {exc.detail}") from None
    from planner.light.exposure import SnrGoalError

    records: list[dict | None] = [None] * len(rows)
    for filter_name in dict.fromkeys(q.filter for q, *_ in prepared):
        members = [i for i, (q, *_) in enumerate(prepared) if q.filter == filter_name]
        try:
            answers = _filter_records(site, filter_name, [prepared[i] for i in members])
        except SnrGoalError as exc:
            raise BatchRowError(f"row {rows[members[exc.index]]['row']}: {exc.detail}") from None
        for i, (plan, extra) in zip(members, answers):
            records[i] = {**dataclasses.asdict(plan), **extra}
    return records


def _checked_row_inputs(q, site, catalog):
    """:func:`_row_inputs` for one row, with the checks the core would make over all rows at once
    made here, so a bad value is named with its row."""
    from planner.light.photometry import check_conditions

    for option, value in (("filter", q.filter), ("snr", q.snr)):
        if value is None:
            raise LevelError(f"no {option} (give a {option} column or --{option})")
    if not (math.isfinite(q.snr) and q.snr > 0):
        raise LevelError(f"S/N goal must be a positive number (got {q.snr:g})")
    setup, level, target, period, cluster_extra, conditions = _row_inputs(q, site, catalog)
    seeing = setup.typical_seeing_arcsec if q.seeing is None else q.seeing
    check_conditions(q.airmass, seeing, q.moon_illumination, q.moon_separation, q.moon_altitude)
    return setup, level, target, period, cluster_extra, conditions


def _filter_records(site, filter_name, prepared, max_frame_s=None):
    """(plan, extra JSON fields) of each question of one filter: the plans and the tip's
    saturation each computed once over all of them (the core's SnrGoalError names the
    question by its ``index``)."""
    import numpy as np

    from planner.light.exposure import exposure_grid, exposure_plans_for_levels

    questions = [p[0] for p in prepared]
    setups, levels, targets, periods, extras, conds = (list(col) for col in zip(*(p[1:] for p in prepared)))
    columns = {key: [c[key] for c in conds] for key in conds[0]}
    plans = exposure_plans_for_levels(site, filter_name, levels, [q.snr for q in questions],
                                      shortest_period_d=periods, max_frame_s=max_frame_s, **columns)
    tips = [_tip_magnitude(t, lv, s.band) for t, lv, s in zip(targets, levels, setups)]
    with_tip = [i for i, m in enumerate(tips) if m is not None]
    t_sat = [None] * len(plans)
    if with_tip:
        typical = setups[0].typical_seeing_arcsec
        pick = {key: [values[i] for i in with_tip] for key, values in columns.items()}
        grid = exposure_grid(site, filter_name, np.array([tips[i] for i in with_tip]), 1.0,
                             airmass=np.array(pick["airmass"], dtype=float),
                             seeing_fwhm_arcsec=np.array([typical if x is None else x
                                                          for x in pick["seeing_fwhm_arcsec"]], dtype=float),
                             moon_illumination=np.array(pick["moon_illumination"], dtype=float),
                             moon_separation_deg=np.array(pick["moon_separation_deg"], dtype=float),
                             moon_altitude_deg=np.array(pick["moon_altitude_deg"], dtype=float),
                             cluster_sb_mag_arcsec2=np.array([math.inf if x is None else x
                                                              for x in pick["cluster_sb_mag_arcsec2"]], dtype=float))
        for i, value in zip(with_tip, grid.saturation_s.tolist()):
            t_sat[i] = float(value)
    return [_finish(plan, setups[i], levels[i], periods[i], extras[i], tips[i], t_sat[i])
            for i, plan in enumerate(plans)]
