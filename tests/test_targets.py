"""Tests of planner.inputs.targets: reading target lists and resolving names.

Reference values: the degrees in tests/data/targets_degrees.csv were computed by
hand arithmetic, ra = 15 (h + m/60 + s/3600) and dec = sign (d + m/60 + s/3600),
from the sexagesimal values of targets_sexagesimal.csv, not with astropy.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.errors import InputError, TargetListError
from planner.inputs.catalog import Catalog, load_catalog
from planner.inputs.targets import (
    catalog_targets,
    read_target_list,
    resolve_targets,
    targets_from_names,
)
from planner.model.target import Target

DATA = Path(__file__).parent / "data"
EXAMPLES = Path(__file__).parent.parent / "targets" / "examples"


@pytest.fixture(scope="module")
def catalog() -> Catalog:
    return load_catalog()


def _write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# ---------------------------------------------------------------------------
# Formats and coordinates
# ---------------------------------------------------------------------------


def test_sexagesimal_matches_hand_arithmetic():
    sexagesimal = read_target_list(DATA / "targets_sexagesimal.csv")
    degrees = read_target_list(DATA / "targets_degrees.csv")  # header NAME,RA_DEG,DEC_DEG
    assert [t.name for t in sexagesimal] == ["Field A", "Field B", "Field C", "Field D"]
    assert [t.name for t in degrees] == [t.name for t in sexagesimal]
    for s, d in zip(sexagesimal, degrees):
        # the degrees file carries 9 decimals (0.004 mas)
        assert s.ra_deg == pytest.approx(d.ra_deg, abs=1e-8)
        assert s.dec_deg == pytest.approx(d.dec_deg, abs=1e-8)
    # the sign of a declination between 0 and -1 degree must survive ("-00:30:00")
    assert sexagesimal[1].dec_deg == pytest.approx(-0.5, abs=1e-12)


@pytest.mark.parametrize("name", ["targets_fields.toml", "targets_fields.ecsv"])
def test_toml_and_ecsv_give_the_same_fields(name):
    reference = read_target_list(DATA / "targets_degrees.csv")
    targets = read_target_list(DATA / name)
    assert [t.name for t in targets] == [t.name for t in reference]
    for t, r in zip(targets, reference):
        # the ECSV's decimal hours have 10 decimals: 1.5e-9 deg
        assert t.ra_deg == pytest.approx(r.ra_deg, abs=1e-8)
        assert t.dec_deg == pytest.approx(r.dec_deg, abs=1e-8)
        assert t.catalog_name is None and t.distance_kpc is None and t.priority == 1.0


def test_catalog_fills_missing_values(catalog):
    targets = read_target_list(DATA / "targets_catalog_fill.csv", catalog)
    m13, tuc, m92, field = targets
    entry = catalog.lookup("NGC 6205")
    assert m13 == Target(
        name="m13",
        ra_deg=entry.ra_deg,
        dec_deg=entry.dec_deg,
        distance_modulus_mag=entry.distance_modulus_mag,
        distance_kpc=entry.distance_kpc,
        ebv_mag=entry.ebv_mag,
        feh_dex=entry.feh_dex,
        half_light_radius_arcmin=entry.half_light_radius_arcmin,
        v_mag=entry.v_mag,
        v_hb_mag=entry.v_hb_mag,
        v_hb_source="Harris 2010",
        central_sb_v_mag_arcsec2=entry.central_sb_v_mag_arcsec2,
        core_radius_arcmin=entry.core_radius_arcmin,
        king_concentration=entry.king_concentration,
        integrated_colours=m13.integrated_colours,
        priority=1.0,
        catalog_name="NGC 6205",
    )
    # Harris 2010 Part II/III for NGC 6205 (read from mwgc.dat): V_HB 14.90, mu_V 16.59,
    # r_c 0.62', c 1.53; integrated U-B -0.02, B-V 0.68, V-R blank, V-I 0.86
    assert (entry.v_hb_mag, entry.central_sb_v_mag_arcsec2, entry.core_radius_arcmin) == (14.90, 16.59, 0.62)
    assert entry.king_concentration == 1.53
    assert dict(m13.integrated_colours) == {"V": 0.0, "B": 0.68, "U": 0.66, "I": -0.86}
    # a value in the file wins over the catalog
    assert tuc.catalog_name == "NGC 104" and tuc.ebv_mag == 0.05 and tuc.priority == 2.5
    assert tuc.feh_dex == catalog.lookup("47 Tuc").feh_dex
    # own position (Harris 2010 digits, so it matches the catalog's to 1e-6 deg)
    assert m92.catalog_name == "NGC 6341"
    assert m92.ra_deg == pytest.approx(15 * (17 + 17 / 60 + 7.39 / 3600), abs=1e-9)
    assert m92.dec_deg == pytest.approx(43 + 8 / 60 + 9.4 / 3600, abs=1e-9)
    # an invented field: every optional column, E(B-V)/[Fe/H]/r_h_arcmin spellings
    assert field.catalog_name is None
    assert (field.ra_deg, field.dec_deg) == (pytest.approx(150.0), pytest.approx(-10.0))
    assert field.distance_modulus_mag == 15.0
    # (m-M)_0 = 15 is 10**(15/5 + 1) pc = 10 kpc by definition
    assert field.distance_kpc == pytest.approx(10.0, rel=1e-12)
    assert (field.ebv_mag, field.feh_dex, field.half_light_radius_arcmin) == (0.1, -1.5, 1.2)
    assert (field.v_mag, field.priority) == (9.5, 0.5)


def test_distance_kpc_implies_modulus(tmp_path):
    path = _write(tmp_path, "d.csv", "name,ra,dec,distance_kpc\nX,1,2,1.0\nY,1,3,100\n")
    x, y = read_target_list(path)
    # 1 kpc = 100 x 10 pc: 5 log10(100) = 10 mag; 100 kpc: 20 mag
    assert x.distance_modulus_mag == pytest.approx(10.0, abs=1e-12)
    assert y.distance_modulus_mag == pytest.approx(20.0, abs=1e-12)


def test_both_distances_accepted_when_consistent(tmp_path):
    path = _write(tmp_path, "d.csv", "name,ra,dec,distance_kpc,distance_modulus_mag\nX,1,2,10,15.05\n")
    (x,) = read_target_list(path)
    assert (x.distance_kpc, x.distance_modulus_mag) == (10.0, 15.05)


def test_toml_numbers_and_strings(tmp_path):
    path = _write(
        tmp_path,
        "t.toml",
        '[[target]]\nname = "A"\nra = 10\ndec = "-10:30:00"\npriority = 2\nfeh = -1.2\n'
        '[[target]]\nName = "B"\nRA_DEG = 20.5\nDec = -5\nnotes = "ignored"\n',
    )
    a, b = read_target_list(path)
    assert (a.ra_deg, a.dec_deg, a.priority, a.feh_dex) == (10.0, -10.5, 2.0, -1.2)
    assert (b.name, b.ra_deg, b.dec_deg) == ("B", 20.5, -5.0)


def test_csv_header_only_trailing_empty_columns_and_bom(tmp_path):
    # spreadsheets add a BOM and empty trailing columns
    path = tmp_path / "s.csv"
    path.write_bytes("\ufeffname,ra,dec,,\nA,1,2,,\n".encode("utf-8"))
    (a,) = read_target_list(path)
    assert (a.name, a.ra_deg, a.dec_deg) == ("A", 1.0, 2.0)


def test_example_target_lists(catalog):
    spring = read_target_list(EXAMPLES / "northern_spring.csv", catalog)
    winter = read_target_list(EXAMPLES / "southern_winter.toml", catalog)
    assert len(spring) >= 3 and len(winter) >= 3
    everything = spring + winter
    # the example positions are Harris 2010's, so they sit on the catalog's
    for t in everything:
        if t.catalog_name is not None:
            entry = catalog.lookup(t.catalog_name)
            assert abs(t.ra_deg - entry.ra_deg) * math.cos(math.radians(t.dec_deg)) < 1e-4
            assert abs(t.dec_deg - entry.dec_deg) < 1e-4
    assert all(t.distance_kpc is not None for t in everything)
    assert "NGC 5904" not in {t.catalog_name for t in everything}


# ---------------------------------------------------------------------------
# Errors: one message naming file, row, column and value
# ---------------------------------------------------------------------------


def test_bad_value_names_file_row_and_column():
    path = DATA / "targets_bad_dec.csv"
    with pytest.raises(TargetListError) as info:
        read_target_list(path)
    # comment and blank lines do not count: Field C is data row 3
    assert str(info.value) == f"{path}: row 3, column dec: -95 is outside -90..90"
    assert info.value.source == str(path)
    assert isinstance(info.value, InputError)


_CSV_ERRORS = [
    ("name,ra,dec\nA,360,0\n", "row 1, column ra: 360 is outside 0..360"),
    ("name,ra,dec\nA,-1,0\n", "row 1, column ra: -1 is outside 0..360"),
    ("name,ra,dec\nA,24:00:00,0\n", "row 1, column ra: '24:00:00' is not an angle"),
    ("name,ra,dec\nA,00:61:00,0\n", "row 1, column ra: '00:61:00' is not an angle"),
    ("name,ra,dec\nA,1,2\nB,abc,0\n", "row 2, column ra: 'abc' is not an angle"),
    ("name,ra,dec\nA,1,+91:00:00\n", "row 1, column dec: '+91:00:00' is outside -90..90"),
    ("name,ra_deg,dec_deg\nA,1,nan\n", "row 1, column dec_deg: nan is not an angle"),
    ("name,ra,dec,priority\nA,1,2,0\n", "row 1, column priority: 0 must be > 0"),
    ("name,ra,dec,priority\nA,1,2,high\n", "row 1, column priority: 'high' is not a number"),
    ("name,ra,dec,E(B-V)\nA,1,2,-0.1\n", "row 1, column E(B-V): -0.1 is outside 0..10"),
    ("name,ra,dec,distance_kpc\nA,1,2,-3\n", "row 1, column distance_kpc: -3 must be > 0"),
    ("name,ra,dec,v_mag\nA,1,2,1e999\n", "row 1, column v_mag: 1e999 must be a finite number"),
    ("name,ra,dec,distance_kpc,distance_modulus\nA,1,2,10,16\n",
     "row 1, column distance_modulus: 16 disagrees with distance_kpc 10 (which implies 15.00)"),
    ("name,ra,dec\n,1,2\n", "row 1, column name: missing"),
    ("name,ra,dec\nA,1,2\nB,,2\n", "row 2, column ra: missing"),
    ("name,ra\nA,1\n", "row 1, column dec: missing"),
    ("name,ra,dec\nA,1,2\nB,3,4\na,5,6\n", "row 3: 'a' is the same target as row 1"),
    ("name,ra,dec,,x\n", "unknown column(s) 'x'"),
    ("name,ra,dec,dec_dge\nA,1,2,3\n", "unknown column(s) 'dec_dge' (did you mean 'dec_deg'?)"),
    ("name,ra,ra_deg,dec\nA,1,1,2\n", "columns 'ra' and 'ra_deg' both give ra_deg"),
    ("ra,dec\n1,2\n", "no 'name' column"),
    ("name,ra,dec\n", "no targets (the file has no data rows)"),
    ("# only a comment\n\n", "empty target list"),
    ("   \n", "empty file"),
    ("name,ra,dec,\nA,1,2,\n,,,x\n", "row 2: a value ('x') in column 4, which has no name"),
    ("name,ra,dec\nA,1,2,,\nB,1,2,3\n", "row 2: 4 values but the header has 3 columns"),
]


@pytest.mark.parametrize(("text", "message"), _CSV_ERRORS)
def test_csv_errors(tmp_path, text, message):
    path = _write(tmp_path, "x.csv", text)
    with pytest.raises(TargetListError) as info:
        read_target_list(path)
    assert str(info.value).startswith(f"{path}: {message}"), str(info.value)


def test_unknown_name_without_position_says_catalog(tmp_path, catalog):
    path = _write(tmp_path, "x.csv", "name,ra,dec\nM 13,,\nNGC 99999,,\n")
    with pytest.raises(TargetListError) as info:
        read_target_list(path, catalog)
    assert str(info.value) == (
        f"{path}: row 2, column ra: missing; 'NGC 99999' is not in the bundled catalog (give ra and dec)"
    )


def test_catalog_names_count_as_duplicates(tmp_path, catalog):
    path = _write(tmp_path, "x.csv", "name\nM 13\nNGC 6205\n")
    with pytest.raises(TargetListError, match="row 2: 'NGC 6205' is the same target as row 1"):
        read_target_list(path, catalog)


_TOML_ERRORS = [
    ('[[target]]\nname = "A"\nra = 1\ndec = -95\n', "row 1, column dec: -95 is outside -90..90"),
    ('[[target]]\nname = "A"\nra = 1\ndec = 2\n[[target]]\nname = 7\nra = 1\ndec = 2\n',
     "row 2, column name: 7 must be text"),
    ('[[target]]\nname = "A"\nra = true\ndec = 2\n', "row 1, column ra: True is not an angle"),
    ('[[target]]\nname = "A"\nra = [1, 2]\ndec = 2\n', "row 1, column ra: [1, 2] must be a number or text"),
    ('[[target]]\nname = "A"\nra = 1\ndec = 2\nRA = 3\n', "row 1: keys 'ra' and 'RA' both give ra_deg"),
    ('[[target]]\nname = "A"\nra = 1\ndec = 2\ncolour = "red"\n', "unknown column(s) 'colour'"),
    ('title = "x"\n[[target]]\nname = "A"\n', "unknown top-level key(s) 'title'"),
    ('[target]\nname = "A"\n', "'target' must be an array of tables, written [[target]]"),
    ('[[target]\nname = "A"\n', "not valid TOML"),
    ("# nothing\n", "empty target list (expected [[target]] tables)"),
    ('[[target]]\nname = "A"\nra = 1' + "0" * 5000 + '\ndec = 2\n', "not valid TOML"),
]


@pytest.mark.parametrize(("text", "message"), _TOML_ERRORS)
def test_toml_errors(tmp_path, text, message):
    path = _write(tmp_path, "x.toml", text)
    with pytest.raises(TargetListError) as info:
        read_target_list(path)
    assert str(info.value).startswith(f"{path}: {message}"), str(info.value)


def test_ecsv_errors(tmp_path):
    bad = _write(tmp_path, "x.ecsv", "name ra dec\nA 1 2\n")
    with pytest.raises(TargetListError, match="cannot read as ECSV"):
        read_target_list(bad)
    unit = _write(
        tmp_path,
        "u.ecsv",
        "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: name, datatype: string}\n"
        "# - {name: ra, unit: m, datatype: float64}\n# - {name: dec, datatype: float64}\n"
        "# schema: astropy-2.0\nname ra dec\nA 1 2\n",
    )
    with pytest.raises(TargetListError, match="column ra: unit m is not an angle"):
        read_target_list(unit)


def test_file_problems(tmp_path):
    for path, message in [
        (tmp_path / "missing.csv", "file not found"),
        (tmp_path / "list.txt", "unsupported target list type '.txt'; use .ecsv, .csv, .toml"),
        (tmp_path / "noext", "unsupported target list type '(no suffix)'"),
    ]:
        with pytest.raises(TargetListError) as info:
            read_target_list(path)
        assert str(info.value) == f"{path}: {message}" or str(info.value).startswith(f"{path}: {message}")
    folder = tmp_path / "folder.csv"
    folder.mkdir()
    with pytest.raises(TargetListError, match="is a folder"):
        read_target_list(folder)
    latin = tmp_path / "latin.csv"
    latin.write_bytes("name,ra,dec\nCaf\xe9,1,2\n".encode("latin-1"))
    with pytest.raises(TargetListError, match="not UTF-8 text"):
        read_target_list(latin)
    binary = tmp_path / "nul.toml"
    binary.write_bytes(b"name\x00\x00")
    with pytest.raises(TargetListError, match="NUL bytes"):
        read_target_list(binary)


# ---------------------------------------------------------------------------
# Names on the command line
# ---------------------------------------------------------------------------


def test_targets_from_names_use_catalog_spelling(catalog):
    m13, tuc, pal = targets_from_names(["m13", "47tuc", "palomar 5"], catalog)
    assert (m13.name, m13.catalog_name) == ("M 13", "NGC 6205")
    assert (tuc.name, tuc.catalog_name) == ("47 Tuc", "NGC 104")
    assert (pal.name, pal.catalog_name) == ("Palomar 5", "Pal 5")
    assert m13.ra_deg == catalog.lookup("M 13").ra_deg


def test_unknown_target_name_suggests(catalog):
    with pytest.raises(TargetListError) as info:
        targets_from_names(["M 13", "NGC 620"], catalog)
    assert str(info.value) == "--target: unknown cluster 'NGC 620' (did you mean: NGC 6205, NGC 362, NGC 6809?)"
    with pytest.raises(TargetListError, match="unknown cluster 'xyzzy' \\(not among the 157 clusters"):
        targets_from_names(["xyzzy"], catalog)


def test_resolve_targets(catalog):
    everything = resolve_targets("all", [], catalog)
    assert len(everything) == 157 == len(catalog_targets(catalog))
    assert [t.catalog_name for t in everything] == [e.name for e in catalog.entries]
    # a named cluster already in the list is dropped; order kept
    again = resolve_targets("ALL", ["M 13", "NGC 6205"], catalog)
    assert len(again) == 157
    named = resolve_targets(None, ["M 92", "m13", "NGC 6341", "Messier 13"], catalog)
    assert [t.name for t in named] == ["M 92", "M 13"]
    from_file = resolve_targets(str(DATA / "targets_catalog_fill.csv"), ["M 13", "omega Cen"], catalog)
    assert [t.name for t in from_file] == ["m13", "47 Tucanae", "Messier 92", "Invented field", "omega Cen"]
    with pytest.raises(TargetListError, match="no targets: give --targets FILE, --targets all, or --target NAME"):
        resolve_targets(None, [], catalog)
    with pytest.raises(TargetListError, match="file not found"):
        resolve_targets("nothere.csv", [], catalog)


# ---------------------------------------------------------------------------
# Garbage in: only TargetListError comes out
# ---------------------------------------------------------------------------

_CELL = st.one_of(
    st.text(max_size=12),
    st.sampled_from(["", "1", "-95", "360", "00:24:05.67", "-00:30:00", "12h", "1e999", "nan", "M 13",
                     "99:99:99", "1:2:3:4", "+", "--1", "\"", "#", "24:00:00", "6d61m"]),
)
_OPTIONAL = st.lists(
    st.sampled_from(["RA_DEG", "priority", "distance_kpc", "distance_modulus", "E(B-V)", "[Fe/H]", "v_mag",
                     "notes", "", "bogus"]),
    unique=True,
    max_size=4,
)


@st.composite
def _header(draw):
    """Mostly well-formed headers (so that the values get parsed), sometimes broken ones."""
    required = draw(st.lists(st.sampled_from(["name", "ra", "dec"]), unique=True, min_size=0, max_size=3))
    if draw(st.integers(0, 3)):
        required = ["name", "ra", "dec"]
    return draw(st.permutations(required + draw(_OPTIONAL)))


@st.composite
def _csv_text(draw):
    if not draw(st.integers(0, 4)):
        return draw(st.text(max_size=200))
    header = draw(_header())
    width = st.integers(max(0, len(header) - 1), len(header) + 1)
    rows = draw(st.lists(width.flatmap(lambda n: st.lists(_CELL, min_size=n, max_size=n)), max_size=4))
    return "\n".join([",".join(header), *(",".join(r) for r in rows)])


_TOML_VALUE = st.one_of(
    _CELL,
    st.integers(min_value=-(10**30), max_value=10**30),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
)


def _toml_literal(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf") if math.isinf(value) else repr(value)
    if isinstance(value, int):
        return str(value)
    return '"' + value.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'


@st.composite
def _toml_text(draw):
    if not draw(st.integers(0, 4)):
        return draw(st.text(max_size=200))
    keys = draw(_header())
    tables = []
    for _ in range(draw(st.integers(0, 3))):
        lines = ["[[target]]"]
        for key in keys:
            if key and draw(st.integers(0, 5)):  # now and then a key is left out
                lines.append(f'"{key}" = {_toml_literal(draw(_TOML_VALUE))}')
        tables.append("\n".join(lines))
    return "\n".join(tables)


@pytest.fixture(scope="module")
def scratch(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("garbage")


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=_csv_text())
def test_garbage_csv_raises_only_target_list_error(scratch, catalog, text):
    path = scratch / "garbage.csv"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    try:
        targets = read_target_list(path, catalog)
    except TargetListError:
        return
    assert all(0 <= t.ra_deg < 360 and -90 <= t.dec_deg <= 90 for t in targets)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=_toml_text())
def test_garbage_toml_raises_only_target_list_error(scratch, catalog, text):
    path = scratch / "garbage.toml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    try:
        targets = read_target_list(path, catalog)
    except TargetListError:
        return
    assert all(0 <= t.ra_deg < 360 and -90 <= t.dec_deg <= 90 for t in targets)


def test_r_v_column_read_and_checked(tmp_path, catalog):
    # R_V towards NGC 6121 is about 3.6-3.8 (from memory; tests/REFERENCES.md,
    # "Interstellar extinction"); it is the list's own value, the catalog has none.
    (m4,) = read_target_list(_write(tmp_path, "t.csv", "name,r_v\nNGC 6121,3.7\n"), catalog)
    assert m4.r_v == 3.7 and m4.ebv_mag == 0.35
    (m13,) = read_target_list(_write(tmp_path, "u.csv", "name\nM 13\n"), catalog)
    assert m13.r_v is None
    with pytest.raises(TargetListError, match="r_v"):
        read_target_list(_write(tmp_path, "v.csv", "name,rv\nM 13,31\n"), catalog)
