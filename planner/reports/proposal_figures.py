"""The time request's figures and its PDF (matplotlib; no pyplot state, no rcParams).

Pages: the request's tables (as many pages as the rows need), each target's
observable hours over the semester with the Moon's phases
(:func:`planner.reports.hours_chart.observability_chart`), the altitude chart of a
representative night (:func:`planner.reports.altitude_chart.night_chart`), S/N against
magnitude for the chosen frames with each target's RGB tip and HB marked, and — when
the campaign has RR Lyrae — the forecast period recovery against nights.  Every page
carries the caution at its foot.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np

from planner.reports.figure_common import (
    A4_LANDSCAPE_IN,
    TARGET_COLOURS,
    caution_footer,
    save_figure,
)

#: Lines of table text on one page of the PDF's tables.
LINES_PER_PAGE = 54
_LEVEL_STYLE = {"tip": "-", "hb": "--", "turnoff": ":", "variables": "-."}


def _page(title: str, subtitle: str = ""):
    from matplotlib.figure import Figure

    fig = Figure(figsize=A4_LANDSCAPE_IN)
    fig.text(0.06, 0.965, textwrap.shorten(title, 110, placeholder="…"), fontsize=12, fontweight="bold", va="top")
    if subtitle:
        fig.text(0.06, 0.925, "\n".join(textwrap.wrap(subtitle, 150)), fontsize=9, va="top", color="#343a40",
                 linespacing=1.3)
    caution_footer(fig, 0.06, 0.02)
    return fig


def _colour(p, name: str) -> str:
    names = [t.name for t in p.campaign.targets]
    return TARGET_COLOURS[names.index(name) % len(TARGET_COLOURS)]


def table_lines(p) -> list[str]:
    """The request as fixed-width text: targets, time per filter and level, recovery, totals,
    assumptions, sources."""
    from planner.reports.proposal_tables import (
        assumptions,
        moon_lines,
        recovery_table,
        request_table,
        serving_lines,
        target_table,
        totals_lines,
    )

    def block(head, rows, widths):
        fmt = lambda r: "  ".join(f"{str(x)[:w]:<{w}s}" for x, w in zip(r, widths))  # noqa: E731
        return [fmt(head), fmt(["─" * w for w in widths])] + [fmt(r) for r in rows]

    head, rows = target_table(p)
    out = ["TARGETS"] + block(head, rows, (10, 18, 12, 6, 6, 21, 7, 7, 6, 6, 6))
    for t in p.targets:
        if t.reason:
            out += textwrap.wrap(f"{t.name}: not requested — {t.reason}", 150)
    out += ["", "TIME PER FILTER AND LEVEL (overheads: slew, settle, acquisition, filter change, readout)"]
    out += block(*request_table(p), (10, 16, 6, 5, 12, 6, 9, 10, 8, 24))
    head, rows = recovery_table(p)
    if rows:
        out += ["", "FORECAST RR LYRAE PERIOD RECOVERY AGAINST NIGHTS"] + block(head, rows, (10,) + (18,) * 5)
    out += ["", "TOTALS"] + totals_lines(p)
    out += ["", "NIGHTS THAT SERVE EACH TARGET, BY MOON CLASS"] + [w for x in serving_lines(p)
                                                                  for w in textwrap.wrap(x, 150)]
    out += ["", "MOON CONSTRAINTS"] + moon_lines(p)
    notes = [f"{t.name}: {n}" for t in p.targets for n in t.notes]
    if notes:
        out += ["", "NOTES"] + [w for n in notes for w in textwrap.wrap(n, 150)]
    out += ["", "ASSUMPTIONS"] + [w for a in assumptions(p) for w in textwrap.wrap("• " + a, 150)]
    out += ["", "SOURCES"] + [w for s in p.sources for w in textwrap.wrap("• " + s, 150)]
    return out


def table_pages(p) -> list:
    from planner.reports.proposal_tables import title

    lines = table_lines(p)
    chunks = [lines[i:i + LINES_PER_PAGE] for i in range(0, len(lines), LINES_PER_PAGE)] or [[]]
    run = p.run
    pages = []
    for k, chunk in enumerate(chunks):
        fig = _page(title(p) + (f" ({k + 1}/{len(chunks)})" if len(chunks) > 1 else ""),
                    f"{p.campaign.site.name} · nights {run.nights[0]} to {run.nights[-1]} ({len(run.nights)})"
                    + (" · invented demo campaign" if p.campaign.invented else ""))
        fig.text(0.04, 0.88, "\n".join(chunk), fontsize=6.6, family="monospace", va="top", linespacing=1.35)
        pages.append(fig)
    return pages


def observability_figure(p):
    from planner.reports.hours_chart import observability_chart

    return observability_chart(p.run)


def night_figure(p):
    """The altitude chart of the representative night (the night most targets are up longest, dark if any)."""
    from planner.reports.altitude_chart import night_chart
    from planner.sky.night_summary import night_curves, run_of_nights

    c = p.campaign
    one = run_of_nights(c.site, list(c.targets), [p.representative_night], c.constraints)
    return night_chart(one, night_curves(one))


def snr_figure(p):
    """S/N of each row's frames against magnitude, one panel per filter; tips and HBs marked."""
    from planner.light.exposure import saturation_time_s, snr_of_exposure
    from planner.light.photometry import LevelError, science_level

    site = p.campaign.site
    rows = [(t, r) for t in p.targets for r in t.rows]
    filters = list(dict.fromkeys(r.filter for _, r in rows))
    fig = _page("S/N against magnitude for the chosen frames",
                "solid where the frames keep stars that bright linear, thin where they saturate; ● each goal; "
                "▼ RGB tip, ▽ HB of each target (in the panel's band)")
    axes = [fig.add_axes((0.07 + k * 0.9 / len(filters), 0.11, 0.9 / len(filters) - 0.06, 0.75))
            for k in range(len(filters))]
    by_name = {t.name: t for t in p.campaign.targets}
    for ax, f in zip(axes, filters):
        band = site.filters[f].band
        mags = np.linspace(8.0, 24.0, 161)
        for t, r in rows:
            if r.filter != f:
                continue
            w = r.conditions
            snr = np.asarray(snr_of_exposure(site, f, mags, r.frame_s, **w), dtype=float) * np.sqrt(r.frames)
            sat = np.asarray(saturation_time_s(site, f, mags, **w), dtype=float)
            ok = r.frame_s <= sat
            colour = _colour(p, t.name)
            ax.plot(mags, np.where(ok, snr, np.nan), color=colour, ls=_LEVEL_STYLE.get(r.purpose, "-"), lw=1.5,
                    label=f"{t.name} {r.purpose} {r.frames}×{r.frame_s:g} s")
            ax.plot(mags, np.where(ok, np.nan, snr), color=colour, ls=_LEVEL_STYLE.get(r.purpose, "-"), lw=0.5)
            if r.magnitude is not None and r.snr_goal is not None:
                ax.plot([r.magnitude], [r.snr_goal], "o", color=colour, ms=4)
        for t in p.targets:
            if t.reason:
                continue
            for level in ("tip", "hb"):
                try:
                    m = science_level(by_name[t.name], level, band).magnitude
                except LevelError:
                    continue
                ax.axvline(m, color=_colour(p, t.name), lw=0.6, alpha=0.5)
                ax.plot([m], [1.0], marker="v", mfc="none" if level == "hb" else _colour(p, t.name),
                        color=_colour(p, t.name), ms=7, clip_on=False)
        ax.set_yscale("log")
        ax.set_ylim(1.0, 1e4)
        ax.set_xlim(8, 24)
        ax.set_xlabel(f"{f} magnitude (band {band})")
        ax.set_ylabel("S/N of the visit's frames")
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=6.5, loc="lower left", ncol=1)
    return fig


def recovery_figure(p):
    """Forecast recovered fraction against nights, one line per cluster with RR Lyrae."""
    from planner.scheduling.proposal_forecast import RECOVERY_GOAL, RECOVERY_NIGHTS

    fig = _page("Forecast RR Lyrae period recovery against nights",
                "simulated light curves at the cadence's visits on the nights that serve each cluster, "
                "Lomb–Scargle search; dashed: one-day aliases (1/P ± 1 d⁻¹), which a single site's daily gaps leave")
    ax = fig.add_axes((0.08, 0.11, 0.86, 0.75))
    for t in p.targets:
        if not t.recovery:
            continue
        n = [x[0] for x in t.recovery]
        colour = _colour(p, t.name)
        ax.plot(n, [x[1] for x in t.recovery], "o-", color=colour, label=f"{t.name} ({t.nights_needed} nights asked)")
        ax.plot(n, [x[2] for x in t.recovery], "x--", color=colour, lw=0.8)
    ax.axhline(RECOVERY_GOAL, color="0.3", ls=":", label=f"goal {RECOVERY_GOAL:.0%}")
    ax.set_xticks(list(RECOVERY_NIGHTS))
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlabel("nights")
    ax.set_ylabel("fraction of periods recovered (|ΔP|/P < 0.001)")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="lower right")
    return fig


def figures(p) -> dict:
    """The named figures (the PNGs), in the PDF's order after the tables."""
    out = {"observability": observability_figure(p), "night": night_figure(p), "snr": snr_figure(p)}
    if any(t.recovery for t in p.targets):
        out["recovery"] = recovery_figure(p)
    return out


def write_pdf(p, path, figs: dict | None = None) -> Path:
    """The tables and the figures, one PDF."""
    from matplotlib.backends.backend_pdf import PdfPages

    figs = figures(p) if figs is None else figs
    with PdfPages(path, metadata={"Creator": "gcplan", "Title": f"gcplan time request {p.label}"}) as pdf:
        for fig in table_pages(p) + list(figs.values()):
            pdf.savefig(fig)
    return Path(path)


def save_pngs(p, out_dir, figs: dict | None = None, prefix: str = "proposal_") -> list[Path]:
    figs = figures(p) if figs is None else figs
    return [save_figure(fig, Path(out_dir) / f"{prefix}{name}.png") for name, fig in figs.items()]
