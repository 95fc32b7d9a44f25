"""Tests of the bundled cluster catalog (targets/globular_clusters.ecsv) and planner.catalog.

External references: OpenNGC (through pyongc) for positions of NGC/IC clusters;
galpy's named-object table (Vasiliev & Baumgardt 2021 positions, Baumgardt &
Vasiliev 2021 distances) for positions, distances and Messier-number synonyms.
Both are test-only: pyongc is imported with pytest.importorskip; galpy's JSON is
read from its package folder (the tests skip when galpy is absent).
"""

from __future__ import annotations

import json
import math
import re

import pytest

from planner.errors import CatalogError
from planner.inputs.catalog import REQUIRED_COLUMNS, Catalog, ClusterEntry, load_catalog
from planner.inputs.resources import catalog_path
from planner.model.names import normalize_name


@pytest.fixture(scope="module")
def catalog() -> Catalog:
    return load_catalog()


@pytest.fixture(scope="module")
def galpy_objects() -> dict:
    """galpy's named-object table, read from its package folder without importing
    galpy (its import takes seconds); skipped when galpy is not installed."""
    from importlib.util import find_spec
    from pathlib import Path

    spec = find_spec("galpy")
    if spec is None or not spec.submodule_search_locations:
        pytest.skip("galpy is not installed (test-only dependency)")
    path = Path(spec.submodule_search_locations[0]) / "orbit" / "named_objects.json"
    return json.loads(path.read_text())


@pytest.fixture(scope="module")
def table():
    from astropy.table import Table

    return Table.read(catalog_path(), format="ascii.ecsv")


def _separation_arcsec(ra1: float, dec1: float, ra2: float, dec2: float) -> float:
    """Great-circle separation (haversine), degrees in, arcsec out."""
    r1, d1, r2, d2 = map(math.radians, (ra1, dec1, ra2, dec2))
    h = math.sin((d2 - d1) / 2) ** 2 + math.cos(d1) * math.cos(d2) * math.sin((r2 - r1) / 2) ** 2
    return math.degrees(2 * math.asin(min(1.0, math.sqrt(h)))) * 3600


# ---------------------------------------------------------------------------
# The file itself
# ---------------------------------------------------------------------------


def test_file_has_required_columns_units_and_provenance(table):
    for column in (*REQUIRED_COLUMNS, "distance_source", "notes"):
        assert column in table.colnames
    assert str(table["ra_deg"].unit) == "deg" and str(table["distance_kpc"].unit) == "kpc"
    assert str(table["half_light_radius_arcmin"].unit) == "arcmin"
    for key in ("frame", "epoch", "column_sources", "distance_sources", "references", "construction"):
        assert key in table.meta, key
    assert table.meta["frame"] == "ICRS"
    assert set(table["distance_source"]) <= set(table.meta["distance_sources"])


def test_row_count_is_harris_full_list(catalog):
    # Harris 1996 (2010 edition), mwgc.dat header: "157 objects classified as
    # globular clusters in the Milky Way galaxy".
    assert len(catalog.entries) == 157


def test_every_row_has_a_position_and_plausible_values(catalog):
    for e in catalog.entries:
        assert 0.0 <= e.ra_deg < 360.0 and -90.0 <= e.dec_deg <= 90.0, e.name
        # Nearest known cluster ~1.8 kpc, farthest (AM 1, Harris) ~123 kpc.
        assert e.distance_kpc is not None and 1.0 < e.distance_kpc < 150.0, e.name
        # The modulus is the true one, 5 log10(d / 10 pc); the file rounds d to 1 pc
        # and the modulus to 1 mmag.
        assert e.distance_modulus_mag == pytest.approx(5 * math.log10(e.distance_kpc * 100), abs=2e-3), e.name
        assert e.ebv_mag is not None and 0.0 <= e.ebv_mag < 10.0, e.name
        if e.feh_dex is not None:
            assert -3.0 < e.feh_dex <= 0.5, e.name
        if e.half_light_radius_arcmin is not None:
            assert 0.0 < e.half_light_radius_arcmin < 15.0, e.name
        if e.v_mag is not None:
            assert 2.0 < e.v_mag < 30.0, e.name


def test_missing_values_are_the_documented_ones(catalog):
    # The construction note lists the cells Harris 2010 leaves blank.
    missing = {
        "feh_dex": {"Ko 1", "Ko 2", "FSR 1735", "2MS-GC01", "GLIMPSE01"},
        "v_mag": {"GLIMPSE02"},
        "half_light_radius_arcmin": {"Pyxis", "Liller 1", "UKS 1", "NGC 6540", "GLIMPSE02"},
    }
    for field, names in missing.items():
        assert {e.name for e in catalog.entries if getattr(e, field) is None} == names, field


def test_no_duplicate_names_or_aliases(catalog):
    keys = [normalize_name(n) for e in catalog.entries for n in e.names]
    assert len(keys) == len(set(keys))
    assert len(catalog.index) == len(keys)


# ---------------------------------------------------------------------------
# Lookups
# ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("query", "expected"),
    [
        ("M 13", "NGC 6205"),
        ("m13", "NGC 6205"),
        ("Messier 13", "NGC 6205"),
        ("  M  13 ", "NGC 6205"),
        ("47 Tuc", "NGC 104"),
        ("47tuc", "NGC 104"),
        ("47 Tucanae", "NGC 104"),
        ("NGC0104", "NGC 104"),
        ("ngc_104", "NGC 104"),
        ("omega Cen", "NGC 5139"),
        ("ω Centauri", "NGC 5139"),
        ("Pal 5", "Pal 5"),
        ("Palomar 5", "Pal 5"),
        ("pal-05", "Pal 5"),
        ("Terzan 11", "Terzan 5"),
        ("ESO 452-SC11", "1636-283"),
        ("2MASS-GC01", "2MS-GC01"),
        ("Glimpse 1", "GLIMPSE01"),
        ("Ton 1", "NGC 6380"),
    ],
)
def test_lookup_by_name_and_alias(catalog, query, expected):
    entry = catalog.lookup(query)
    assert entry is not None and entry.name == expected


def test_lookup_unknown_is_none_and_suggests_close_names(catalog):
    assert catalog.lookup("NGC 99999") is None
    assert catalog.lookup("") is None
    # typical typos: a dropped digit, dropped or swapped letters
    assert catalog.suggestions("NGC 620")[0] == "NGC 6205"
    assert catalog.suggestions("Palomr 5")[0] == "Palomar 5"
    assert catalog.suggestions("47 Tcu") == ["47 Tuc"]
    assert catalog.suggestions("omega centuri")[0] == "omega Cen"
    assert catalog.suggestions("completely different", n=3) == []
    assert len(catalog.suggestions("NGC 62", n=2)) <= 2


def test_normalize_name_rules():
    assert normalize_name("NGC 6205") == normalize_name("ngc-6205") == normalize_name("N.G.C._6205")
    assert normalize_name("M13") == normalize_name("Messier 13") == "m13"
    assert normalize_name("Pal 1") != normalize_name("Pal 10")
    # "Messier" is only a prefix before a number
    assert normalize_name("Messier") == "messier"


def test_messier_synonyms_match_galpy(catalog, galpy_objects):
    # galpy's named-object table maps every Messier globular cluster to its NGC number.
    synonyms = galpy_objects["_synonyms"]
    messier = {k: v for k, v in synonyms.items() if re.fullmatch(r"M\d+", k)}
    assert len(messier) >= 25
    for m_name, ngc in messier.items():
        entry = catalog.lookup(m_name)
        assert entry is not None, m_name
        assert normalize_name(entry.name) == normalize_name(ngc), (m_name, entry.name, ngc)
        assert f"M {m_name[1:]}" in entry.aliases


# ---------------------------------------------------------------------------
# Against external references
# ---------------------------------------------------------------------------


def test_positions_against_openngc(catalog):
    """NGC/IC cluster positions agree with OpenNGC (pyongc) within 1 arcmin.

    OpenNGC's positions come from other surveys than Harris's centres; for loose
    clusters the adopted centres scatter by tens of arcsec (up to 40" for NGC 288
    when the catalog was built).  1 arcmin is still far below a CCD field, and a
    typo in a sexagesimal digit would be off by far more.
    """
    ongc = pytest.importorskip("pyongc.ongc")
    from astropy.coordinates import Angle

    checked = 0
    for entry in catalog.entries:
        for name in entry.names:
            m = re.fullmatch(r"(NGC|IC) (\d+)", name)
            if not m:
                continue
            obj = ongc.get(f"{m[1]}{int(m[2]):04d}")
            assert obj is not None, name
            ra = Angle(obj.ra, unit="hourangle").deg
            dec = Angle(obj.dec, unit="deg").deg
            sep = _separation_arcsec(entry.ra_deg, entry.dec_deg, ra, dec)
            assert sep < 60.0, f"{name}: {sep:.1f} arcsec from OpenNGC"
            checked += 1
    assert checked >= 100  # the catalog has 107 NGC/IC clusters


def _galpy_matches(catalog, table):
    """(galpy key, record, catalog entry) for galpy's Milky Way globular clusters."""
    by_target: dict[str, list[str]] = {}
    for alias, key in table["_synonyms"].items():
        by_target.setdefault(key, []).append(alias)
    # galpy spells one Harris object without the "SC": ESO 280-SC06.
    by_target.setdefault("ESO28006", []).append("ESO 280-SC06")
    matches = []
    for key in table["_collections"]["MWglobularclusters"]:
        for name in (key.removesuffix("-missingvlos"), *by_target.get(key, [])):
            entry = catalog.lookup(name)
            if entry is not None:
                matches.append((key, table[key], entry))
                break
    return matches


def test_positions_against_galpy(catalog, galpy_objects):
    """Positions agree with galpy's table (Vasiliev & Baumgardt 2021) within 1 arcmin.

    galpy rounds to 0.001 deg (3.6"); Gaia-era centres differ from Harris's by
    up to ~42" (Terzan 1) for sparse or heavily reddened clusters.
    """
    matches = _galpy_matches(catalog, galpy_objects)
    # galpy lists 161 objects; those absent from Harris 2010 (found since) don't match.
    assert len(matches) >= 150
    assert len({entry.name for _, _, entry in matches}) == len(matches)
    for key, record, entry in matches:
        sep = _separation_arcsec(entry.ra_deg, entry.dec_deg, record["ra"], record["dec"])
        assert sep < 60.0, f"{entry.name} ({key}): {sep:.1f} arcsec from galpy"


def test_distances_against_galpy(table, catalog, galpy_objects):
    """Distances agree with galpy's (Baumgardt & Vasiliev 2021) table.

    BV21 rows are the same published distances by another route (the Local
    Volume Database's 3-decimal moduli): galpy rounds to 0.01 kpc, at most 0.3 %
    for the nearest cluster (1.85 kpc), so 0.5 % allows for rounding only.
    H10 rows are Harris's R_Sun from horizontal-branch photometry; 0.2 mag in
    (m-M)_V, not unusual for faint or reddened clusters, is 10 % in distance.
    """
    source = dict(zip(table["name"], table["distance_source"]))
    matches = _galpy_matches(catalog, galpy_objects)
    tolerance = {"BV21": 0.005, "H10": 0.10}
    n_bv21 = 0
    for key, record, entry in matches:
        kind = source[entry.name]
        n_bv21 += kind == "BV21"
        assert entry.distance_kpc == pytest.approx(record["distance"], rel=tolerance[kind]), (key, kind)
    assert n_bv21 >= 145


# ---------------------------------------------------------------------------
# load_catalog on bad files
# ---------------------------------------------------------------------------

_HEADER = """\
# %ECSV 1.0
# ---
# datatype:
# - {name: name, datatype: string}
# - {name: aliases, datatype: string}
# - {name: ra_deg, datatype: float64}
# - {name: dec_deg, datatype: float64}
# - {name: distance_kpc, datatype: float64}
# - {name: distance_modulus_mag, datatype: float64}
# - {name: ebv_mag, datatype: float64}
# - {name: feh_dex, datatype: float64}
# - {name: half_light_radius_arcmin, datatype: float64}
# - {name: v_mag, datatype: float64}
# schema: astropy-2.0
name aliases ra_deg dec_deg distance_kpc distance_modulus_mag ebv_mag feh_dex half_light_radius_arcmin v_mag
"""


def test_load_small_catalog_with_missing_values(tmp_path):
    path = tmp_path / "small.ecsv"
    path.write_text(_HEADER + '"Cl 1" "Alpha;Beta" 10.0 -20.0 "" "" 0.1 "" 1.0 ""\n')
    cat = load_catalog(path)
    assert cat.entries == (
        ClusterEntry("Cl 1", ("Alpha", "Beta"), 10.0, -20.0, None, None, 0.1, None, 1.0, None),
    )
    assert cat.lookup("beta") is cat.entries[0]


@pytest.mark.parametrize(
    ("content", "message"),
    [
        (None, "not found"),
        ("name,ra\nx,1\n", "cannot read the cluster catalog as ECSV"),
        (_HEADER.replace(" v_mag\n", "\n").replace("# - {name: v_mag, datatype: float64}\n", "")
         + '"A" "" 1 2 3 4 5 6 7\n', "missing column(s) v_mag"),
        (_HEADER + '"A" "" 400 2 3 4 5 6 7 8\n', "row 1 (A), column ra_deg: 400.0 is outside 0..360"),
        (_HEADER + '"A" "" 1 "" 3 4 5 6 7 8\n', "row 1 (A), column dec_deg: None is outside -90..90"),
        (_HEADER + '"A" "M 1" 1 2 3 4 5 6 7 8\n"B" "m1" 1 2 3 4 5 6 7 8\n', "'m1' of 'B' is also a name of 'A'"),
        (_HEADER + '"" "" 1 2 3 4 5 6 7 8\n', "row 1, column name: empty"),
    ],
)
def test_load_catalog_errors(tmp_path, content, message):
    path = tmp_path / "cat.ecsv"
    if content is not None:
        path.write_text(content)
    with pytest.raises(CatalogError) as info:
        load_catalog(path)
    assert message in str(info.value)
    assert str(info.value).startswith(str(path))
