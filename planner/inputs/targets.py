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
* ``v_hb`` / ``v_hb_mag``: the observed (reddened) V of the horizontal branch, -5..30;
  when known it sets the HB and turnoff levels instead of the M_V-[Fe/H] relation
* ``r_v`` / ``rv``: the ratio R_V = A_V / E(B-V) towards the cluster, 2..6, default 3.1
  (the extinction law's mean; e.g. about 3.6-3.8 towards NGC 6121)
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

import math
from pathlib import Path
from typing import Sequence

from planner.errors import TargetListError
from planner.inputs.catalog import Catalog, ClusterEntry
from planner.inputs.target_rows import READERS, Row, show_cell
from planner.model.names import normalize_name
from planner.model.target import Target

SUFFIXES = (".ecsv", ".csv", ".toml")
DISTANCE_AGREEMENT_MAG = 0.1  # both distances given: their moduli must agree this well


# --- Rows -> targets (the rows from planner.inputs.target_rows) ---


def _distance_pair(row: Row) -> tuple[float | None, float | None]:
    """(distance_modulus_mag, distance_kpc) from the row, each implying the other."""
    modulus = row.number_or_none("distance_modulus_mag")
    distance = row.number_or_none("distance_kpc")
    if modulus is not None and distance is not None:
        implied = 5.0 * math.log10(distance * 100.0)  # 5 log10(d / 10 pc), d in kpc
        if abs(implied - modulus) > DISTANCE_AGREEMENT_MAG:
            raise row.fail(
                "distance_modulus_mag",
                f"{show_cell(row.cells['distance_modulus_mag'])} disagrees with distance_kpc "
                f"{show_cell(row.cells['distance_kpc'])} (which implies {implied:.2f}); give one of them",
            )
    elif modulus is not None:
        distance = 10.0 ** (modulus / 5.0 - 2.0)
    elif distance is not None:
        modulus = 5.0 * math.log10(distance * 100.0)
    return modulus, distance


def _target_from_row(row: Row, catalog: Catalog | None) -> Target:
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
        v_hb_mag=pick("v_hb_mag"),
        v_hb_source=_v_hb_source(row.number_or_none("v_hb_mag"), entry),
        r_v=row.number_or_none("r_v"),
        **({} if entry is None else _structure(entry)),
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
    from planner.inputs.files import TABLE_LIMIT_BYTES, read_input

    raw = read_input(path, source, TargetListError, "target list", TABLE_LIMIT_BYTES, missing="file not found")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise TargetListError(f"not UTF-8 text ({exc.reason} at byte {exc.start})", source=source) from None
    if "\x00" in text:
        raise TargetListError("not a text file (it contains NUL bytes)", source=source)
    if not text.strip():
        raise TargetListError("empty file (expected a target list)", source=source)
    rows = READERS[suffix](text, source)
    if not rows:
        raise TargetListError("no targets (the file has no data rows)", source=source)
    targets = []
    first_row: dict[str, int] = {}
    for number, (cells, columns) in enumerate(rows, start=1):
        target = _target_from_row(Row(cells, columns, number, source), catalog)
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


CATALOG_V_HB_SOURCE = "Harris 2010"
_SHARED_FIELDS = ("ra_deg", "dec_deg", "distance_modulus_mag", "distance_kpc", "ebv_mag", "feh_dex",
                  "half_light_radius_arcmin", "v_mag", "v_hb_mag")
_STRUCTURE_FIELDS = ("central_sb_v_mag_arcsec2", "core_radius_arcmin", "king_concentration")


def _structure(entry: ClusterEntry) -> dict:
    """The catalog's King-profile numbers and the cluster light's colours (band - V)."""
    ub, bv, vr, vi = (entry.ub_integrated_mag, entry.bv_integrated_mag, entry.vr_integrated_mag,
                      entry.vi_integrated_mag)
    colours = {"V": 0.0, "B": bv, "U": None if ub is None or bv is None else ub + bv,
               "R": None if vr is None else -vr, "I": None if vi is None else -vi}
    return {**{f: getattr(entry, f) for f in _STRUCTURE_FIELDS},
            "integrated_colours": tuple((b, round(c, 3)) for b, c in colours.items() if c is not None)}


def _v_hb_source(listed: float | None, entry: ClusterEntry | None) -> str | None:
    if listed is not None:
        return "the target list"
    return CATALOG_V_HB_SOURCE if entry is not None and entry.v_hb_mag is not None else None


def _target_from_entry(entry: ClusterEntry, shown_name: str | None = None) -> Target:
    values = {f: getattr(entry, f) for f in _SHARED_FIELDS}
    return Target(name=shown_name or entry.name, catalog_name=entry.name, v_hb_source=_v_hb_source(None, entry),
                  **values, **_structure(entry))


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
        if not name.strip():
            raise TargetListError("is empty: give a cluster's name, e.g. 'NGC 104' or '47 Tuc'", source="--target")
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
