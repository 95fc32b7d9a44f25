"""A small reader for plain ECSV tables: column names, datatypes and text cells.

astropy's general table reader costs about 0.3 s a process (its import and its
YAML header parser) — most of ``gcplan night`` for the bundled catalog, whose
file is fixed and simple: scalar string and number columns, space-delimited,
CSV quoting.  This reader handles exactly that form of ECSV 1.0 (the header's
``datatype`` list and optional ``delimiter``; the column-name line; quoted
cells, ``""`` for a missing value) and says :class:`NotPlainEcsv` for anything
else (multidimensional or object columns, subtypes), so the caller can fall
back on astropy.  Cells come back as text; the caller converts them.
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

#: Datatypes this reader passes on (ECSV 1.0's scalar types).
PLAIN_DATATYPES = frozenset(
    ["string", "bool", "float16", "float32", "float64", "float128"]
    + [f"{s}int{b}" for s in ("", "u") for b in (8, 16, 32, 64)]
)

# One column of the header's datatype list, as astropy writes it:
# "# - {name: ra_deg, unit: deg, datatype: float64, description: ...}"
_COLUMN = re.compile(r"^- \{name: (?P<name>'[^']*'|[^,}]+)(?P<rest>.*)\}\s*$")
_DATATYPE = re.compile(r"[{ ,]datatype: (?P<datatype>[\w]+)")
_UNIT = re.compile(r"[{ ,]unit: (?P<unit>'[^']*'|[^,}]+)")
_DELIMITER = re.compile(r"^delimiter: (?P<quote>['\"]?)(?P<delimiter>.)(?P=quote)\s*$")


class NotPlainEcsv(ValueError):
    """The file is ECSV in a form this reader does not handle (or not ECSV at all)."""


def read_plain_ecsv(path: str | Path) -> tuple[dict[str, str], dict[str, list[str]]]:
    """The datatypes ({column: datatype}) and the cells ({column: [text per row]}).

    A missing value (an empty quoted cell) is "".  Raises :class:`NotPlainEcsv`
    when the header is not plain ECSV 1.0 or a row has the wrong number of cells.
    """
    with open(path, encoding="utf-8", newline="") as f:
        lines = f.read().splitlines()
    datatypes, _, cells = parse_plain_ecsv(lines)
    return datatypes, cells


def parse_plain_ecsv(lines: list[str]) -> tuple[dict[str, str], dict[str, str | None], dict[str, list[str]]]:
    """:func:`read_plain_ecsv` on the file's lines, with each column's unit as written
    in the header (None without one) between the datatypes and the cells."""
    if not lines or not lines[0].startswith("# %ECSV"):
        raise NotPlainEcsv("no '# %ECSV' first line")
    datatypes: dict[str, str] = {}
    units: dict[str, str | None] = {}
    delimiter = " "
    section = ""  # the header's top-level key the line belongs to
    body = 0
    for i, line in enumerate(lines):
        if not line.startswith("#"):
            body = i
            break
        text = line[1:].strip()
        if line[1:2] == " " and line[2:3] not in (" ", "-", ""):
            section = text.split(":", 1)[0]  # a top-level key: "datatype:", "meta: !!omap", ...
        if section == "datatype" and text.startswith("- "):
            match = _COLUMN.match(text)
            kind = _DATATYPE.search(text)
            if match is None or kind is None:
                raise NotPlainEcsv(f"header line {i + 1}: unread column entry")
            if "subtype:" in match["rest"] or kind["datatype"] not in PLAIN_DATATYPES:
                raise NotPlainEcsv(f"header line {i + 1}: column type not plain")
            name = match["name"].strip("'").strip()
            datatypes[name] = kind["datatype"]
            unit = _UNIT.search(match["rest"].split(" description:", 1)[0])
            units[name] = unit["unit"].strip("'").strip() if unit else None
        elif section == "delimiter":
            found = _DELIMITER.match(text)
            if found is None:
                raise NotPlainEcsv(f"header line {i + 1}: unread delimiter")
            delimiter = found["delimiter"]
    else:
        raise NotPlainEcsv("no column-name line")
    if not datatypes:
        raise NotPlainEcsv("no datatype list in the header")
    rows = csv.reader(lines[body:], delimiter=delimiter, quotechar='"', doublequote=True, strict=True)
    try:
        names = next(rows)
        if names != list(datatypes):
            raise NotPlainEcsv("the column-name line does not match the header's columns")
        cells: dict[str, list[str]] = {name: [] for name in names}
        columns = list(cells.values())
        for values in rows:
            if not values:
                continue
            if len(values) != len(names):
                raise NotPlainEcsv(f"row {len(columns[0]) + 1}: {len(values)} cells for {len(names)} columns")
            for column, value in zip(columns, values):
                column.append(value)
    except csv.Error as exc:
        raise NotPlainEcsv(str(exc)) from None
    return datatypes, units, cells
