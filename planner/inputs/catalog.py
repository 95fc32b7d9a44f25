"""The bundled Milky Way globular cluster catalog and lookups by name.

The catalog (``targets/globular_clusters.ecsv``) lists the 157 clusters of
Harris 1996 (2010 edition) with Baumgardt & Vasiliev 2021 distances where
available; its ECSV header says where every column comes from.  This module
reads it into frozen dataclasses and answers "which cluster is this name?".

Names are compared after :func:`normalize_name`, which ignores case, spaces,
hyphens, underscores, dots and leading zeros, and reads a few long forms:
"Messier 13" = "M13" = "m 13"; "NGC0104" = "NGC 104"; "47Tuc" = "47 Tucanae";
"ω Cen" = "omega Centauri".
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Mapping

from planner.errors import CatalogError
from planner.inputs.resources import catalog_path
from planner.model.names import normalize_name

#: Columns the catalog file must have (units in the names, as in the dataclass).
REQUIRED_COLUMNS = (
    "name",
    "aliases",
    "ra_deg",
    "dec_deg",
    "distance_kpc",
    "distance_modulus_mag",
    "ebv_mag",
    "feh_dex",
    "half_light_radius_arcmin",
    "v_mag",
)
#: Columns read when present (a catalog without them still loads; the values are None):
#: observed HB level, apparent modulus, structure (King 1962) and integrated colours.
OPTIONAL_COLUMNS = (
    "v_hb_mag",
    "distance_modulus_v_mag",
    "central_sb_v_mag_arcsec2",
    "core_radius_arcmin",
    "king_concentration",
    "ub_integrated_mag",
    "bv_integrated_mag",
    "vr_integrated_mag",
    "vi_integrated_mag",
)


@dataclass(frozen=True)
class ClusterEntry:
    name: str  # primary identification as Harris writes it, e.g. "NGC 104", "Pal 5"
    aliases: tuple[str, ...]  # e.g. ("M 13",), ("47 Tuc",); () if none
    ra_deg: float  # ICRS
    dec_deg: float
    distance_kpc: float | None
    distance_modulus_mag: float | None  # true modulus, 5 log10(d / 10 pc)
    ebv_mag: float | None  # E(B-V)
    feh_dex: float | None  # [Fe/H]
    half_light_radius_arcmin: float | None
    v_mag: float | None  # integrated V_t
    v_hb_mag: float | None = None  # observed V of the horizontal branch (with extinction)
    distance_modulus_v_mag: float | None = None  # apparent (m-M)_V
    central_sb_v_mag_arcsec2: float | None = None  # observed central mu_V
    core_radius_arcmin: float | None = None  # King r_c
    king_concentration: float | None = None  # c = log10(r_t / r_c)
    ub_integrated_mag: float | None = None  # integrated colours, observed
    bv_integrated_mag: float | None = None
    vr_integrated_mag: float | None = None
    vi_integrated_mag: float | None = None

    @property
    def names(self) -> tuple[str, ...]:
        """The primary name followed by the aliases."""
        return (self.name, *self.aliases)


@dataclass(frozen=True)
class Catalog:
    """Cluster entries and a lookup from normalised names to them.

    ``index`` is built from ``entries`` when the catalog is made (by
    :func:`load_catalog` or directly); two entries answering to the same
    normalised name are an error.
    """

    entries: tuple[ClusterEntry, ...]
    index: Mapping[str, ClusterEntry] = field(
        default_factory=lambda: MappingProxyType({}), repr=False, compare=False
    )

    def __post_init__(self) -> None:
        if self.index or not self.entries:
            return
        index: dict[str, ClusterEntry] = {}
        for entry in self.entries:
            for spelling in entry.names:
                key = normalize_name(spelling)
                other = index.get(key)
                if other is not None and other is not entry:
                    raise CatalogError(
                        f"name {spelling!r} of {entry.name!r} is also a name of {other.name!r}; "
                        "every name and alias must be unique"
                    )
                index[key] = entry
        object.__setattr__(self, "index", MappingProxyType(index))

    def lookup(self, name: str) -> ClusterEntry | None:
        """The entry with this name or alias (spacing, case etc. ignored), or None."""
        return self.index.get(normalize_name(name))

    def key(self, name: str) -> str:
        """A comparison key that is the same for every name and alias of one cluster
        ("M 3", "M3", "NGC 5272"); names not in the catalog keep their normalised form."""
        entry = self.lookup(name)
        return normalize_name(entry.name if entry is not None else name)

    def suggestions(self, name: str, n: int = 3) -> list[str]:
        """Up to ``n`` catalog names or aliases that look like ``name``, closest first."""
        spellings: dict[str, str] = {}
        for entry in self.entries:
            for spelling in entry.names:
                spellings.setdefault(normalize_name(spelling), spelling)
        close = difflib.get_close_matches(normalize_name(name), list(spellings), n=n, cutoff=0.6)
        return [spellings[key] for key in close]


def _float_column(table: Any, column: str, source: str) -> list[float | None]:
    """A numeric column as floats, None where masked or NaN."""
    import numpy as np

    try:
        values = np.ma.filled(np.ma.asarray(table[column]).astype(float), np.nan)
    except (TypeError, ValueError):
        raise CatalogError(f"column {column}: values are not numbers", source=source) from None
    return [None if math.isnan(v) else float(v) for v in values.tolist()]


def _text_column(table: Any, column: str) -> list[str]:
    """A text column as stripped strings, "" where masked."""
    import numpy as np

    return [str(v).strip() for v in np.ma.filled(np.ma.asarray(table[column]).astype(str), "").tolist()]


def _float_cells(cells: list[str], column: str, source: str) -> list[float | None]:
    """Text cells as floats, None where empty or NaN (what :func:`_float_column` gives)."""
    out: list[float | None] = []
    for cell in cells:
        text = cell.strip()
        if not text:
            out.append(None)
            continue
        try:
            value = float(text)
        except ValueError:
            raise CatalogError(f"column {column}: values are not numbers", source=source) from None
        out.append(None if math.isnan(value) else value)
    return out


def _read_columns(path: Path, source: str, numeric: tuple[str, ...]) -> tuple[list[str], dict[str, list]]:
    """The file's column names, and the name/aliases columns as text and ``numeric`` ones
    (those present) as floats or None.

    The bundled catalog is plain ECSV, read by :mod:`planner.inputs.ecsv_columns`
    without astropy (a third of a second less per process); anything that reader
    does not handle goes through astropy's table reader, as before.
    """
    from planner.inputs.ecsv_columns import NotPlainEcsv, read_plain_ecsv

    try:
        _, cells = read_plain_ecsv(path)
    except NotPlainEcsv:
        cells = None
    except (OSError, UnicodeDecodeError) as exc:
        raise CatalogError(f"cannot read the cluster catalog as ECSV: {exc}", source=source) from None
    if cells is not None:
        columns: dict[str, list] = {c: [v.strip() for v in cells[c]] for c in ("name", "aliases") if c in cells}
        columns.update({c: _float_cells(cells[c], c, source) for c in numeric if c in cells})
        return list(cells), columns
    from astropy.table import Table

    try:
        table = Table.read(path, format="ascii.ecsv")
    except Exception as exc:  # astropy raises many types for a malformed file
        raise CatalogError(f"cannot read the cluster catalog as ECSV: {exc}", source=source) from None
    columns = {c: _text_column(table, c) for c in ("name", "aliases") if c in table.colnames}
    columns.update({c: _float_column(table, c, source) for c in numeric if c in table.colnames})
    return list(table.colnames), columns


def load_catalog(path: Path | None = None) -> Catalog:
    """Read the cluster catalog (ECSV) into a :class:`Catalog`.

    Parameters
    ----------
    path : pathlib.Path, optional
        The ECSV file; default the bundled one (:func:`planner.resources.catalog_path`).

    Raises
    ------
    planner.errors.CatalogError
        If the file is missing or unreadable, lacks a required column, has a row
        without a valid name or position, or two rows share a name or alias.
    """
    path = Path(path) if path is not None else catalog_path()
    source = str(path)
    if not path.is_file():
        raise CatalogError("cluster catalog not found (expected an ECSV file)", source=source)
    colnames, columns = _read_columns(path, source, REQUIRED_COLUMNS[2:] + OPTIONAL_COLUMNS)
    missing = [c for c in REQUIRED_COLUMNS if c not in colnames]
    if missing:
        raise CatalogError(f"missing column(s) {', '.join(missing)}", source=source)

    names, aliases = columns["name"], columns["aliases"]
    numeric = REQUIRED_COLUMNS[2:] + tuple(c for c in OPTIONAL_COLUMNS if c in colnames)
    numbers = {c: columns[c] for c in numeric}
    entries = []
    for i, name in enumerate(names):
        row = i + 1
        if not name:
            raise CatalogError(f"row {row}, column name: empty", source=source)
        ra, dec = numbers["ra_deg"][i], numbers["dec_deg"][i]
        if ra is None or not 0.0 <= ra < 360.0:
            raise CatalogError(f"row {row} ({name}), column ra_deg: {ra} is outside 0..360", source=source)
        if dec is None or not -90.0 <= dec <= 90.0:
            raise CatalogError(f"row {row} ({name}), column dec_deg: {dec} is outside -90..90", source=source)
        entries.append(
            ClusterEntry(
                name=name,
                aliases=tuple(a.strip() for a in aliases[i].split(";") if a.strip()),
                **{c: numbers[c][i] for c in numeric},
            )
        )
    try:
        return Catalog(tuple(entries))
    except CatalogError as exc:
        raise CatalogError(exc.detail, source=source) from None
