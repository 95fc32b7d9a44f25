"""A target list's file read into rows of cells, and the typed reads of one row.

Per format (CSV, TOML, ECSV) a reader turns the file's text into rows of raw
cells keyed by Target field; :class:`Row` reads a cell as a number or an angle
and names file, row, column and value when it cannot.  The columns and what
they accept are described in :mod:`planner.inputs.targets`, which builds the
targets from these rows.
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import tomllib
import warnings
from typing import Any, Iterable, Mapping

from planner.errors import TargetListError

# Target field -> the accepted column spellings (lower case).
_SPELLINGS: dict[str, tuple[str, ...]] = {
    "name": ("name",),
    "ra_deg": ("ra", "ra_deg"),
    "dec_deg": ("dec", "dec_deg"),
    "distance_modulus_mag": ("distance_modulus", "distance_modulus_mag"),
    "distance_kpc": ("distance_kpc",),
    "ebv_mag": ("ebv", "ebv_mag", "e(b-v)"),
    "feh_dex": ("feh", "feh_dex", "[fe/h]"),
    "half_light_radius_arcmin": ("half_light_radius_arcmin", "r_h_arcmin"),
    "v_mag": ("v_mag",),
    "v_hb_mag": ("v_hb", "v_hb_mag"),
    "r_v": ("r_v", "rv"),
    "priority": ("priority",),
}
_COLUMNS = {spelling: field for field, spellings in _SPELLINGS.items() for spelling in spellings}
_IGNORED_COLUMNS = ("notes", "note", "comment", "comments")

# Plausible ranges (inclusive) of the optional numbers; they catch unit slips
# (parsecs for kpc, apparent for true modulus beyond 35) rather than physics.
_RANGES = {"distance_modulus_mag": (0.0, 35.0), "ebv_mag": (0.0, 10.0), "feh_dex": (-5.0, 1.0), "v_mag": (-5.0, 30.0),
           "v_hb_mag": (-5.0, 30.0),
           # R_V: 2..6 spans the Milky Way's sight lines (Cardelli et al. 1989 fit 2.6-5.6)
           "r_v": (2.0, 6.0)}
_POSITIVE = ("distance_kpc", "half_light_radius_arcmin", "priority")

_RA_HELP = "degrees 0..360 or sexagesimal hours such as 00:24:05.67 or 00h24m05.67s"
_DEC_HELP = "degrees -90..90 or sexagesimal degrees such as -72:04:52.6 or -72d04m52.6s"


# --- Values ------------------------------------------------------


def show_cell(value: Any) -> str:
    """A cell value as the user wrote it, shortened; text in quotes unless it is a number."""
    if isinstance(value, str):
        try:
            float(value)
            text = value.strip()
        except ValueError:
            text = repr(value)
    else:
        try:
            text = str(value)
        except ValueError:  # an integer with more digits than Python will print
            text = "a number too long to show"
    return text if len(text) <= 60 else text[:57] + "..."


class Row:
    """Typed reads of one data row; every failure names file, row, column and value."""

    def __init__(self, cells: Mapping[str, Any], columns: Mapping[str, str], number: int, source: str):
        self.cells = cells  # field -> raw value (None when empty)
        self.columns = columns  # field -> the column name as written in the file
        self.number = number
        self.source = source

    def fail(self, field: str, message: str) -> TargetListError:
        column = self.columns.get(field, field.removesuffix("_deg") if field in ("ra_deg", "dec_deg") else field)
        return TargetListError(f"row {self.number}, column {column}: {message}", source=self.source)

    def name(self) -> str:
        value = self.cells.get("name")
        if value is None:
            raise self.fail("name", "missing (every target needs a name)")
        if not isinstance(value, str):
            raise self.fail("name", f"{show_cell(value)} must be text")
        return value.strip()

    def number_or_none(self, field: str) -> float | None:
        value = self.cells.get(field)
        if value is None:
            return None
        number = _as_float(value)
        if number is None:
            raise self.fail(field, f"{show_cell(value)} is not a number")
        if not math.isfinite(number):
            raise self.fail(field, f"{show_cell(value)} must be a finite number")
        if field in _RANGES:
            lo, hi = _RANGES[field]
            if not lo <= number <= hi:
                raise self.fail(field, f"{show_cell(value)} is outside {lo:g}..{hi:g}")
        if field in _POSITIVE and not number > 0:
            raise self.fail(field, f"{show_cell(value)} must be > 0")
        return number

    def angle_or_none(self, field: str) -> float | None:
        """ra_deg or dec_deg in degrees, validated; None when the cell is empty."""
        value = self.cells.get(field)
        if value is None:
            return None
        is_ra = field == "ra_deg"
        help_text = _RA_HELP if is_ra else _DEC_HELP
        degrees = _as_float(value)
        if degrees is None and isinstance(value, str):
            degrees = _sexagesimal_deg(value, hours=is_ra)
        if degrees is None or not math.isfinite(degrees):
            raise self.fail(field, f"{show_cell(value)} is not an angle ({help_text})")
        if is_ra and not 0.0 <= degrees < 360.0:
            raise self.fail(field, f"{show_cell(value)} is outside 0..360 ({help_text})")
        if not is_ra and not -90.0 <= degrees <= 90.0:
            raise self.fail(field, f"{show_cell(value)} is outside -90..90")
        return degrees


def _as_float(value: Any) -> float | None:
    """A number from a cell (int, float or numeric text), else None; booleans are not numbers."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        return None
    try:
        return float(value)
    except OverflowError:  # a TOML integer beyond float range
        return math.inf
    except ValueError:
        return None


def _sexagesimal_deg(text: str, hours: bool) -> float | None:
    """Degrees from a sexagesimal string, or None if astropy cannot read it.

    Colon- or space-separated values are hours for RA and degrees for Dec;
    explicit markers ("h", "d", "°") override that.  Out-of-range minutes or
    seconds (and astropy's warnings about them, e.g. "24:00:00") count as errors.
    """
    from astropy import units as u
    from astropy.coordinates import Angle

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            return float(Angle(text.strip(), unit=u.hourangle if hours else u.deg).deg)
    except Exception:  # astropy's angle parser raises many types (and warnings, made errors)
        return None


# --- Files -> rows of raw cells ----------------------------------


def _map_columns(names: Iterable[str], source: str, exclusive: bool = True) -> dict[str, str]:
    """Column name as written -> Target field ('' for ignored columns).

    Unknown names are errors; with ``exclusive``, so are two spellings of one
    field (TOML checks that per table instead: tables may spell keys differently).
    """
    mapping: dict[str, str] = {}
    given: dict[str, str] = {}
    unknown = []
    for written in names:
        key = written.strip().lower()
        if key in _IGNORED_COLUMNS:
            mapping[written] = ""
            continue
        field = _COLUMNS.get(key)
        if field is None:
            unknown.append(written)
            continue
        if field in given and exclusive:
            raise TargetListError(
                f"columns {given[field]!r} and {written!r} both give {field}; keep one", source=source
            )
        given.setdefault(field, written)
        mapping[written] = field
    if unknown:
        hints = []
        for written in unknown:
            close = difflib.get_close_matches(written.strip().lower(), list(_COLUMNS), n=1)
            hints.append(f"{written!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
        raise TargetListError(
            f"unknown column(s) {', '.join(hints)}; known: {', '.join(sorted(set(_COLUMNS)))}"
            f" (and {', '.join(_IGNORED_COLUMNS)}, ignored)",
            source=source,
        )
    if "name" not in given:
        raise TargetListError("no 'name' column (the minimal columns are name, ra, dec)", source=source)
    return mapping


# A reader turns file text into rows: (field -> raw cell value, field -> column name as written).
_Rows = list[tuple[dict[str, Any], dict[str, str]]]


def _csv_rows(text: str, source: str) -> _Rows:
    lines = [line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise TargetListError("empty target list (no header row and no targets)", source=source)
    try:
        records = list(csv.reader(io.StringIO("\n".join(lines))))
    except csv.Error as exc:
        raise TargetListError(f"cannot read as CSV: {exc}", source=source) from None
    header = [h.strip() for h in records[0]]
    # Spreadsheets often leave trailing empty header cells: drop unnamed columns that are empty.
    named = [i for i, h in enumerate(header) if h]
    for number, record in enumerate(records[1:], start=1):
        if len(record) > len(header) and any(cell.strip() for cell in record[len(header):]):
            raise TargetListError(
                f"row {number}: {len(record)} values but the header has {len(header)} columns", source=source
            )
        for i, cell in enumerate(record[: len(header)]):
            if not header[i] and cell.strip():
                raise TargetListError(f"row {number}: a value ({show_cell(cell)}) in column {i + 1}, which has no name",
                                      source=source)
    if len({header[i].lower() for i in named}) != len(named):
        raise TargetListError(f"a column name repeats in the header {header}", source=source)
    mapping = _map_columns([header[i] for i in named], source)
    columns = {field: col for col, field in mapping.items() if field}
    rows = []
    for record in records[1:]:
        cells: dict[str, Any] = {}
        for i in named:
            field = mapping[header[i]]
            cell = record[i].strip() if i < len(record) else ""
            if field:
                cells[field] = cell or None
        rows.append((cells, columns))
    return rows


def _toml_rows(text: str, source: str) -> _Rows:
    try:
        document = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, ValueError, RecursionError) as exc:
        # ValueError: an integer too long to convert; RecursionError: absurd nesting.
        raise TargetListError(f"not valid TOML: {exc}", source=source) from None
    if not document:
        raise TargetListError("empty target list (expected [[target]] tables)", source=source)
    extra = [k for k in document if k != "target"]
    if extra:
        raise TargetListError(
            f"unknown top-level key(s) {', '.join(map(repr, extra))}; a target list holds only [[target]] tables",
            source=source,
        )
    tables = document["target"]
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        raise TargetListError("'target' must be an array of tables, written [[target]]", source=source)
    written_names: dict[str, str] = {}
    for table in tables:
        for key in table:
            written_names.setdefault(key.strip().lower(), key)
    mapping = _map_columns(list(written_names.values()), source, exclusive=False)
    rows: _Rows = []
    for number, table in enumerate(tables, start=1):
        cells: dict[str, Any] = {}
        seen: dict[str, str] = {}
        for key, value in table.items():
            field = mapping[written_names[key.strip().lower()]]
            if not field:
                continue
            if field in seen:
                raise TargetListError(f"row {number}: keys {seen[field]!r} and {key!r} both give {field}",
                                      source=source)
            seen[field] = key
            if isinstance(value, (dict, list)) or not isinstance(value, (str, int, float)):
                raise TargetListError(f"row {number}, column {key}: {show_cell(value)} must be a number or text",
                                      source=source)
            cells[field] = None if isinstance(value, str) and not value.strip() else value
        rows.append((cells, seen))
    return rows


#: Plain ECSV datatypes read without astropy, and how a cell becomes the value astropy's
#: reader gives (``.item()`` of its numpy scalar): float32/16 and bool go through astropy.
PLAIN_CELL = {"string": str, "float64": float, **{f"{s}int{b}": int for s in ("", "u") for b in (8, 16, 32, 64)}}


def _plain_ecsv_rows(text: str, source: str) -> _Rows | None:
    """The rows of a plain ECSV file (see :mod:`planner.inputs.ecsv_columns`) as
    :func:`_astropy_ecsv_rows` gives them, without astropy (a third of a second a
    process); None for anything else, which then goes through astropy."""
    from planner.inputs.ecsv_columns import NotPlainEcsv, parse_plain_ecsv

    try:
        datatypes, units, cells = parse_plain_ecsv(text.splitlines())
    except NotPlainEcsv:
        return None
    if any(kind not in PLAIN_CELL for kind in datatypes.values()):
        return None
    mapping = _map_columns(list(datatypes), source)
    columns: dict[str, list[Any]] = {}
    for written, field in mapping.items():
        if not field:
            continue
        if field in ("ra_deg", "dec_deg") and units[written] not in (None, "deg"):
            return None  # a unit to convert: astropy.units does it
        convert = PLAIN_CELL[datatypes[written]]
        try:
            # astropy strips the cells and masks empty ones, whatever the type
            columns[field] = [convert(v.strip()) if v.strip() else None for v in cells[written]]
        except ValueError:
            return None  # astropy says what is wrong with the cell
    written = {field: col for col, field in mapping.items() if field}
    n = len(next(iter(cells.values()))) if cells else 0
    return [({field: values[i] for field, values in columns.items()}, written) for i in range(n)]


def _ecsv_rows(text: str, source: str) -> _Rows:
    plain = _plain_ecsv_rows(text, source)
    return plain if plain is not None else _astropy_ecsv_rows(text, source)


def _astropy_ecsv_rows(text: str, source: str) -> _Rows:
    import numpy as np
    from astropy import units as u
    from astropy.table import Table

    try:
        table = Table.read(text.splitlines(), format="ascii.ecsv")
    except Exception as exc:  # astropy raises many types for a malformed file
        raise TargetListError(f"cannot read as ECSV: {exc}", source=source) from None
    mapping = _map_columns(table.colnames, source)
    columns: dict[str, list[Any]] = {}
    for written, field in mapping.items():
        if not field:
            continue
        col = table[written]
        if col.ndim != 1:
            raise TargetListError(f"column {written}: must hold one value per row", source=source)
        mask = np.ma.getmaskarray(col)
        data = np.ma.getdata(col)
        values: list[Any] = [None if m else (v.item() if hasattr(v, "item") else v) for v, m in zip(data, mask)]
        if field in ("ra_deg", "dec_deg") and col.unit is not None:
            try:
                factor = (1 * col.unit).to_value(u.deg)
            except u.UnitConversionError:
                raise TargetListError(f"column {written}: unit {col.unit} is not an angle", source=source) from None
            values = [None if v is None else (v * factor if _as_float(v) is not None else v) for v in values]
        columns[field] = values
    written = {field: col for col, field in mapping.items() if field}
    return [({field: values[i] for field, values in columns.items()}, written) for i in range(len(table))]


READERS = {".csv": _csv_rows, ".toml": _toml_rows, ".ecsv": _ecsv_rows}
