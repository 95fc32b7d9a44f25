"""Reading variables tables and observation-time files (shell code: file I/O and checks).

Variables table (ECSV, or CSV with a header line; ``#`` lines are comments):

* required: ``id``, ``period_d`` (> 0), an epoch of maximum light as a full Julian date
  (≈ 2,4xx,xxx) in one of two time systems, chosen per file by its column: ``epoch_hjd``
  (heliocentric, UTC scale) or ``epoch_bjd_tdb`` (barycentric, TDB scale; Eastman et al.
  2010's recommended standard); and a position: ``ra_deg`` and
  ``dec_deg`` (ICRS, degrees) or ``cluster`` (a name in the bundled catalog, whose centre
  is then used);
* optional: ``type`` (RRab, RRc, RRd), ``amplitude_mag`` (V, peak-to-peak), ``mean_mag`` (V).

Times file: a ``time_utc`` column (ISO 8601, e.g. ``2027-05-12T23:41:07``, a trailing
``Z`` allowed) or a ``jd_utc`` column (Julian date, UTC).

Every problem raises :class:`VariablesError` naming the file, the row (and line), the
column and the bad value, and what would be valid.  Column names are matched without
regard to case or surrounding spaces.
"""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path
from typing import Any

from planner.errors import InputError
from planner.model.variable import VARIABLE_TYPES, Variable

REQUIRED = ("id", "period_d")
EPOCH_COLUMNS = {"epoch_hjd": ("HJD_UTC", "HJD"), "epoch_bjd_tdb": ("BJD_TDB", "BJD(TDB)")}
OPTIONAL = ("ra_deg", "dec_deg", "cluster", "type", "amplitude_mag", "mean_mag")
# Full Julian dates from 1858 (JD 2,400,000) to 2406 (2,600,000): anything smaller is
# almost surely an MJD (JD − 2,400,000.5) or a reduced date (JD − 2,400,000).
JD_RANGE = (2_400_000.0, 2_600_000.0)
_ISO_SPACE = re.compile(r"^(\d{4}-\d{2}-\d{2})[ ]+(\d)")


class VariablesError(InputError):
    """A variables table or a times file that cannot be used."""


class VariablesOptionError(InputError):
    """A command-line value of ``gcplan phases`` or ``gcplan recover`` that is out of range."""


# ---------------------------------------------------------------------------------
# Generic table reading


class _Table:
    """Rows of a small table as {column: raw value}, with the file line of each row."""

    def __init__(self, path: Path, columns: list[str], rows: list[dict[str, Any]], lines: list[int | None]):
        self.path = path
        self.columns = columns
        self.rows = rows
        self.lines = lines

    def where(self, i: int, column: str | None = None) -> str:
        line = self.lines[i] if i < len(self.lines) else None
        place = f"row {i + 1}" + (f" (line {line})" if line else "")
        return place + (f", column {column!r}" if column else "")


def _data_lines(text: str) -> list[int]:
    """1-based line numbers of the data rows: non-blank, non-comment lines after the header."""
    numbers = [i + 1 for i, line in enumerate(text.splitlines()) if line.strip() and not line.lstrip().startswith("#")]
    return numbers[1:]


def _read_table(path: str | Path, what: str) -> _Table:
    p = Path(path)
    src = str(path)
    from planner.inputs.files import TABLE_LIMIT_BYTES, read_input

    raw = read_input(p, src, VariablesError, what, TABLE_LIMIT_BYTES)
    try:
        text = raw.decode("utf-8").replace("\r\n", "\n").replace("\r", "\n")  # as read_text gave
    except UnicodeDecodeError as exc:
        raise VariablesError(f"cannot read the {what} file ({exc})", src) from None
    lines = _data_lines(text)
    if text.lstrip().startswith("# %ECSV"):
        plain = _plain_ecsv_rows(text)
        if plain is not None:
            columns, rows = plain
            return _Table(p, columns, rows, lines if len(lines) == len(rows) else [None] * len(rows))
        from astropy.table import Table

        try:
            table = Table.read(text, format="ascii.ecsv")
        except Exception as exc:  # astropy raises many kinds for malformed files
            raise VariablesError(f"not a readable ECSV table ({type(exc).__name__}: {exc})", src) from None
        columns = [str(c) for c in table.colnames]
        rows = [{c: _ecsv_cell(table[c], i) for c in columns} for i in range(len(table))]
        return _Table(p, columns, rows, lines if len(lines) == len(rows) else [None] * len(rows))
    content = [line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")]
    try:
        parsed = list(csv.reader(content, skipinitialspace=True))
    except csv.Error as exc:
        raise VariablesError(f"not a readable CSV table ({exc})", src) from None
    if not parsed:
        raise VariablesError(f"the {what} file is empty: it needs a header line and data rows", src)
    columns = [c.strip() for c in parsed[0]]
    rows = []
    for i, values in enumerate(parsed[1:]):
        if len(values) != len(columns):
            raise VariablesError(
                f"row {i + 1} (line {lines[i]}) has {len(values)} values for {len(columns)} columns "
                f"({', '.join(columns)})",
                src,
            )
        rows.append({c: (v.strip() or None) for c, v in zip(columns, values)})
    return _Table(p, columns, rows, lines)


def _plain_ecsv_rows(text: str) -> tuple[list[str], list[dict[str, Any]]] | None:
    """The columns and rows of a plain ECSV file (:mod:`planner.inputs.ecsv_columns`) as
    astropy's reader and :func:`_ecsv_cell` give them, without astropy (a third of a second
    a process); None for any other ECSV, which goes through astropy."""
    from planner.inputs.ecsv_columns import NotPlainEcsv, parse_plain_ecsv
    from planner.inputs.target_rows import PLAIN_CELL

    try:
        datatypes, _, cells = parse_plain_ecsv(text.splitlines())
    except NotPlainEcsv:
        return None
    if any(kind not in PLAIN_CELL for kind in datatypes.values()):
        return None
    columns = list(datatypes)
    try:
        # astropy strips the cells and masks empty ones, whatever the type
        values = {c: [PLAIN_CELL[datatypes[c]](v.strip()) if v.strip() else None for v in cells[c]] for c in columns}
    except ValueError:
        return None  # astropy says what is wrong with the cell
    n = len(values[columns[0]]) if columns else 0
    return columns, [{c: values[c][i] for c in columns} for i in range(n)]


def _ecsv_cell(column, i: int) -> Any:
    import numpy as np

    value = column[i]
    if value is np.ma.masked or (np.ma.isMaskedArray(column) and bool(np.ma.getmaskarray(column)[i])):
        return None
    if isinstance(value, (bytes, np.bytes_)):
        value = value.decode("utf-8", "replace")
    if isinstance(value, (str, np.str_)):
        return str(value).strip() or None
    if isinstance(value, np.generic):
        return value.item()
    return value


def _column_map(table: _Table) -> dict[str, str]:
    """Lower-case name → the column's spelling in the file."""
    return {c.strip().lower(): c for c in table.columns}


def _number(table: _Table, i: int, column: str, raw: Any, what: str) -> float:
    try:
        value = float(raw)
    except (TypeError, ValueError):
        raise VariablesError(f"{table.where(i, column)}: {raw!r} is not a number; {what}", str(table.path)) from None
    if not math.isfinite(value):
        raise VariablesError(f"{table.where(i, column)}: {raw!r} is not finite; {what}", str(table.path))
    return value


def _julian_date(table: _Table, i: int, column: str, raw: Any, system: str) -> float:
    value = _number(table, i, column, raw, f"give a full Julian date ({system}), e.g. 2460812.4531")
    if value < JD_RANGE[0]:
        raise VariablesError(
            f"{table.where(i, column)}: {raw!r} looks like a modified or reduced Julian date, not a full "
            f"{system} (about 2,4xx,xxx); add 2400000.5 to an MJD or 2400000 to a reduced date",
            str(table.path),
        )
    if value > JD_RANGE[1]:
        raise VariablesError(
            f"{table.where(i, column)}: {raw!r} is not a plausible {system} "
            f"(expected {JD_RANGE[0]:,.0f} to {JD_RANGE[1]:,.0f})",
            str(table.path),
        )
    return value


# ---------------------------------------------------------------------------------
# Variables


def read_variables(path: str | Path, catalog=None) -> tuple[Variable, ...]:
    """The variables of a table file, checked (see the module docstring).

    ``catalog`` (a :class:`planner.catalog.Catalog`) resolves ``cluster`` names for rows
    without ``ra_deg``/``dec_deg``; the bundled catalog is loaded when needed and not given.
    """
    table = _read_table(path, "variables")
    src = str(table.path)
    names = _column_map(table)
    missing = [c for c in REQUIRED if c not in names]
    epochs = [c for c in EPOCH_COLUMNS if c in names]
    if len(epochs) > 1:
        raise VariablesError("both epoch_hjd and epoch_bjd_tdb columns: give the epochs in one time system", src)
    if not epochs:
        missing.append("epoch_hjd (or epoch_bjd_tdb)")
    has_position = "ra_deg" in names and "dec_deg" in names
    if not has_position and "cluster" not in names:
        missing += [c for c in ("ra_deg", "dec_deg") if c not in names] + ["(or cluster)"]
    if missing:
        raise VariablesError(
            f"missing column(s) {', '.join(missing)}; found {', '.join(table.columns) or 'none'}. "
            "A variables table needs id, period_d, epoch_hjd (or epoch_bjd_tdb) and either ra_deg, dec_deg "
            "or cluster",
            src,
        )
    if not table.rows:
        raise VariablesError("the variables table has no rows", src)

    def cell(row, name):
        return row.get(names[name]) if name in names else None

    loaded = [catalog]

    def get_catalog():  # the bundled catalog, loaded at most once and only if needed
        if loaded[0] is None:
            from planner.inputs.catalog import load_catalog

            loaded[0] = load_catalog()
        return loaded[0]

    out: list[Variable] = []
    seen: dict[str, int] = {}
    for i, row in enumerate(table.rows):
        star = cell(row, "id")
        if star is None:
            raise VariablesError(f"{table.where(i, names['id'])}: empty id; every star needs a name", src)
        star = str(star)
        if star in seen:
            raise VariablesError(f"{table.where(i, names['id'])}: id {star!r} repeats row {seen[star] + 1}", src)
        seen[star] = i
        period = _number(table, i, names["period_d"], cell(row, "period_d"), "give the period in days")
        if period <= 0:
            raise VariablesError(
                f"{table.where(i, names['period_d'])}: period {cell(row, 'period_d')!r} must be positive "
                "(days; RR Lyrae have 0.2–1.0 d)",
                src,
            )
        system, label = EPOCH_COLUMNS[epochs[0]]
        epoch = _julian_date(table, i, names[epochs[0]], cell(row, epochs[0]), label)
        ra, dec, cluster = _position(table, i, row, names, get_catalog)
        out.append(
            Variable(
                id=star,
                period_d=period,
                epoch_hjd=epoch,
                ra_deg=ra,
                dec_deg=dec,
                type=_star_type(table, i, names, cell(row, "type")),
                cluster=cluster,
                amplitude_mag=_optional_magnitude(table, i, names, row, "amplitude_mag", minimum=0.0),
                mean_mag=_optional_magnitude(table, i, names, row, "mean_mag"),
                time_system=system,
            )
        )
    return tuple(out)


def _position(table: _Table, i: int, row, names, get_catalog):
    """(ra_deg, dec_deg, cluster) of a row, from its own columns or the catalog."""
    src = str(table.path)
    cluster = row.get(names["cluster"]) if "cluster" in names else None
    cluster = None if cluster is None else str(cluster)
    ra_raw = row.get(names["ra_deg"]) if "ra_deg" in names else None
    dec_raw = row.get(names["dec_deg"]) if "dec_deg" in names else None
    if ra_raw is not None and dec_raw is not None:
        ra = _number(table, i, names["ra_deg"], ra_raw, "give the right ascension in degrees, 0 to 360")
        dec = _number(table, i, names["dec_deg"], dec_raw, "give the declination in degrees, -90 to +90")
        if not 0.0 <= ra < 360.0:
            raise VariablesError(f"{table.where(i, names['ra_deg'])}: {ra_raw!r} is outside 0 ≤ ra_deg < 360", src)
        if not -90.0 <= dec <= 90.0:
            raise VariablesError(f"{table.where(i, names['dec_deg'])}: {dec_raw!r} is outside -90 ≤ dec_deg ≤ 90", src)
        return ra, dec, cluster
    if ra_raw is not None or dec_raw is not None:
        gap = "dec_deg" if ra_raw is not None else "ra_deg"
        raise VariablesError(
            f"{table.where(i, names.get(gap, gap))}: empty; give both ra_deg and dec_deg, or neither "
            "(and a cluster)",
            src,
        )
    if cluster is None:
        raise VariablesError(
            f"{table.where(i)}: no position; give ra_deg and dec_deg or a cluster from the catalog", src
        )
    catalog = get_catalog()
    entry = catalog.lookup(cluster)
    if entry is None:
        hints = catalog.suggestions(cluster) if hasattr(catalog, "suggestions") else []
        raise VariablesError(
            f"{table.where(i, names['cluster'])}: cluster {cluster!r} is not in the catalog"
            + (f"; did you mean {' or '.join(hints)}?" if hints else "")
            + " (or give ra_deg and dec_deg)",
            src,
        )
    return float(entry.ra_deg), float(entry.dec_deg), cluster


def _star_type(table: _Table, i: int, names, raw) -> str | None:
    if raw is None:
        return None
    text = str(raw).strip()
    for valid in VARIABLE_TYPES:
        if text.lower() == valid.lower():
            return valid
    raise VariablesError(
        f"{table.where(i, names['type'])}: {raw!r} is not a known type; use {', '.join(VARIABLE_TYPES)} or leave it empty",
        str(table.path),
    )


def _optional_magnitude(table: _Table, i: int, names, row, column: str, minimum: float | None = None):
    if column not in names or row.get(names[column]) is None:
        return None
    raw = row.get(names[column])
    value = _number(table, i, names[column], raw, "give a magnitude or leave it empty")
    if minimum is not None and value < minimum:
        raise VariablesError(f"{table.where(i, names[column])}: {raw!r} must be at least {minimum:g}", str(table.path))
    return value


# ---------------------------------------------------------------------------------
# Times


def read_times(path: str | Path):
    """Observation times of a file as an astropy ``Time`` (UTC), in file order."""
    import numpy as np
    from astropy.time import Time

    table = _read_table(path, "times")
    src = str(table.path)
    names = _column_map(table)
    if "time_utc" not in names and "jd_utc" not in names:
        raise VariablesError(
            f"no time_utc or jd_utc column (found {', '.join(table.columns) or 'none'}); give ISO 8601 UTC "
            "times in time_utc (e.g. 2027-05-12T23:41:07) or Julian dates in jd_utc",
            src,
        )
    if "time_utc" in names and "jd_utc" in names:
        raise VariablesError("has both a time_utc and a jd_utc column; keep one: the two could disagree", src)
    if not table.rows:
        raise VariablesError("the times file has no rows", src)
    if "jd_utc" in names:
        column = names["jd_utc"]
        jd = [_julian_date(table, i, column, row.get(column), "JD (UTC)") for i, row in enumerate(table.rows)]
        return Time(jd, format="jd", scale="utc")
    column = names["time_utc"]
    values = []
    for i, row in enumerate(table.rows):
        raw = row.get(column)
        if isinstance(raw, Time):
            values.append(raw.utc.isot)
            continue
        if raw is None:
            raise VariablesError(f"{table.where(i, column)}: empty; give an ISO 8601 UTC time", src)
        text = _ISO_SPACE.sub(r"\1T\2", str(raw).strip())
        values.append(text[:-1] if text.endswith(("Z", "z")) else text)
    try:
        times = Time(values, format="isot", scale="utc")
    except ValueError:
        times = None
    if times is not None:
        outside = np.flatnonzero((times.jd1 + times.jd2 < JD_RANGE[0]) | (times.jd1 + times.jd2 > JD_RANGE[1]))
        if outside.size:  # the same years a jd_utc column may hold
            i = int(outside[0])
            raise VariablesError(
                f"{table.where(i, column)}: {table.rows[i].get(column)!r} is not a plausible time "
                f"(expected {Time(JD_RANGE[0], format='jd').utc.isot[:10]} to "
                f"{Time(JD_RANGE[1], format='jd').utc.isot[:10]}, as Julian dates {JD_RANGE[0]:,.0f} "
                f"to {JD_RANGE[1]:,.0f})", src)
        return times
    for i, text in enumerate(values):  # find the first bad one (error path only)
        try:
            Time(text, format="isot", scale="utc")
        except ValueError:
            raise VariablesError(
                f"{table.where(i, column)}: {table.rows[i].get(column)!r} is not an ISO 8601 time; "
                "use YYYY-MM-DDThh:mm:ss[.sss] in UTC (a trailing Z is fine)",
                src,
            ) from None
    raise VariablesError(f"column {column!r}: the times could not be read together", src)  # pragma: no cover
