"""``gcplan demo``: run gcplan on the invented demo campaign and write every output to a folder.

The site (site_profiles/demo.toml) and the campaign (targets/demo/) are
fictional; the clusters and their published data are real.  The demo plans
"tonight" (the site's local date, from the clock — the only clock read in
gcplan, and it is here in the shell) unless ``--date`` is given.
"""

from __future__ import annotations

import datetime as dt
import sys
import textwrap
from pathlib import Path
from zoneinfo import ZoneInfo

from planner.commands import common
from planner.errors import OutputError

DEMO_SITE = "demo"
SEMESTER_NIGHTS = 183


def register(sub) -> None:
    p = sub.add_parser(
        "demo",
        help="run gcplan on the invented demo campaign and write its outputs",
        description="Runs every gcplan step on the invented demo campaign (fictional site, real clusters) "
        "and writes text, JSON and figures into one folder.",
    )
    p.add_argument("--out", default="gcplan-demo", metavar="DIR", help="folder for the outputs (default: gcplan-demo)")
    p.add_argument("--date", metavar="YYYY-MM-DD", help="the night to plan (default: tonight at the demo site)")
    p.set_defaults(run=run)


def current_night(local_now: dt.datetime) -> dt.date:
    """The night under way at a local time: before local noon it is still last evening's night."""
    return local_now.date() - dt.timedelta(days=1 if local_now.hour < 12 else 0)


def run(args) -> int:
    from planner.inputs.sites import resolve_site
    from planner.reports.demo_night import demo_targets

    site = resolve_site(DEMO_SITE)
    if args.date:
        night = common.parse_night_date(args.date)
    else:
        night = current_night(dt.datetime.now(ZoneInfo(site.location.timezone)))
    out = Path(args.out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"--out {args.out!r}: cannot create the folder ({exc.strerror})") from None
    targets = demo_targets()
    written: list[tuple[str, str]] = []
    say = lambda msg: print(msg, file=sys.stdout, flush=True)  # noqa: E731
    say(f"gcplan demo — {site.name}: an invented observatory and campaign (real clusters).")
    say(f"Writing into {out}/ …")
    for step in STEPS:
        for name, what in step(site, targets, night, out):
            written.append((name, what))
            say(f"  {name:<34s} {what}")
    (out / "README.txt").write_text(
        "gcplan demo output — the site and the campaign are INVENTED (fictional observatory);\n"
        "the clusters and their published data are real.  Files:\n\n"
        + "".join(f"  {name:<34s} {what}\n" for name, what in written)
        + "\nThe observatory's own limits and rules, and its operators, come before any plan.\n",
        encoding="utf-8",
    )
    say(f"Done. Start with {out}/night.txt and {out}/night.png.")
    return 0


def _write(path: Path, text: str) -> None:
    with common.output_file(path, "--out") as tmp:
        tmp.write_text(text if text.endswith("\n") else text + "\n", encoding="utf-8")


def step_night(site, targets, night, out):
    """Tonight: almanac, windows, chart."""
    from planner.model.constraints import constraints_for_site
    from planner.reports.altitude_chart import save_night_chart
    from planner.reports.night_report import night_json, night_text
    from planner.sky.night_summary import night_curves, run_of_nights

    from planner.cache.sun_moon import default_store

    run_ = run_of_nights(site, targets, [night], constraints_for_site(site), store=default_store())
    _write(out / "night.txt", night_text(run_))
    common.write_json(out / "night.json", night_json(run_))
    with common.output_file(out / "night.png", "--out") as tmp:
        save_night_chart(run_, night_curves(run_), tmp)
    return [
        ("night.txt", f"the night of {night}: almanac and each cluster's window"),
        ("night.json", "the same, as gcplan night --json"),
        ("night.png", "altitude chart of the night"),
    ]


def step_semester(site, targets, night, out):
    """The next semester: hours per night, best nights and months."""
    from planner.inputs.catalog import load_catalog
    from planner.inputs.targets import catalog_targets
    from planner.model.constraints import constraints_for_site
    from planner.reports.hours_chart import save_observability_chart
    from planner.reports.observability_report import observability_json, observability_text
    from planner.sky.night_summary import run_of_nights, seasons

    nights = [night + dt.timedelta(days=i) for i in range(SEMESTER_NIGHTS)]
    constraints = constraints_for_site(site)
    from planner.cache.sun_moon import default_store

    store = default_store()
    run_ = run_of_nights(site, targets, nights, constraints, store=store)
    _write(out / "semester.txt", observability_text(run_, seasons(run_)))
    common.write_json(out / "semester.json", observability_json(run_, seasons(run_)))
    with common.output_file(out / "semester.png", "--out") as tmp:
        save_observability_chart(run_, tmp)
    # The whole bundled catalog as well: which other clusters the site could take.
    everything = run_of_nights(site, catalog_targets(load_catalog()), nights, constraints, store=store)
    _write(out / "semester_catalog.txt", observability_text(everything, seasons(everything)))
    return [
        ("semester.txt", f"{SEMESTER_NIGHTS} nights from {night}: hours, best nights and months"),
        ("semester.json", "the same, as gcplan observability --json"),
        ("semester.png", "hours per night over the semester"),
        ("semester_catalog.txt", "the same for every cluster of the bundled catalog"),
    ]


#: The demo campaign's science goals (invented): S/N per level, in V and I.
DEMO_SNR = {"tip": 100.0, "hb": 50.0, "turnoff": 20.0}
DEMO_FILTERS = ("V", "I")
#: Visits per night to the variables in the demo's phase-coverage step (invented).
DEMO_VISITS_PER_NIGHT = 6
DEMO_VARIABLE_NIGHTS = 7


def step_exposures(site, targets, night, out):
    """Exposure table: every cluster × level × filter at the site's typical seeing, airmass 1.2, dark."""
    from planner.light.ccd import Psf
    from planner.light.exposure_table import exposure_table
    from planner.model.bands import DEFAULT_R_V, EXTINCTION_LAW

    rows = exposure_table(site, targets, tuple(DEMO_SNR), DEMO_FILTERS, DEMO_SNR)
    lines = textwrap.wrap(
        f"Exposures for the demo campaign at {site.name}: seeing {site.sky.typical_seeing_arcsec:.1f}\", "
        "airmass 1.2, no Moon (campaign goals invented: S/N "
        + ", ".join(f"{k} {v:.0f}" for k, v in DEMO_SNR.items()) + "). "
        f"Stars: {Psf(site.sky.psf, site.sky.moffat_beta).describe()} profile, the aperture its optimum; "
        f"extinction: {EXTINCTION_LAW}, R_V = {DEFAULT_R_V}; HB and turnoff from the observed V_HB "
        "(Harris 2010); crowding and the clusters' own light not included.",
        80,
    ) + [
        "",
        f"  {'cluster':<10s}{'level':<9s}{'filter':<7s}{'mag':>6s}{'frames':>8s}{'frame s':>9s}"
        f"{'S/N':>6s}{'saturates':>11s}",
    ]
    for r in rows:
        if r.frames is None:
            lines.append(f"  {r.target:<10s}{r.level:<9s}{r.filter:<7s}  — {r.note}")
            continue
        sat = "—" if r.saturation_s is None else f"{r.saturation_s:.0f} s"
        lines.append(
            f"  {r.target:<10s}{r.level:<9s}{r.filter:<7s}{r.magnitude:6.2f}{r.frames:8d}{r.frame_s:9.1f}"
            f"{r.snr_reached:6.0f}{sat:>11s}"
        )
    lines.append("")
    lines.append("  saturates: frame time at which the level's brightest stars reach the linearity")
    lines.append("  limit of the camera.")
    _write(out / "exposures.txt", "\n".join(lines))
    table = exposure_rows_table(rows)
    table.meta["note"] = "gcplan demo: invented campaign goals at a fictional site; see planner/light/exposure.py"
    with common.output_file(out / "exposures.ecsv", "--out") as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)
    return [
        ("exposures.txt", "frames for the RGB tip, HB and turnoff of each cluster in V and I"),
        ("exposures.ecsv", "the same as a table"),
    ]


def exposure_rows_table(rows):
    """The exposure rows as a table with units in the columns (ECSV ``unit:``), frames whole;
    a level that could not be computed has its numbers masked and says why in ``note``."""
    from astropy.table import MaskedColumn, Table

    def column(name, values, dtype, unit=None):
        fill = "" if dtype is str else 0
        return MaskedColumn([fill if v is None else v for v in values], name=name,
                            mask=[v is None for v in values], dtype=dtype, unit=unit)

    table = Table([
        column("target", [r.target for r in rows], str),
        column("level", [r.level for r in rows], str),
        column("filter", [r.filter for r in rows], str),
        column("snr_goal", [r.snr_goal for r in rows], float),
        column("magnitude", [r.magnitude for r in rows], float, "mag"),
        column("frames", [r.frames for r in rows], int),
        column("frame_time", [r.frame_s for r in rows], float, "s"),
        column("exposure_time", [r.exposure_s for r in rows], float, "s"),
        column("snr_reached", [r.snr_reached for r in rows], float),
        column("saturation_time", [r.saturation_s for r in rows], float, "s"),
        column("note", [r.note for r in rows], str),
    ])
    return table


def step_phases(site, targets, night, out):
    """Phase coverage of the invented variables for a week of visits spread through the dark windows."""
    import numpy as np
    from astropy.time import Time

    from planner.inputs.resources import targets_dir
    from planner.inputs.variable_files import read_variables
    from planner.reports.phase_plot import phase_coverage_axes
    from planner.reports.phases_report import phase_report, report_json, report_text
    from planner.sky.almanac import dark_windows_jd
    from planner.variables.recovery import visit_times_in_windows

    variables = read_variables(targets_dir() / "demo" / "variables.ecsv")
    windows = dark_windows_jd(site, night, DEMO_VARIABLE_NIGHTS, site.limits.twilight)
    jd = visit_times_in_windows(windows, DEMO_VISITS_PER_NIGHT, np.random.default_rng(20270105))
    if jd.size == 0:
        return []
    times = Time(jd, format="jd", scale="utc")
    report = phase_report(variables, times, 20, 0.05)
    _write(out / "phases.txt", report_text(variables, report))
    common.write_json(out / "phases.json", report_json(variables, report))
    ax = phase_coverage_axes(report["ids"], report["periods"], report["phase"], report["types"], 20)
    with common.output_file(out / "phases.png", "--out") as tmp:
        ax.figure.savefig(tmp, dpi=120)
    return [
        ("phases.txt", f"phase coverage of the invented RR Lyrae: {DEMO_VISITS_PER_NIGHT} visits a night, "
         f"{DEMO_VARIABLE_NIGHTS} nights"),
        ("phases.json", "the same, as gcplan phases --json"),
        ("phases.png", "phase-coverage strips, one per star"),
    ]


def step_log(site, targets, night, out):
    """An invented night of frames, ingested into a logbook and printed as a night log."""
    from planner.reports.demo_night import write_demo_log

    write_demo_log(out, site, night)
    return [
        ("demo_frames/", "invented FITS frames of the night (headers only matter)"),
        ("demo_logbook.sqlite", "the logbook they were ingested into (gcplan log list --logbook …)"),
        ("nightlog.pdf", "the printed night log"),
    ]


def write_demo_schedule(out_dir, site=None):
    """Plan the demo campaign (``targets/demo/campaign.toml``) and write, into ``out_dir``:
    a night sheet per night (``schedule_YYYY-MM-DD.txt``), the whole plan as JSON
    (``campaign.json``) and the first night's visits over the altitude curves
    (``schedule_FIRSTNIGHT.png``).  ``site``, when given, replaces the file's site.
    Returns the paths written.
    """
    from dataclasses import replace

    from planner.inputs.campaign_file import read_campaign_file
    from planner.inputs.resources import targets_dir
    from planner.model.constraints import constraints_for_site
    from planner.reports.campaign_report import campaign_json
    from planner.reports.schedule_plot import save_schedule_plot
    from planner.reports.schedule_report import night_sheet
    from planner.scheduling.campaign import plan_campaign

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    if site is not None:
        c = campaign.constraints
        campaign = replace(campaign, site=site, constraints=constraints_for_site(
            site, twilight=c.twilight, max_airmass=c.max_airmass, min_altitude_deg=c.min_altitude_deg,
            min_moon_separation_deg=c.min_moon_separation_deg))
    from planner.cache.sun_moon import default_store

    store = default_store()
    plan = plan_campaign(campaign, store=store)
    written = []
    for night_plan in plan.nights:
        p = out / f"schedule_{night_plan.night.isoformat()}.txt"
        _write(p, night_sheet(campaign.site, night_plan))
        written.append(p)
    written.append(common.write_json(out / "campaign.json", campaign_json(plan)))
    first = plan.nights[0]
    chart = out / f"schedule_{first.night.isoformat()}.png"
    with common.output_file(chart, "--out") as tmp:
        save_schedule_plot(campaign.site, first, tmp, store=store)
    written.append(chart)
    return written


def step_schedule(site, targets, night, out):
    """The invented demo campaign (its own fixed nights) planned night by night."""
    paths = write_demo_schedule(out / "campaign", site)
    first = min(p.name for p in paths if p.suffix == ".txt")
    return [
        ("campaign/schedule_*.txt", f"night sheets of the demo campaign's {len(paths) - 2} nights (from {first[9:19]})"),
        ("campaign/campaign.json", "the whole campaign plan with coverage and recovery forecast"),
        ("campaign/schedule_*.png", "the first night's visits over the altitude curves"),
    ]


def step_proposal(site, targets, night, out):
    """The demo campaign's time request for the semester holding its nights."""
    from planner.inputs.campaign_file import read_campaign_file
    from planner.inputs.resources import targets_dir
    from planner.reports.proposal_files import write_proposal
    from planner.reports.proposal_tables import proposal_json
    from planner.scheduling.proposal import make_proposal, semester_label, semester_nights

    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    label = semester_label(campaign.nights[0], campaign.site.proposal)
    first, last = semester_nights(label, campaign.site.proposal)
    proposal = make_proposal(campaign, common.date_range(first, last), label)
    folder = out / "proposal"
    write_proposal(proposal, {}, folder, pngs=False)  # the figures are in the PDF; PNGs would add seconds
    common.write_json(folder / "proposal.json", proposal_json(proposal))
    return [
        ("proposal/proposal.pdf", f"the demo campaign's time request for {label}: tables and figures"),
        ("proposal/proposal.md, .csv, .tex", "its tables, ready to paste, with the sources"),
        ("proposal/proposal.json", "the same, as gcplan proposal --json"),
    ]


#: The demo's steps in order; each returns the files it wrote with a line on each.
STEPS = [step_night, step_semester, step_exposures, step_phases, step_log, step_schedule, step_proposal]
