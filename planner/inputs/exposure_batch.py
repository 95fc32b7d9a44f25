"""The rows of ``gcplan expose --batch FILE``: one exposure question per row.

A CSV (header line first) or ECSV table.  Every column is optional: an empty
cell (or a missing column) takes the value of the same option on the command
line, else the option's default; each row must end up with a filter, an S/N
and a ``mag`` or a ``target`` with a ``level``:

====================  =========================================================
column                meaning (an empty cell: the same default as the option)
====================  =========================================================
``target``            cluster by catalog name or alias (``--target``)
``mag``               magnitude of the star, as observed (``--mag``)
``level``             ``tip``, ``hb`` or ``turnoff`` (``--level``)
``filter``            filter name as in the site profile (``--filter``)
``snr``               S/N goal for the stacked frames (``--snr``)
``seeing_arcsec``     seeing FWHM (``--seeing``; default the site's typical)
``airmass``           airmass (``--airmass``; default 1.2)
``moon_illumination`` illuminated fraction 0..1 (``--moon-illumination``; 0)
``moon_separation_deg``  Moon–target distance (``--moon-separation``; 90)
``moon_altitude_deg``    the Moon's altitude (``--moon-altitude``; −90)
``field_radius_arcmin``  distance from the cluster centre (``--field-radius``)
``r_v``               R_V towards the cluster (``--r-v``)
``shortest_period_d`` phase-smearing check (``--shortest-period``)
====================  =========================================================

CSV lines starting with ``#`` and blank lines are skipped (as in target lists).
Any other column is an error (a misspelt column would otherwise be ignored in
silence).  Errors name the file, the row (1 = the first data row) and the column.
"""

from __future__ import annotations

import csv
from pathlib import Path

from planner.errors import InputError

#: column -> (attribute of the single command's options, kind)
COLUMNS = {
    "target": ("target", "text"),
    "mag": ("mag", "number"),
    "level": ("level", "text"),
    "filter": ("filter", "text"),
    "snr": ("snr", "number"),
    "seeing_arcsec": ("seeing", "number"),
    "airmass": ("airmass", "number"),
    "moon_illumination": ("moon_illumination", "number"),
    "moon_separation_deg": ("moon_separation", "number"),
    "moon_altitude_deg": ("moon_altitude", "number"),
    "field_radius_arcmin": ("field_radius", "number"),
    "r_v": ("r_v", "number"),
    "shortest_period_d": ("shortest_period", "number"),
}
MAX_ROWS = 100_000


class BatchFileError(InputError):
    """A batch file of exposure questions that cannot be read or holds a bad cell."""


def read_exposure_batch(path: str | Path) -> list[dict]:
    """The file's rows as ``{option attribute: value}`` (text, float, or None for an empty
    cell), each with its ``row`` number."""
    path = Path(path)
    source = str(path)
    if not path.is_file():
        raise BatchFileError("no such file", source)
    suffix = path.suffix.lower()
    if suffix == ".ecsv":
        names, rows = _ecsv_rows(path, source)
    elif suffix == ".csv":
        names, rows = _csv_rows(path, source)
    else:
        raise BatchFileError(f"must be a .csv or .ecsv table (got {path.suffix or 'no suffix'!r})", source)
    names = [n.strip() for n in names]
    unknown = [n for n in names if n not in COLUMNS]
    if unknown:
        raise BatchFileError(f"column {unknown[0]!r} is not one the batch reads "
                             f"(columns: {', '.join(COLUMNS)})", source)
    if not rows:
        raise BatchFileError("no rows", source)
    if len(rows) > MAX_ROWS:
        raise BatchFileError(f"{len(rows)} rows; at most {MAX_ROWS:,} at a time", source)
    return [_typed(names, cells, i + 1, source) for i, cells in enumerate(rows)]


def _typed(names: list[str], cells: list[str], row: int, source: str) -> dict:
    out: dict = {"row": row}
    for name, cell in zip(names, cells):
        attribute, kind = COLUMNS[name]
        text = cell.strip()
        if not text:
            out[attribute] = None
        elif kind == "number":
            try:
                out[attribute] = float(text)
            except ValueError:
                raise BatchFileError(f"row {row}, column {name} must be a number (got {text!r})", source) from None
        else:
            out[attribute] = text
    return out


def _csv_rows(path: Path, source: str) -> tuple[list[str], list[list[str]]]:
    try:
        with open(path, encoding="utf-8-sig", newline="") as f:
            lines = [r for r in csv.reader(f) if r and any(c.strip() for c in r) and not r[0].lstrip().startswith("#")]
    except (OSError, UnicodeDecodeError, csv.Error) as exc:
        raise BatchFileError(f"cannot read as CSV: {exc}", source) from None
    if not lines:
        raise BatchFileError("empty file (expected a header line of column names)", source)
    names, rows = lines[0], lines[1:]
    for i, cells in enumerate(rows):
        if len(cells) != len(names):
            raise BatchFileError(f"row {i + 1} has {len(cells)} cells for {len(names)} columns", source)
    return names, rows


def _ecsv_rows(path: Path, source: str) -> tuple[list[str], list[list[str]]]:
    from planner.inputs.ecsv_columns import NotPlainEcsv, read_plain_ecsv

    try:
        _, cells = read_plain_ecsv(path)
    except NotPlainEcsv:
        cells = _astropy_cells(path, source)
    except (OSError, UnicodeDecodeError) as exc:
        raise BatchFileError(f"cannot read as ECSV: {exc}", source) from None
    names = list(cells)
    n = len(cells[names[0]]) if names else 0
    return names, [[cells[c][i] for c in names] for i in range(n)]


def _astropy_cells(path: Path, source: str) -> dict[str, list[str]]:
    """ECSV beyond the plain form, through astropy's reader; cells as text, "" where masked."""
    import numpy as np
    from astropy.table import Table

    try:
        table = Table.read(path, format="ascii.ecsv")
    except Exception as exc:  # astropy raises many types for a malformed file
        raise BatchFileError(f"cannot read as ECSV: {exc}", source) from None
    cells = {}
    for name in table.colnames:
        column = table[name]
        if getattr(column, "ndim", 1) != 1:
            raise BatchFileError(f"column {name} holds more than one value per row", source)
        mask = np.ma.getmaskarray(np.ma.asarray(column))
        cells[name] = ["" if m else str(v) for v, m in zip(np.asarray(column).tolist(), mask.tolist())]
    return cells
