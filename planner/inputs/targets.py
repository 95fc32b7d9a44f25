"""Target lists: which clusters to plan for, read from a file or named on the command line.

A target list is an ECSV, CSV or TOML file (chosen by its suffix), one target
per row.  The first problem found raises :class:`planner.errors.TargetListError`
naming the file, the 1-based data row, the column and the bad value:
``targets/x.csv: row 3, column dec: -95 is outside -90..90``.

Columns (names case-insensitive; alternatives separated by "/" are one column,
and giving two of them is an error):

* ``name`` (required, text)
* ``ra`` / ``ra_deg``: degrees 0 <= ra < 360, or sexagesimal *hours* "00:24:05.67",
  "00 24 05.67", "00h24m05.67s" (degrees if marked: "6d01m25s")
* ``dec`` / ``dec_deg``: degrees -90..90, or sexagesimal degrees "-72:04:52.6", "-72d04m52.6s"
* ``distance_modulus`` / ``distance_modulus_mag``: true modulus (m-M)_0, 0..35;
  ``distance_kpc`` > 0.  Either gives the other; both must agree within 0.1 mag.
* ``ebv`` / ``ebv_mag`` / ``E(B-V)``: 0..10;  ``feh`` / ``feh_dex`` / ``[Fe/H]``: -5..1
* ``half_light_radius_arcmin`` / ``r_h_arcmin`` > 0;  ``v_mag``: integrated V, -5..30
* ``priority`` > 0, default 1 (larger is more important)
* ``notes`` / ``note`` / ``comment`` / ``comments``: free text, ignored

Any other column is an error, with the closest known name suggested: a typo such
as ``dec_dge`` must not silently drop the declination.  An empty cell is a
missing value.  If ``name`` is a cluster of the bundled catalog (spacing, case
and aliases such as "M 13" or "47 Tuc" understood, see :mod:`planner.inputs.catalog`),
every missing value, even ra and dec, comes from the catalog and
``catalog_name`` is set; values in the file win.  Two rows for the same target
are an error.

Formats: CSV with a header row (blank lines and lines starting with ``#``
skipped); TOML as an array of tables ``[[target]]``, keys as columns, nothing
else at the top level; ECSV read with astropy (an ``ra``/``dec`` column with an
angle unit such as ``hourangle`` is converted).
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import tomllib
import warnings
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

from planner.errors import TargetListError
from planner.inputs.catalog import Catalog, ClusterEntry
from planner.model.names import normalize_name
from planner.model.target import Target

SUFFIXES = (".ecsv", ".csv", ".toml")

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
    "priority": ("priority",),
}
_COLUMNS = {spelling: field for field, spellings in _SPELLINGS.items() for spelling in spellings}
_IGNORED_COLUMNS = ("notes", "note", "comment", "comments")

# Plausible ranges (inclusive) of the optional numbers; they catch unit slips
# (parsecs for kpc, apparent for true modulus beyond 35) rather than physics.
_RANGES = {"distance_modulus_mag": (0.0, 35.0), "ebv_mag": (0.0, 10.0), "feh_dex": (-5.0, 1.0), "v_mag": (-5.0, 30.0)}
_POSITIVE = ("distance_kpc", "half_light_radius_arcmin", "priority")
DISTANCE_AGREEMENT_MAG = 0.1  # both distances given: their moduli must agree this well

_RA_HELP = "degrees 0..360 or sexagesimal hours such as 00:24:05.67 or 00h24m05.67s"
_DEC_HELP = "degrees -90..90 or sexagesimal degrees such as -72:04:52.6 or -72d04m52.6s"


# --- Values ------------------------------------------------------


def _show(value: Any) -> str:
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


class _Row:
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
            raise self.fail("name", f"{_show(value)} must be text")
        return value.strip()

    def number_or_none(self, field: str) -> float | None:
        value = self.cells.get(field)
        if value is None:
            return None
        number = _as_float(value)
        if number is None:
            raise self.fail(field, f"{_show(value)} is not a number")
        if not math.isfinite(number):
            raise self.fail(field, f"{_show(value)} must be a finite number")
        if field in _RANGES:
            lo, hi = _RANGES[field]
            if not lo <= number <= hi:
                raise self.fail(field, f"{_show(value)} is outside {lo:g}..{hi:g}")
        if field in _POSITIVE and not number > 0:
            raise self.fail(field, f"{_show(value)} must be > 0")
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
            raise self.fail(field, f"{_show(value)} is not an angle ({help_text})")
        if is_ra and not 0.0 <= degrees < 360.0:
            raise self.fail(field, f"{_show(value)} is outside 0..360 ({help_text})")
        if not is_ra and not -90.0 <= degrees <= 90.0:
            raise self.fail(field, f"{_show(value)} is outside -90..90")
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
                raise TargetListError(f"row {number}: a value ({_show(cell)}) in column {i + 1}, which has no name",
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
                raise TargetListError(f"row {number}, column {key}: {_show(value)} must be a number or text",
                                      source=source)
            cells[field] = None if isinstance(value, str) and not value.strip() else value
        rows.append((cells, seen))
    return rows


def _ecsv_rows(text: str, source: str) -> _Rows:
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


_READERS = {".csv": _csv_rows, ".toml": _toml_rows, ".ecsv": _ecsv_rows}


# --- Rows -> targets ---------------------------------------------


def _distance_pair(row: _Row) -> tuple[float | None, float | None]:
    """(distance_modulus_mag, distance_kpc) from the row, each implying the other."""
    modulus = row.number_or_none("distance_modulus_mag")
    distance = row.number_or_none("distance_kpc")
    if modulus is not None and distance is not None:
        implied = 5.0 * math.log10(distance * 100.0)  # 5 log10(d / 10 pc), d in kpc
        if abs(implied - modulus) > DISTANCE_AGREEMENT_MAG:
            raise row.fail(
                "distance_modulus_mag",
                f"{_show(row.cells['distance_modulus_mag'])} disagrees with distance_kpc "
                f"{_show(row.cells['distance_kpc'])} (which implies {implied:.2f}); give one of them",
            )
    elif modulus is not None:
        distance = 10.0 ** (modulus / 5.0 - 2.0)
    elif distance is not None:
        modulus = 5.0 * math.log10(distance * 100.0)
    return modulus, distance


def _target_from_row(row: _Row, catalog: Catalog | None) -> Target:
    name = row.name()
    if not name:
        raise row.fail("name", "empty (every target needs a name)")
    entry = catalog.lookup(name) if catalog is not None else None
    ra, dec = row.angle_or_none("ra_deg"), row.angle_or_none("dec_deg")
    modulus, distance = _distance_pair(row)
    if entry is None:
        for field, value in (("ra_deg", ra), ("dec_deg", dec)):
            if value is None:
                where = "" if catalog is None else f"; {name!r} is not in the bundled catalog"
                raise row.fail(field, f"missing{where} (give ra and dec)")
    elif modulus is None:
        modulus, distance = entry.distance_modulus_mag, entry.distance_kpc

    def pick(field: str) -> float | None:
        value = row.number_or_none(field)
        return value if value is not None or entry is None else getattr(entry, field)

    priority = row.number_or_none("priority")
    return Target(
        name=name,
        ra_deg=ra if ra is not None else entry.ra_deg,
        dec_deg=dec if dec is not None else entry.dec_deg,
        distance_modulus_mag=modulus,
        distance_kpc=distance,
        ebv_mag=pick("ebv_mag"),
        feh_dex=pick("feh_dex"),
        half_light_radius_arcmin=pick("half_light_radius_arcmin"),
        v_mag=pick("v_mag"),
        priority=1.0 if priority is None else priority,
        catalog_name=entry.name if entry is not None else None,
    )


def read_target_list(path: str | Path, catalog: Catalog | None = None) -> list[Target]:
    """Read a target list (ECSV, CSV or TOML, by suffix).

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    catalog : Catalog, optional
        The cluster catalog used to recognise names and fill in missing values.

    Returns
    -------
    list of Target
        In file order.

    Raises
    ------
    planner.errors.TargetListError
        Missing, empty or unreadable file; wrong suffix; unknown column; a bad
        value (the message names row, column and value); two rows for one target.
    """
    source = str(path)
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise TargetListError(
            f"unsupported target list type {suffix or '(no suffix)'!r}; use {', '.join(SUFFIXES)}", source=source
        )
    if not path.is_file():
        what = "is a directory, not a file" if path.is_dir() else "file not found"
        raise TargetListError(what, source=source)
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise TargetListError(f"not UTF-8 text ({exc.reason} at byte {exc.start})", source=source) from None
    except OSError as exc:
        raise TargetListError(f"cannot read: {exc.strerror or exc}", source=source) from None
    if "\x00" in text:
        raise TargetListError("not a text file (it contains NUL bytes)", source=source)
    if not text.strip():
        raise TargetListError("empty file (expected a target list)", source=source)
    rows = _READERS[suffix](text, source)
    if not rows:
        raise TargetListError("no targets (the file has no data rows)", source=source)
    targets = []
    first_row: dict[str, int] = {}
    for number, (cells, columns) in enumerate(rows, start=1):
        target = _target_from_row(_Row(cells, columns, number, source), catalog)
        key = _identity(target)
        if key in first_row:
            raise TargetListError(
                f"row {number}: {target.name!r} is the same target as row {first_row[key]}; keep one row",
                source=source,
            )
        first_row[key] = number
        targets.append(target)
    return targets


def _identity(target: Target) -> str:
    """What makes two targets the same: the catalog cluster, else the normalised name."""
    return "catalog:" + target.catalog_name if target.catalog_name else "name:" + normalize_name(target.name)


_SHARED_FIELDS = ("ra_deg", "dec_deg", "distance_modulus_mag", "distance_kpc", "ebv_mag", "feh_dex",
                  "half_light_radius_arcmin", "v_mag")


def _target_from_entry(entry: ClusterEntry, shown_name: str | None = None) -> Target:
    values = {f: getattr(entry, f) for f in _SHARED_FIELDS}
    return Target(name=shown_name or entry.name, catalog_name=entry.name, **values)


def targets_from_names(names: Sequence[str], catalog: Catalog) -> list[Target]:
    """Targets for catalog names or aliases (as given with ``--target``).

    Each target is named with the catalog's spelling of the name given
    ("m13" becomes "M 13"); ``catalog_name`` is the primary name ("NGC 6205").

    Raises
    ------
    planner.errors.TargetListError
        For a name the catalog does not know, with close names suggested.
    """
    targets = []
    for name in names:
        entry = catalog.lookup(name)
        if entry is None:
            close = catalog.suggestions(name)
            hint = (
                f"did you mean: {', '.join(close)}?"
                if close
                else f"not among the {len(catalog.entries)} clusters of the bundled catalog; "
                "give its position in a target list instead"
            )
            raise TargetListError(f"unknown cluster {name!r} ({hint})", source="--target")
        key = normalize_name(name)
        shown = next((s for s in entry.names if normalize_name(s) == key), entry.name)
        targets.append(_target_from_entry(entry, shown))
    return targets


def catalog_targets(catalog: Catalog) -> list[Target]:
    """Every cluster of the catalog, in catalog order (``--targets all``)."""
    return [_target_from_entry(entry) for entry in catalog.entries]


def resolve_targets(targets_spec: str | None, names: Sequence[str], catalog: Catalog) -> list[Target]:
    """The targets asked for on the command line.

    Parameters
    ----------
    targets_spec : str or None
        ``--targets``: a target list path, or "all" (any case) for the whole catalog.
    names : sequence of str
        ``--target`` values, catalog names or aliases.
    catalog : Catalog
        The cluster catalog.

    Returns
    -------
    list of Target
        The list's targets, then the named ones; a target given twice is kept
        once, where it first appears.

    Raises
    ------
    planner.errors.TargetListError
        If nothing is asked for, or from :func:`read_target_list` /
        :func:`targets_from_names`.
    """
    targets: list[Target] = []
    if targets_spec is not None and targets_spec.strip():
        if targets_spec.strip().lower() == "all":
            targets.extend(catalog_targets(catalog))
        else:
            targets.extend(read_target_list(targets_spec, catalog))
    targets.extend(targets_from_names(names, catalog))
    if not targets:
        raise TargetListError("no targets: give --targets FILE, --targets all, or --target NAME (repeatable)")
    seen: set[str] = set()
    unique = []
    for target in targets:
        key = _identity(target)
        if key not in seen:
            seen.add(key)
            unique.append(target)
    return unique
