"""``gcplan proposal``: a semester's time request for a campaign, with its tables and figures."""

from __future__ import annotations

from planner.commands import common


def register(sub) -> None:
    p = sub.add_parser(
        "proposal",
        help="a semester's time request for a campaign: hours and nights, tables, figures, JSON",
        description="Turn a campaign file into a time request for a semester (A: April-September, B: "
        "October-March, unless the site profile's [proposal] table says otherwise) or a range of nights: "
        "when each target can be done in dark, grey and bright time, the time per filter and level with "
        "every overhead, the S/N at the RGB tip and HB, the RR Lyrae nights and forecast period recovery, "
        "totals before and after the weather; as text, JSON, Markdown, CSV, LaTeX and a PDF with figures.",
    )
    p.add_argument("--campaign", required=True, metavar="FILE", help="campaign file (TOML)")
    p.add_argument("--semester", metavar="YYYYA|YYYYB", help="the semester, e.g. 2027A")
    p.add_argument("--start", metavar="YYYY-MM-DD", help="first night, instead of --semester")
    p.add_argument("--end", metavar="YYYY-MM-DD", help="last night (inclusive), with --start")
    p.add_argument("--seeing", type=float, metavar="FWHM", help="seeing planned for, arcsec")
    p.add_argument("--pdf", metavar="FILE.pdf", help="the tables and figures as one PDF")
    p.add_argument("--markdown", metavar="FILE.md", help="the tables in Markdown")
    p.add_argument("--csv", metavar="FILE.csv", help="the request, a row per target and work")
    p.add_argument("--latex", metavar="FILE.tex", help="the tables in LaTeX (booktabs)")
    common.add_json_argument(p)
    p.add_argument("--out", metavar="DIR", help="write all of it here: proposal.pdf/.md/.csv/.tex/.json and a "
                   "PNG per figure")
    p.set_defaults(run=run)


def nights_from_args(args, settings):
    """(label, nights) from --semester or --start/--end."""
    from planner.scheduling.proposal import SemesterError, semester_nights

    if args.semester and (args.start or args.end):
        raise common.OptionError("give --semester or --start and --end, not both")
    if args.semester:
        try:
            first, last = semester_nights(args.semester, settings)
        except SemesterError as exc:
            raise common.OptionError(f"--semester {exc.detail}") from None
        for night in (first, last):
            common.parse_night_date(night.isoformat(), "--semester")
        return args.semester.strip().upper(), common.date_range(first, last)
    if not (args.start and args.end):
        raise common.OptionError("give --semester YYYYA|YYYYB, or --start and --end")
    first = common.parse_night_date(args.start, "--start")
    last = common.parse_night_date(args.end, "--end")
    nights = common.date_range(first, last)
    return f"{first}..{last}", nights


def _outputs(args) -> dict:
    """Every file asked for, checked before anything is computed."""
    from pathlib import Path

    from planner.errors import OutputError

    out = {}
    for option, suffixes in (("pdf", (".pdf",)), ("markdown", (".md", ".markdown")), ("csv", (".csv",)),
                             ("latex", (".tex",))):
        value = getattr(args, option)
        if value:
            out[option] = common.check_output_path(value, suffixes, f"--{option}")
    if args.out:
        folder = Path(args.out)
        if folder.exists() and not folder.is_dir():
            raise OutputError(f"--out {args.out!r} is a file, not a folder")
        if not (folder.parent if str(folder.parent) else Path(".")).is_dir():
            raise OutputError(f"--out {args.out!r}: folder {str(folder.parent)!r} does not exist")
        out["out"] = folder
    return out


def run(args) -> int:
    from planner.cache.sun_moon import default_store
    from planner.reports.proposal_tables import proposal_json, proposal_text
    from planner.scheduling.proposal import make_proposal

    common.check_seeing(args.seeing)
    outputs = _outputs(args)
    campaign = common.campaign_from_args(args)
    label, nights = nights_from_args(args, campaign.site.proposal)
    proposal = make_proposal(campaign, nights, label, seeing_arcsec=args.seeing, store=default_store())
    data = proposal_json(proposal)
    if args.json:
        common.print_json(data)
    else:
        print(proposal_text(proposal))
    try:
        written = write_outputs(proposal, data, outputs)
    except OSError as exc:  # a full disk, a folder without write permission: one line, not a traceback
        from planner.errors import OutputError

        raise OutputError(f"cannot write {exc.filename or 'the output'}: {exc.strerror or exc}") from None
    if written and not args.json:
        print("\nwritten: " + ", ".join(str(p) for p in written))
    common.warn_all(proposal.warnings)
    return 0


def write_outputs(proposal, data: dict, outputs: dict) -> list:
    from planner.reports.proposal_files import write_proposal

    folder = outputs.get("out")
    written = write_proposal(proposal, {k: v for k, v in outputs.items() if k != "out"}, folder)
    if folder is not None:
        written.append(common.write_json(folder / "proposal.json", data))
    return written
