"""``gcplan expose``: how long to expose, in how many frames, to reach an S/N at a level."""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from planner.commands import common
from planner.light.photometry import LEVEL_NAMES, LEVELS, LevelError
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
    p.add_argument("--filter", required=True, metavar="F", help="filter name as in the site profile, e.g. V")
    what = p.add_argument_group("what to reach (--mag, or --target with --level)")
    what.add_argument("--mag", type=float, metavar="M", help="magnitude of the star, as observed (with extinction)")
    what.add_argument("--target", metavar="NAME", help="cluster by catalog name or alias, e.g. 'NGC 6397'")
    what.add_argument("--level", choices=LEVELS, help="science level of the cluster: tip, hb or turnoff")
    what.add_argument("--r-v", type=float, metavar="R", dest="r_v",
                      help="R_V = A_V/E(B-V) towards the cluster, 2..6 (default 3.1, the law's mean)")
    p.add_argument("--snr", type=float, required=True, metavar="X", help="S/N goal for the stacked frames")
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
    p.set_defaults(run=run)


# Catelan & Cortés 2008: RR Lyrae periods lie within 0.2–1.0 d.
SHORTEST_RR_LYRAE_PERIOD_D = 0.2


def _level_from_args(args, band):
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

    target = targets_from_names([args.target], load_catalog())[0]
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


def plan_from_args(args, site, max_frame_s: float | None = None):
    """The exposure plan (and extra JSON fields) for parsed ``args`` at ``site``; frames no
    longer than ``max_frame_s`` if given."""
    from planner.light.exposure import band_setup, exposure_for_level, saturation_time_s
    from planner.light.photometry import science_level

    setup = band_setup(site, args.filter)
    level, target = _level_from_args(args, setup.band)
    period = args.shortest_period
    if period is None and level.level == "hb":
        period = SHORTEST_RR_LYRAE_PERIOD_D
    cluster_sb, cluster_extra = _cluster_light(args, target, setup.band)
    conditions = dict(airmass=args.airmass, seeing_fwhm_arcsec=args.seeing, moon_illumination=args.moon_illumination,
                      moon_separation_deg=args.moon_separation, moon_altitude_deg=args.moon_altitude,
                      cluster_sb_mag_arcsec2=cluster_sb)
    plan = exposure_for_level(site, args.filter, level, args.snr, shortest_period_d=period,
                              max_frame_s=max_frame_s, **conditions)
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
    if target is not None and level.level != "tip":
        try:
            tip = science_level(target, "tip", setup.band)
        except LevelError:
            tip = None
        if tip is not None:
            t_sat = float(saturation_time_s(site, args.filter, tip.magnitude, **conditions))
            extra["tip_saturation_s"] = t_sat
            if plan.frame_s > t_sat:
                plan = dataclasses.replace(plan, warnings=plan.warnings + (
                    f"the RGB tip stars ({setup.band} = {tip.magnitude:.1f}) saturate after {t_sat:.2g} s: "
                    "the brightest giants will be saturated in these frames",))
    return plan, level, target, extra


def run(args) -> int:
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
