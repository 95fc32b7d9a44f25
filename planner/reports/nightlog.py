"""The printed night log: one night of the logbook, as text or as a PDF for paper.

:func:`collect_night_log` gathers a night (entries, weather, notes, observers,
the plan's visits) and its almanac; :func:`night_log_text` and
:func:`write_night_log_pdf` lay it out.  The PDF (matplotlib's PdfPages,
A4 or US letter, portrait) opens with a header — site, night, observers,
twilights and the Moon — then the entries as a table that continues over as
many pages as it needs, repeating its column header; weather and notes
follow, and a last landscape page draws the night's altitude chart
(:func:`planner.reports.altitude_chart.night_chart`) with a dot for every entry.
Every page carries its number and the logbook it came from.
"""

from __future__ import annotations

import datetime as dt
import io
import textwrap
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from planner.cautions import PLAN_CAUTION
from planner.errors import OutputError
from planner.reports.figure_common import caution_footer
from planner.sky.almanac import Almanac, almanac_for_nights
from planner.sky.nights import jd_to_datetime, local_hhmm, night_spans_jd, utc_hhmm

#: Paper sizes, portrait, inches (ISO 216 A4 210 × 297 mm; US letter 8.5 × 11 in).
PAPER_IN = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}
_MARGIN_IN = 0.6
_ROW_IN = 0.2  # table row pitch: 7.5 pt type with air between rows
_MONO = "DejaVu Sans Mono"  # ships with matplotlib: the same on every printer
_TABLE_PT = 7.5
_TEXT_PT = 9.0


@dataclass(frozen=True)
class NightLog:
    """Everything printed for one night."""

    site: object  # SiteProfile
    night: dt.date
    almanac: Almanac  # of this one night
    entries: tuple
    weather: tuple
    notes: tuple
    observers: tuple[str, ...]
    visits: tuple
    logbook: str  # the file, for the footer


def collect_night_log(book, site, night: dt.date) -> NightLog:
    """The night's records from ``book`` (a :class:`~planner.logbook.Logbook`) and its almanac."""
    start, end = night_spans_jd([night], site.location.timezone)
    lo, hi = float(start[0]), float(end[0])
    return NightLog(site, night, almanac_for_nights(site, [night]), tuple(book.entries(lo, hi)),
                    tuple(book.weather(lo, hi)), tuple(book.notes(lo, hi)), tuple(book.observers(night)),
                    tuple(book.planned_visits(night)), str(book.path))


# --- the content, shared by text and PDF ----------------------------------------


def _title(log: NightLog) -> str:
    return f"Night log · night of {log.night:%A} {log.night.day} {log.night:%B %Y}"


def _site_line(log: NightLog) -> str:
    s = log.site
    loc = s.location
    return (f"{loc.latitude_deg:+.4f}°, {loc.longitude_deg:+.4f}° (east +), {loc.elevation_m:.0f} m · "
            f"{loc.timezone} · {s.telescope.name} · {s.camera.name}")


def almanac_rows(log: NightLog) -> list[tuple[str, str, str, str, str, str]]:
    """(evening event, local, UTC, morning event, local, UTC) rows of the header."""
    alm, zone = log.almanac, log.site.location.timezone

    def t(jd):
        return local_hhmm(jd, zone), utc_hhmm(jd)

    levels = (("civil", 6), ("nautical", 12), ("astronomical", 18))
    evening = [("sunset", alm.sunset_jd[0])] + [(f"{n} twilight ends", alm.evening_jd[n][0])
                                                for n, d in levels]
    morning = [(f"{n} twilight begins", alm.morning_jd[n][0]) for n, d in levels[::-1]]
    morning.append(("sunrise", alm.sunrise_jd[0]))
    rows = [(a, *t(ja), b, *t(jb)) for (a, ja), (b, jb) in zip(evening, morning)]  # both in time order
    # Each Moon event on the side of the night it belongs to (a moonset before sunset is
    # an evening event), in time order; an event the span lacks keeps its usual side.
    middle = alm.middle_jd[0]
    moon = [("moonrise", alm.moonrise_jd[0], "evening"), ("moonset", alm.moonset_jd[0], "morning")]
    sides = {"evening": [], "morning": []}
    for label, jd, usual in sorted(moon, key=lambda m: (np.nan_to_num(m[1], nan=np.inf))):
        side = usual if not np.isfinite(jd) else "evening" if jd < middle else "morning"
        sides[side].append((label, *t(jd)))
    blank = ("", "", "")
    for k in range(max(len(sides["evening"]), len(sides["morning"]))):
        e = sides["evening"][k] if k < len(sides["evening"]) else blank
        m = sides["morning"][k] if k < len(sides["morning"]) else blank
        rows.append((*e, *m))
    return rows


def _moon_line(log: NightLog) -> str:
    alm = log.almanac
    return f"Moon {alm.moon_illumination[0] * 100:.0f}% illuminated at midnight"


def summary_line(log: NightLog) -> str:
    frames = sum(e.frames for e in log.entries)
    seconds = sum((e.exposure_s or 0.0) * e.frames for e in log.entries)
    targets = list(dict.fromkeys(e.target for e in log.entries))
    done = sum(v.done_entry_id is not None for v in log.visits)
    text = (f"{len(log.entries)} entries, {frames} frames, {seconds / 3600:.2f} h of exposure"
            + (f" on {', '.join(targets)}" if targets else ""))
    if log.visits:
        text += f"; planned visits done {done} of {len(log.visits)}"
    return text


TABLE_HEADER = (f"{'#':>4}  {'UTC':8}  {'local':5}  {'target':14} {'filter':7} {'exp s':>6} {'frames':>6} "
                f"{'airmass':>8}  {'seeing':>6}  file · sky · note")


def entry_line(e, zone: str, width: int) -> str:
    """One fixed-width table row; the last column is cut to fit ``width`` characters."""
    utc = jd_to_datetime(e.time_jd).strftime("%H:%M:%S")
    x = "" if e.airmass is None else f"{e.airmass:.3f}" + ("" if e.airmass_source != "computed" else "*")
    exp = "" if e.exposure_s is None else f"{e.exposure_s:g}"
    see = "" if e.seeing_arcsec is None else f"{e.seeing_arcsec:.1f}"
    tail = " · ".join(p for p in (Path(e.file).name if e.file else "", e.sky_note or "", e.note or "") if p)
    x = f"{x:<6}" if x else ""  # keep the digits aligned, the asterisk after them
    line = (f"{e.id:>4}  {utc:8}  {local_hhmm(e.time_jd, zone):5}  {_cut(e.target, 14):14} "
            f"{_cut(e.filter or '', 7):7} {exp:>6} {e.frames:>6} {x:>8}  {see:>6}  {tail}")
    return _cut(line, width)


def _cut(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1] + "…"


def weather_lines(log: NightLog) -> list[str]:
    zone = log.site.location.timezone
    return [f"{local_hhmm(w.time_jd, zone)} local ({utc_hhmm(w.time_jd)} UTC)  dome {w.state}"
            + (f": {w.note}" if w.note else "") for w in log.weather]


def note_lines(log: NightLog) -> list[str]:
    zone = log.site.location.timezone
    return [f"{local_hhmm(n.time_jd, zone)} local ({utc_hhmm(n.time_jd)} UTC)  {n.text}" for n in log.notes]


def night_log_text(log: NightLog, width: int = 100) -> str:
    """The night log as plain text (what ``gcplan log print`` shows without --pdf)."""
    out = [_title(log), log.site.location.name, _site_line(log),
           f"observers: {', '.join(log.observers) or '(none recorded)'}", "",
           f"{'evening':29} {'local':>5} {'UTC':>5}    {'morning':29} {'local':>5} {'UTC':>5}"]
    for a, al, au, b, bl, bu in almanac_rows(log):
        out.append(f"{a:29} {al:>5} {au:>5}    {b:29} {bl:>5} {bu:>5}")
    out += [_moon_line(log), "", summary_line(log), "", TABLE_HEADER]
    zone = log.site.location.timezone
    out += [entry_line(e, zone, width) for e in log.entries] or ["(no entries this night)"]
    out += ["airmass: * computed (Kasten & Young 1989, mid-exposure), else from the header", ""]
    out += ["weather:"] + (["  " + w for w in weather_lines(log)] or ["  (no weather events)"])
    out += ["notes:"] + (["  " + n for n in note_lines(log)] or ["  (no notes)"])
    out += ["", PLAN_CAUTION]
    return "\n".join(out)


# --- the PDF ----------------------------------------------------------------------


def write_night_log_pdf(log: NightLog, path, paper: str = "a4") -> Path:
    """Write the printable night log; returns the path."""
    from matplotlib.backends.backend_pdf import PdfPages

    if paper not in PAPER_IN:
        raise OutputError(f"--paper must be one of {', '.join(PAPER_IN)} (got {paper!r})")
    path = Path(path)
    pages = _paginate(log, PAPER_IN[paper])
    buffer = io.BytesIO()  # drawn in memory, then written (see figure_common.save_figure)
    with PdfPages(buffer, metadata={"Creator": "gcplan", "Title": _title(log)}) as pdf:
        for number, blocks in enumerate(pages, 1):
            fig = _draw_page(log, blocks, PAPER_IN[paper], number, len(pages) + 1)
            pdf.savefig(fig)
        pdf.savefig(observed_chart(log, PAPER_IN[paper][::-1], len(pages) + 1))
    path.write_bytes(buffer.getvalue())
    return path


def _table_width_chars(size_in) -> int:
    # DejaVu Sans Mono advances 0.602 em per character (its metrics).
    return int((size_in[0] - 2 * _MARGIN_IN) / (0.602 * _TABLE_PT / 72.0))


def _paginate(log: NightLog, size_in) -> list[list[tuple[str, str]]]:
    """Blocks (kind, text) per page.  A page full of rows continues on the next with the header again."""
    width = _table_width_chars(size_in)
    text_chars = int(width * _TABLE_PT / _TEXT_PT * 1.05)  # proportional 9 pt: about as many as mono 8.6 pt
    heights = {"title": 0.9, "line": 0.19, "almanac": 1.45, "heading": 0.34, "tablehead": _ROW_IN + 0.04,
               "row": _ROW_IN, "gap": 0.12, "cont": 0.42}
    zone = log.site.location.timezone
    flow: list[tuple[str, str]] = [("title", _title(log)), ("almanac", ""), ("line", summary_line(log)),
                                   ("heading", "Entries"), ("tablehead", TABLE_HEADER)]
    flow += [("row", entry_line(e, zone, width)) for e in log.entries] or [("line", "(no entries this night)")]
    flow += [("foot", "airmass: * computed (Kasten & Young 1989, at mid-exposure), else from the header")]
    heights["foot"] = 0.3
    for heading, lines in (("Weather", weather_lines(log) or ["(no weather events recorded)"]),
                           ("Notes", note_lines(log) or ["(no notes)"])):
        flow.append(("heading", heading))
        for line in lines:
            for part in textwrap.wrap(line, text_chars, subsequent_indent="      ") or [""]:
                flow.append(("line", part))
    usable = size_in[1] - 2 * _MARGIN_IN - 0.35  # the footer's strip
    pages: list[list[tuple[str, str]]] = [[]]
    y = 0.0
    for kind, text in flow:
        h = heights[kind]
        if y + h > usable:
            pages.append([("cont", _title(log) + " (continued)")])
            y = heights["cont"]
            if kind == "row":
                pages[-1].append(("tablehead", TABLE_HEADER))
                y += heights["tablehead"]
        if kind == "heading" and y + h + 2 * heights["line"] > usable:  # no heading alone at a page foot
            pages.append([("cont", _title(log) + " (continued)")])
            y = heights["cont"]
        pages[-1].append((kind, text))
        y += h
    return pages


def _draw_page(log: NightLog, blocks, size_in, number: int, total: int):
    from matplotlib.figure import Figure
    from matplotlib.patches import Rectangle

    fig = Figure(figsize=size_in)
    w, h = size_in
    inch = fig.dpi_scale_trans
    x0, x1 = _MARGIN_IN, w - _MARGIN_IN
    y = h - _MARGIN_IN
    row_index = 0
    for kind, text in blocks:
        if kind == "title":
            fig.text(x0, y, text, transform=inch, fontsize=14, fontweight="bold", va="top")
            fig.text(x0, y - 0.28, _cut(log.site.location.name, 90), transform=inch, fontsize=10.5,
                     fontweight="bold", va="top")
            fig.text(x0, y - 0.5, _cut(_site_line(log), 120), transform=inch, fontsize=8.5, va="top",
                     color="#343a40")
            fig.text(x0, y - 0.7, _cut(f"Observers: {', '.join(log.observers) or '(none recorded)'}", 110),
                     transform=inch, fontsize=_TEXT_PT, va="top")
            y -= 0.9
        elif kind == "cont":
            fig.text(x0, y, text, transform=inch, fontsize=10, fontweight="bold", va="top", color="#343a40")
            y -= 0.42
        elif kind == "almanac":
            y = _draw_almanac(fig, log, x0, x1, y)
        elif kind == "heading":
            y -= 0.1
            fig.text(x0, y, text, transform=inch, fontsize=11, fontweight="bold", va="top")
            fig.add_artist(Rectangle((x0, y - 0.2), x1 - x0, 0.012, transform=inch, color="#343a40", lw=0))
            y -= 0.24
        elif kind == "tablehead":
            fig.add_artist(Rectangle((x0, y - _ROW_IN - 0.02), x1 - x0, _ROW_IN + 0.02, transform=inch,
                                     facecolor="#d5dce8", edgecolor="none"))
            fig.text(x0 + 0.03, y - 0.035, text, transform=inch, fontsize=_TABLE_PT, family=_MONO,
                     fontweight="bold", va="top")
            y -= _ROW_IN + 0.04
            row_index = 0
        elif kind == "row":
            if row_index % 2 == 1:  # light bands guide the eye along a row on paper
                fig.add_artist(Rectangle((x0, y - _ROW_IN + 0.015), x1 - x0, _ROW_IN, transform=inch,
                                         facecolor="#eef1f6", edgecolor="none"))
            fig.text(x0 + 0.03, y - 0.03, text, transform=inch, fontsize=_TABLE_PT, family=_MONO, va="top")
            y -= _ROW_IN
            row_index += 1
        elif kind == "foot":
            fig.text(x0, y - 0.06, text, transform=inch, fontsize=7.5, va="top", color="#343a40", style="italic")
            y -= 0.3
        else:  # a line of text
            fig.text(x0, y, text, transform=inch, fontsize=_TEXT_PT, va="top")
            y -= 0.19
    _footer(fig, log, size_in, number, total)
    return fig


def _draw_almanac(fig, log: NightLog, x0: float, x1: float, y: float) -> float:
    """The twilights and the Moon, evening beside morning, local and UTC."""
    from matplotlib.patches import Rectangle

    inch = fig.dpi_scale_trans
    rows = almanac_rows(log)
    top = y - 0.05
    height = 0.2 * (len(rows) + 1) + 0.28
    fig.add_artist(Rectangle((x0, top - height), x1 - x0, height, transform=inch, facecolor="none",
                             edgecolor="#8a94a6", linewidth=0.6))
    mid = 0.5 * (x0 + x1)
    cols = ((x0 + 0.1, "evening"), (mid + 0.1, "morning"))
    yy = top - 0.08
    for cx, label in cols:
        fig.text(cx, yy, label, transform=inch, fontsize=8.5, fontweight="bold", va="top")
        fig.text(cx + 2.65, yy, "local", transform=inch, fontsize=8.5, fontweight="bold", va="top", ha="right")
        fig.text(cx + 3.25, yy, "UTC", transform=inch, fontsize=8.5, fontweight="bold", va="top", ha="right")
    for row in rows:
        yy -= 0.2
        for (cx, _), (event, local, utc) in zip(cols, (row[:3], row[3:])):
            fig.text(cx, yy, event, transform=inch, fontsize=8.5, va="top")
            fig.text(cx + 2.65, yy, local, transform=inch, fontsize=8.5, va="top", ha="right", family=_MONO)
            fig.text(cx + 3.25, yy, utc, transform=inch, fontsize=8.5, va="top", ha="right", family=_MONO)
    fig.text(x0 + 0.1, yy - 0.22, _moon_line(log) + "; twilights: Sun at −6°, −12°, −18°; times local ("
             f"{log.site.location.timezone}) and UTC", transform=inch, fontsize=8.5, va="top")
    return top - height - 0.1


def _footer(fig, log: NightLog, size_in, number: int, total: int) -> None:
    inch = fig.dpi_scale_trans
    w = size_in[0]
    fig.text(_MARGIN_IN, _MARGIN_IN - 0.2, f"gcplan night log · {Path(log.logbook).name} · night of {log.night}",
             transform=inch, fontsize=7.5, color="#5c6370", va="bottom")
    fig.text(w - _MARGIN_IN, _MARGIN_IN - 0.2, f"page {number} of {total}", transform=inch, fontsize=7.5,
             color="#5c6370", va="bottom", ha="right")
    caution_footer(fig, _MARGIN_IN, _MARGIN_IN - 0.02, fontsize=8, transform=inch)


# --- the chart of what was observed -----------------------------------------------


def observed_targets(log: NightLog):
    """One :class:`~planner.targets.Target` per observed name with a position (entry or catalog)."""
    from planner.inputs.catalog import load_catalog
    from planner.model.target import Target

    catalog = None
    out: dict[str, Target] = {}
    for e in log.entries:
        if e.target in out:
            continue
        ra, dec = e.ra_deg, e.dec_deg
        if ra is None or dec is None:
            catalog = catalog or load_catalog()
            hit = catalog.lookup(e.target)
            if hit is None:
                continue
            ra, dec = hit.ra_deg, hit.dec_deg
        out[e.target] = Target(e.target, float(ra), float(dec))
    return list(out.values())


def observed_chart(log: NightLog, size_in, page: int | None = None):
    """The night chart (charts.night_chart) of the observed targets, a dot at every entry."""
    from matplotlib.figure import Figure

    from planner.model.constraints import constraints_for_site
    from planner.reports.altitude_chart import night_chart
    from planner.reports.figure_common import jd_to_mdate
    from planner.sky.night_summary import night_curves, run_of_nights

    targets = observed_targets(log)
    fig = Figure(figsize=size_in)
    if not targets:
        fig.text(0.5, 0.5, "Nothing with a known position was observed this night: no chart.",
                 ha="center", va="center", fontsize=13)
    else:
        run = run_of_nights(log.site, targets, [log.night], constraints_for_site(log.site))
        curves = night_curves(run)
        night_chart(run, curves, fig)
        ax = fig.axes[0]
        colours = {line.get_gid()[len("target:"):]: line.get_color()
                   for line in ax.get_lines() if (line.get_gid() or "").startswith("target:")}
        names = [t.name for t in targets]
        sky = curves.sky
        for e in log.entries:
            if e.target not in colours:
                continue
            k = names.index(e.target)
            mid = e.time_jd + (e.exposure_s or 0.0) * e.frames / 2.0 / 86400.0
            alt = np.interp(mid, sky.jd_utc, np.asarray(sky.altitude_deg)[k])
            ax.plot(jd_to_mdate(mid), alt, "o", markersize=5.5, markerfacecolor="white",
                    markeredgecolor=colours[e.target], markeredgewidth=1.6, zorder=7, gid=f"entry:{e.id}")
        for start, end in closed_intervals(log):
            ax.axvspan(jd_to_mdate(max(start, curves.start_jd)), jd_to_mdate(min(end, curves.end_jd)),
                       facecolor="none", edgecolor="#862e2e", hatch="///", linewidth=0, zorder=3,
                       gid="weather:closed")
        fig.text(0.8, 0.2, "○ a log entry, at mid-exposure\n"
                 + ("▨ dome closed (weather)" if closed_intervals(log) else ""),
                 fontsize=9, va="top", color="#15171a", linespacing=1.5)
    if page is not None:
        fig.text(0.935, 0.018, f"page {page} of {page}", fontsize=7.5, color="#5c6370", ha="right")
    return fig


def closed_intervals(log: NightLog) -> list[tuple[float, float]]:
    """(closed, reopened) JD pairs of the night; a closure never reopened runs to the span's end."""
    from planner.logbook.store import closed_periods

    return closed_periods(log.weather, float(log.almanac.span_end_jd[0]))
