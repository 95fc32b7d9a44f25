"""What the figures share: page size, target colours, times on the axes, saving, the caution.

Every figure draws on a :class:`matplotlib.figure.Figure` (no pyplot, no global
rcParams) and is saved through the Agg canvas by :func:`save_figure`.  Times
are JD UTC inside and matplotlib date numbers on the axes (a constant offset
apart), labelled with zoneinfo in the site's zone, so a night across a
daylight-saving change reads as the clocks do.
"""

from __future__ import annotations

import datetime as dt
import io
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

from planner.cautions import SHORT_CAUTION
from planner.errors import OutputError
from planner.sky.nights import datetime_to_jd, jd_to_datetime

#: A4 landscape, inches.
A4_LANDSCAPE_IN = (11.69, 8.27)
#: Ten qualitative colours (our own choice): distinct in hue and dark enough to
#: read over the darkest sky shade; after ten, the line style changes.
TARGET_COLOURS = (
    "#1c4fa1", "#d9480f", "#2b8a3e", "#c2255c", "#5f3dc4",
    "#0b7285", "#9c6500", "#5c3b28", "#cc2fb8", "#15171a",
)
TARGET_LINESTYLES = ("-", (0, (6, 2)), (0, (1.5, 1.5)), (0, (6, 2, 1.5, 2)))
#: The caution's colour at the foot of every figure.
CAUTION_COLOUR = "#862e2e"
_SAVE_DPI = 150


def caution_footer(fig, x: float, y: float, *, fontsize: float = 9, **where) -> None:
    """The short caution at the foot of a figure, bold in the caution colour; ``x, y`` in
    figure coordinates unless ``where`` gives another ``transform``."""
    fig.text(x, y, SHORT_CAUTION, fontsize=fontsize, fontweight="bold", color=CAUTION_COLOUR, va="bottom",
             **where)


# --- times on the axes -------------------------------------------------------


def jd_to_mdate(jd):
    """Matplotlib date numbers of JD UTC values (arrays too): a constant offset, no loop."""
    from matplotlib import dates as mdates

    ref = dt.datetime(2000, 1, 1, tzinfo=dt.timezone.utc)
    return mdates.date2num(ref) + (np.asarray(jd, dtype=float) - datetime_to_jd(ref))


def _quarter_hours(start_jd: float, end_jd: float) -> list[dt.datetime]:
    """The UTC quarter hours from ``start_jd`` to ``end_jd``: every zone's offset is a
    multiple of 15 minutes and its clocks change on one of them."""
    first = jd_to_datetime(start_jd).replace(second=0)
    first = first.replace(minute=first.minute - first.minute % 15)
    steps = (first + dt.timedelta(minutes=15 * k) for k in range(int((end_jd - start_jd) * 96) + 2))
    return [u for u in steps if start_jd <= datetime_to_jd(u) <= end_jd]  # ~100 ticks, not data


def clock_ticks(start_jd: float, end_jd: float, zone: str, step_h: int):
    """Major ticks (JD, labels) on the clock hours of ``zone`` that are multiples of
    ``step_h``, and minor ticks (JD) on the other hours and half hours."""
    tz = ZoneInfo(zone)
    major, labels, minor = [], [], []
    for utc in _quarter_hours(start_jd, end_jd):
        clock = utc.astimezone(tz)
        if clock.minute == 0 and clock.hour % step_h == 0:
            major.append(datetime_to_jd(utc))
            labels.append(f"{clock:%H:%M}")
        elif clock.minute in (0, 30):
            minor.append(datetime_to_jd(utc))
    return np.array(major), labels, np.array(minor)


def offset_changes(start_jd: float, end_jd: float, zone: str):
    """Clock changes (daylight saving) between two times: [(jd, old offset, new offset)]."""
    tz = ZoneInfo(zone)
    quarters = _quarter_hours(start_jd, end_jd)
    offsets = [u.astimezone(tz).utcoffset() for u in quarters]
    return [(datetime_to_jd(quarters[k]), offsets[k - 1], offsets[k])
            for k in range(1, len(quarters)) if offsets[k] != offsets[k - 1]]


def offset_text(offset: dt.timedelta) -> str:
    minutes = int(offset.total_seconds() // 60)
    sign = "+" if minutes >= 0 else "−"
    return f"UTC{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


# --- saving ------------------------------------------------------------------


def save_figure(fig, path) -> Path:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    p = Path(path)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in ("png", "pdf"):
        raise OutputError(f"chart file {str(p)!r} must end in .png or .pdf")
    FigureCanvasAgg(fig)
    # Drawn in memory, then written: matplotlib's PDF writer, hit by a full disk part-way,
    # fails inside its own clean-up with errors that are not OSError.
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=_SAVE_DPI, facecolor="white",
                metadata={"Creator": "gcplan"} if fmt == "pdf" else None)
    p.write_bytes(buffer.getvalue())
    return p
