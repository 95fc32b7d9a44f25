"""Tests for planner.inputs.sites: the site-profile parser, its messages, the bundled profiles.

Outside references: the collecting area and sec z are worked by hand (written
out beside each check); the templates' sky and extinction are compared with the
published values they cite (Patat 2003, A&A 400, 1183; Benn & Ellison 1998, La
Palma Tech. Note 115; tests/REFERENCES.md, "Site sky and extinction"); time zones are
checked by zoneinfo against tzdata.
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.errors import InputError, SiteProfileError
from planner.inputs.resources import site_profiles_dir
from planner.inputs.sites import (
    BANDS,
    bundled_site_names,
    load_site_profile,
    parse_site_profile,
    resolve_site,
    site_from_coordinates,
)
from planner.model.site import SiteProfile

DATA = Path(__file__).parent / "data"
FULL = (DATA / "sites_full.toml").read_text(encoding="utf-8")
SOURCE = "site_profiles/x.toml"  # a relative path, as a user would type it


def edited(old: str, new: str) -> str:
    """The full fixture with one exact piece of text changed (which must be there once)."""
    assert FULL.count(old) == 1, f"fixture does not hold {old!r} exactly once"
    return FULL.replace(old, new)


def without_table(name: str) -> str:
    """The full fixture without the table header ``[name]`` and its keys."""
    text, count = re.subn(rf"^\[{re.escape(name)}\]\n(?:[^\[\n].*\n)*", "", FULL, flags=re.M)
    assert count == 1
    return text


@pytest.fixture
def write(tmp_path, monkeypatch):
    """Write text (or bytes) as site_profiles/x.toml under a fresh working folder."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "site_profiles").mkdir()

    def _write(content: str | bytes) -> str:
        path = tmp_path / SOURCE
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
        return SOURCE

    return _write


def error_of(source: str) -> SiteProfileError:
    with pytest.raises(SiteProfileError) as info:
        load_site_profile(source)
    return info.value


# --------------------------------------------------------------------------
# Valid profiles
# --------------------------------------------------------------------------

@pytest.mark.parametrize("stem", bundled_site_names())
def test_every_bundled_profile_validates(stem):
    profile = load_site_profile(site_profiles_dir() / f"{stem}.toml")
    assert isinstance(profile, SiteProfile)
    assert profile.filters and set(profile.sky.dark_mag_arcsec2) == set(profile.filters)
    assert profile.notes.strip(), "bundled profiles carry their cautions in notes"


def test_bundled_names_include_demo_generic_and_templates():
    assert {"demo", "generic", "template_small_ccd", "template_4m_wide_field"} <= set(
        bundled_site_names())


def test_demo_is_a_labelled_fictional_1m_ccd_with_ubvri_and_cautions():
    demo = resolve_site("demo")
    assert "fictional" in demo.name.lower()
    assert "fictional" in (site_profiles_dir() / "demo.toml").read_text(encoding="utf-8").splitlines()[0].lower()
    assert demo.location.latitude_deg < 0 and 2000 <= demo.location.elevation_m <= 2600
    assert demo.telescope.aperture_m == 1.0 and demo.camera.detector_pixels == (4096, 4096)
    assert list(demo.filters) == ["U", "B", "V", "R", "I"]
    assert len(demo.limits.horizon_az_deg) >= 3
    for word in ("wind", "humidity", "dome", "sun", "altitude"):
        assert word in demo.notes.lower()


def test_full_fixture_values_and_longitude_normalised():
    p = load_site_profile(DATA / "sites_full.toml")
    assert p.location.longitude_deg == pytest.approx(289.2 - 360.0)  # east-positive, to -180..180
    assert p.location.timezone == "America/Santiago"
    assert p.limits.horizon_az_deg == (0, 90, 180, 270)
    assert p.limits.horizon_alt_deg == (5, 12.5, 3, -2)
    assert p.camera.gain_e_per_adu == 2.0  # an integer is fine for a float
    assert p.camera.detector_pixels == (4096, 2048)
    assert dict(p.camera.fits_keywords) == {"FILTER": "FILTNAME", "EXPTIME": "HIERARCH TEST EXPTIME"}
    assert p.filters["Ic"].band == "I" and p.filters["V"].band == "V" and p.filters["Ks"].band == "Ks"
    assert p.filters["Ic"].throughput is None and p.filters["Ic"].zero_point_mag == 24.1
    assert p.sky.extinction_mag_per_airmass["Ks"] == 0.08
    assert p.source == str(DATA / "sites_full.toml") and p.notes == "Invented test site."


def test_minimal_fixture_gets_the_documented_defaults():
    p = load_site_profile(DATA / "sites_minimal.toml")
    assert p.telescope.obstruction_diameter_m == 0.0
    assert p.camera.dark_e_per_s == 0.0 and p.camera.min_exposure_s == 0.0
    assert p.camera.linearity_limit_e == p.camera.full_well_e == 60000
    assert dict(p.camera.fits_keywords) == {}
    assert p.filters["R"].bandwidth_angstrom is None
    lim = p.limits
    assert (lim.sun_avoidance_deg, lim.min_moon_separation_deg, lim.twilight) == (45, 30, "astronomical")
    assert lim.min_altitude_deg == 20 and lim.horizon_az_deg == ()
    # sec z at altitude 20° = 1 / cos(70°) = 1 / 0.34202 = 2.9238 (by hand)
    assert lim.max_airmass == pytest.approx(2.9238, abs=1e-4)
    assert p.notes == ""


def test_collecting_area_by_hand():
    # demo: D = 1.0 m, d = 0.35 m; π/4 (1.0² − 0.35²) = 0.785398 × 0.8775 = 0.68919 m² (by hand)
    demo = resolve_site("demo")
    assert (demo.telescope.aperture_m, demo.telescope.obstruction_diameter_m) == (1.0, 0.35)
    assert demo.telescope.collecting_area_m2 == pytest.approx(0.68919, rel=1e-5)


@pytest.mark.parametrize("old, new, min_alt, max_am", [
    # sec z at 30° is 2.0000 and at 10° 5.7588 (tests/REFERENCES.md, "Airmass")
    ("max_airmass = 2.2\n", "", 30.0, 2.0000),
    ("min_altitude_deg = 30\nmax_airmass = 2.2\n", "min_altitude_deg = 10\n", 10.0, 5.7588),
    # an airmass limit alone: the altitude limit is the horizon
    ("min_altitude_deg = 30\n", "", 0.0, 2.2),
    ("min_altitude_deg = 30\nmax_airmass = 2.2\n", "min_altitude_deg = 0\n", 0.0, math.inf),
])
def test_a_missing_limit_never_cuts_in_before_the_given_one(write, old, new, min_alt, max_am):
    lim = load_site_profile(write(edited(old, new))).limits
    assert lim.min_altitude_deg == pytest.approx(min_alt, abs=1e-3)
    assert lim.max_airmass == pytest.approx(max_am, abs=1e-4)


def test_templates_carry_the_published_values_they_cite():
    # Patat 2003, Paranal: dark sky B 22.6, V 21.6, I 19.7; extinction B 0.23-0.25,
    # V 0.09-0.11, I 0.05.
    wide = resolve_site("template_4m_wide_field")
    assert dict(wide.sky.dark_mag_arcsec2) == {"B": 22.6, "V": 21.6, "Ic": 19.7}
    k = wide.sky.extinction_mag_per_airmass
    assert 0.23 <= k["B"] <= 0.25 and 0.09 <= k["V"] <= 0.11 and k["Ic"] == 0.05
    assert wide.filters["Ic"].band == "I"
    # Benn & Ellison 1998, La Palma, solar minimum: B 22.7, V 21.9, R 21.0, I 20.0;
    # extinction V 0.15 typical.
    small = resolve_site("template_small_ccd")
    dark = small.sky.dark_mag_arcsec2
    assert (dark["B"], dark["V"], dark["R"], dark["I"]) == (22.7, 21.9, 21.0, 20.0)
    assert small.sky.extinction_mag_per_airmass["V"] == 0.15
    assert 0.4 <= small.telescope.aperture_m <= 1.0


# --------------------------------------------------------------------------
# Every validation path: (old text, new text, expected message after "x.toml: ")
# --------------------------------------------------------------------------

CASES = [
    # unknown tables and keys, with the close valid one suggested
    ("read_noise_e = 4.5", "read_nosie_e = 4.5",
     "[camera] unknown key read_nosie_e; did you mean read_noise_e?"),
    ("readout_s = 30\n", "readout_s = 30\naperture_m = 1\n",
     "[camera] unknown key aperture_m; aperture_m belongs in [telescope]"),
    ("bandwidth_angstrom = 890", "bandwith_angstrom = 890",
     "[filters.V] unknown key bandwith_angstrom; did you mean bandwidth_angstrom?"),
    ('notes = "Invented test site."', 'note = "Invented test site."',
     "unknown key note; did you mean notes?"),
    ("[telescope]\n", "[telescop]\n", "unknown table [telescop]; did you mean [telescope]?"),
    ("[sky.extinction_mag_per_airmass]", "[sky.extinction]",
     "[sky] unknown table [sky.extinction]; did you mean [sky.extinction_mag_per_airmass]?"),
    # missing required keys
    ("read_noise_e = 4.5\n", "", "[camera] read_noise_e is required but missing"),
    ('timezone = "America/Santiago"\n', "", "[site] timezone is required but missing"),
    ('name = "Test 1.5 m"\n', "", "[telescope] name is required but missing"),
    ("detector_pixels = [4096, 2048]\n", "", "[camera] detector_pixels is required but missing"),
    ("typical_seeing_arcsec = 0.8\n", "", "[sky] typical_seeing_arcsec is required but missing"),
    # wrong types; a boolean is not a number
    ("read_noise_e = 4.5", 'read_noise_e = "4.5"', '[camera] read_noise_e must be a number (got "4.5")'),
    ("gain_e_per_adu = 2", "gain_e_per_adu = true",
     "[camera] gain_e_per_adu must be a number, not a boolean (got true)"),
    ("latitude_deg = -24.5", "latitude_deg = false",
     "[site] latitude_deg must be a number, not a boolean (got false)"),
    ("settle_s = 6", "settle_s = [6]", "[telescope] settle_s must be a number (got [6])"),
    ("typical_seeing_arcsec = 0.8", "typical_seeing_arcsec = {fwhm = 0.8}",
     "[sky] typical_seeing_arcsec must be a number (got a table)"),
    ("elevation_m = 2400", "elevation_m = 2024-05-01",
     "[site] elevation_m must be a number (got 2024-05-01)"),
    ('name = "Test CCD"', "name = 5", "[camera] name must be a string (got 5)"),
    ('name = "Test CCD"', 'name = "  "', "[camera] name must not be empty"),
    ('notes = "Invented test site."', "notes = 3", "notes must be a string (got 3)"),
    ("settle_s = 6", "settle_s = nan", "[telescope] settle_s must be a finite number (got nan)"),
    ("readout_s = 30", "readout_s = inf", "[camera] readout_s must be a finite number (got inf)"),
    ("readout_s = 30", "readout_s = 1" + "0" * 400,
     "[camera] readout_s must be a finite number (got 1000"),
    # out of range: each class of bound
    ("read_noise_e = 4.5", "read_noise_e = -3", "[camera] read_noise_e must be ≥ 0 (got -3)"),
    ("pixel_scale_arcsec = 0.3", "pixel_scale_arcsec = 0",
     "[camera] pixel_scale_arcsec must be > 0 (got 0)"),
    ("slew_rate_deg_s = 1.5", "slew_rate_deg_s = -1.5",
     "[telescope] slew_rate_deg_s must be > 0 (got -1.5)"),
    ("latitude_deg = -24.5", "latitude_deg = 95",
     "[site] latitude_deg must be between -90 and 90 (got 95)"),
    ("longitude_deg = 289.2", "longitude_deg = 360.5",
     "[site] longitude_deg must be between -180 and 360 (got 360.5)"),
    ("elevation_m = 2400", "elevation_m = 7000", "[site] elevation_m must be between -500 and 6000 (got 7000)"),
    ("min_altitude_deg = 30", "min_altitude_deg = -5",
     "[limits] min_altitude_deg must be between 0 and 90 (got -5)"),
    ("max_airmass = 2.2", "max_airmass = 0.9", "[limits] max_airmass must be ≥ 1 (got 0.9)"),
    ("sun_avoidance_deg = 50", "sun_avoidance_deg = 200",
     "[limits] sun_avoidance_deg must be between 0 and 180 (got 200)"),
    ("min_moon_separation_deg = 20", "min_moon_separation_deg = -1",
     "[limits] min_moon_separation_deg must be between 0 and 180 (got -1)"),
    ("aperture_m = 1.5", "aperture_m = 150", "[telescope] aperture_m must be > 0 and ≤ 40 (got 150)"),
    ("obstruction_diameter_m = 0.5", "obstruction_diameter_m = 1.5",
     "[telescope] obstruction_diameter_m must be ≥ 0 and < aperture_m (1.5) (got 1.5)"),
    ("acquisition_s = 40", "acquisition_s = -40", "[telescope] acquisition_s must be ≥ 0 (got -40)"),
    ("linearity_limit_e = 100000", "linearity_limit_e = 130000",
     "[camera] linearity_limit_e must be > 0 and ≤ full_well_e (120000) (got 130000)"),
    ("full_well_e = 120000", "full_well_e = 0", "[camera] full_well_e must be > 0 (got 0)"),
    ("dark_e_per_s = 0.001", "dark_e_per_s = -0.001", "[camera] dark_e_per_s must be ≥ 0 (got -0.001)"),
    ("throughput = 0.4", "throughput = 1.2", "[filters.V] throughput must be > 0 and ≤ 1 (got 1.2)"),
    ("throughput = 0.4", "throughput = 0", "[filters.V] throughput must be > 0 and ≤ 1 (got 0)"),
    ("bandwidth_angstrom = 890", "bandwidth_angstrom = 0",
     "[filters.V] bandwidth_angstrom must be > 0 (got 0)"),
    ("zero_point_mag = 24.1", "zero_point_mag = 50",
     "[filters.Ic] zero_point_mag must be between 10 and 35 (got 50)"),
    ("typical_seeing_arcsec = 0.8", "typical_seeing_arcsec = 12",
     "[sky] typical_seeing_arcsec must be > 0 and ≤ 10 (got 12)"),
    ("V = 21.7", "V = 30", "[sky.dark_mag_arcsec2] V must be between 10 and 25 (got 30)"),
    ("V = 0.12", "V = -0.1", "[sky.extinction_mag_per_airmass] V must be between 0 and 2 (got -0.1)"),
    ("V = 0.12", 'V = "0.12"', '[sky.extinction_mag_per_airmass] V must be a number (got "0.12")'),
    # choices
    ('twilight = "nautical"', 'twilight = "nautica"',
     '[limits] twilight must be one of "civil", "nautical", "astronomical" (got "nautica"); '
     'did you mean "nautical"?'),
    ('band = "I"', 'band = "i"', '[filters.Ic] band must be one of "U", "B", "V", "R", "I", "J", '
     '"H", "Ks" (got "i"); did you mean "I"?'),
    ('band = "I"\n', "", '[filters.Ic] band is required: the name "Ic" is not a standard band'),
    # time zone
    ('timezone = "America/Santiago"', 'timezone = "America/Santago"',
     '[site] timezone must be an IANA time zone name such as "America/Santiago" or "UTC" '
     '(got "America/Santago"); did you mean "America/Santiago"?'),
    ('timezone = "America/Santiago"', 'timezone = "UTC-4"',
     '(got "UTC-4"); for a fixed offset use "Etc/GMT+4"'),
    ('timezone = "America/Santiago"', 'timezone = "America"', '[site] timezone must be an IANA'),
    ('timezone = "America/Santiago"', 'timezone = "../../etc/passwd"', '[site] timezone must be an IANA'),
    # horizon mask
    ("[180, 3]", "[80, 3]", "[limits] horizon point 3 azimuth must be > 90 (the previous point's): "
     "azimuths increase strictly (got 80)"),
    ("[0, 5], [90, 12.5]", "[0, 5], [0, 12.5]", "[limits] horizon point 2 azimuth must be > 0"),
    ("[270, -2]", "[270, -20]", "[limits] horizon point 4 altitude must be between -10 and 90 (got -20)"),
    ("[270, -2]", "[370, -2]", "[limits] horizon point 4 azimuth must be between 0 and 360 (got 370)"),
    ("[90, 12.5]", "[90]", "[limits] horizon point 2 must be a pair [azimuth_deg, altitude_deg] (got [90])"),
    ("[90, 12.5]", "[true, 12.5]", "[limits] horizon point 2 azimuth must be a number, not a boolean"),
    ("[270, -2]]", "[270, -2], [360, 7]]",
     "[limits] horizon altitudes at azimuth 0 and 360 (one direction) must agree (got 5 and 7)"),
    ("horizon = [[0, 5], [90, 12.5], [180, 3], [270, -2]]", "horizon = []",
     "[limits] horizon must be a non-empty array of [azimuth_deg, altitude_deg] pairs (got [])"),
    # detector and FITS keywords
    ("[4096, 2048]", "[4096, 2048.0]",
     "[camera] detector_pixels must be [nx, ny], two positive integers (got [4096, 2048.0])"),
    ("[4096, 2048]", "[4096]", "[camera] detector_pixels must be [nx, ny], two positive integers (got [4096])"),
    ("[4096, 2048]", "[0, 2048]", "(got [0, 2048])"),
    ("[4096, 2048]", "[true, 2048]", "(got [true, 2048])"),
    ('FILTER = "FILTNAME"', 'FILTER = "FILTER NAME"',
     '[camera.fits_keywords] FILTER: "FILTER NAME" is not a FITS keyword'),
    ('FILTER = "FILTNAME"', "FILTER = 3",
     "[camera.fits_keywords] FILTER must be a string naming this camera's keyword (got 3)"),
    ('FILTER = "FILTNAME"', '"filter name" = "FILTNAME"',
     '[camera.fits_keywords] "filter name": "filter name" is not a FITS keyword'),
    # filters and their sky values
    ("zero_point_mag = 24.1\n", "",
     "[filters.Ic] needs throughput (0 < t ≤ 1) or zero_point_mag (magnitude giving 1 e-/s), or both"),
    ("[filters.Ks]\nthroughput = 0.3\nzero_point_mag = 23.0\n", "[filters.Ks]\n", "[filters.Ks] needs throughput"),
    ("Ks = 13\n", "", "[sky.dark_mag_arcsec2] has no value for filter Ks (every filter in [filters] needs one)"),
    ("Ks = 0.08\n", "", "[sky.extinction_mag_per_airmass] has no value for filter Ks"),
    ("Ic = 19.9\n", "Ic = 19.9\nR = 20.9\n",
     "[sky.dark_mag_arcsec2] R is not a filter in [filters] (filters: V, Ic, Ks)"),
    ("Ic = 0.05\n", "IC = 0.05\n",
     "[sky.extinction_mag_per_airmass] IC is not a filter in [filters]; did you mean Ic?"),
    # invalid TOML: the line number and the line itself
    ("read_noise_e = 4.5", "read_noise_e = ",
     "invalid TOML at line {read_noise_e}: Invalid value (the line reads: read_noise_e =)"),
    ("read_noise_e = 4.5", "read_noise_e = 4.5\nread_noise_e = 5",
     "invalid TOML at line {read_noise_e+1}: Cannot overwrite a value (the line reads: read_noise_e = 5)"),
    ("[telescope]", "[telescope", "invalid TOML at line {[telescope]}: Expected ']'"),
    # tomllib itself would name a later line (an unclosed array) or "end of document"
    ("[0, 5], [90, 12.5]", "[0, 5], [90, 12.5",
     "invalid TOML at line {horizon}: Unclosed array (the line reads: horizon = [[0, 5], [90, 12.5,"),
    ('name = "Test CCD"', "name = 'Test CCD", "invalid TOML at line {name = \"Test CCD}: Expected"),
    ('notes = "Invented test site."', 'notes = """Invented test site."',
     "invalid TOML at line {notes}: Unterminated string"),
    ("settle_s = 6", "settle_s = " + "[" * 3000, "invalid TOML at line {settle_s}: arrays or tables nested too deeply"),
]


def _line_of(text: str) -> int:
    return next(i for i, line in enumerate(FULL.splitlines(), 1) if line.startswith(text))


@pytest.mark.parametrize("old, new, expected", CASES, ids=[f"{i}-{c[2][:40]}" for i, c in enumerate(CASES)])
def test_bad_profile_message_names_file_table_key_and_value(write, old, new, expected):
    # line numbers in the expected text are looked up in the fixture, not hard-coded
    expected = re.sub(r"\{(.+?)(\+1)?\}", lambda m: str(_line_of(m.group(1)) + bool(m.group(2))), expected)
    err = error_of(write(edited(old, new)))
    assert isinstance(err, InputError) and isinstance(err, ValueError)
    assert err.source == SOURCE
    assert str(err).startswith(f"{SOURCE}: ")
    assert expected in str(err), str(err)


def test_the_brief_example_message_exactly(write):
    err = error_of(write(edited("read_noise_e = 4.5", "read_noise_e = -3")))
    assert str(err) == "site_profiles/x.toml: [camera] read_noise_e must be ≥ 0 (got -3)"


@pytest.mark.parametrize("table, expected", [
    ("site", "missing required table [site]"),
    ("telescope", "missing required table [telescope]"),
    ("sky.dark_mag_arcsec2", "missing required table [sky.dark_mag_arcsec2]"),
    # [camera.fits_keywords] and [sky.*] still define [camera] and [sky] (TOML rule)
    ("camera", "[camera] name is required but missing"),
    ("sky", "[sky] typical_seeing_arcsec is required but missing"),
])
def test_missing_required_table(write, table, expected):
    err = error_of(write(without_table(table)))
    assert str(err) == f"{SOURCE}: {expected}"


def test_limits_table_is_optional(write):
    assert load_site_profile(write(without_table("limits"))).limits.min_altitude_deg == 20


@pytest.mark.parametrize("data, expected", [
    ({"site": 3}, "[site] must be a table (got 3)"),
    ({"site": {}}, "[site] name is required but missing"),
    (["not", "a", "table"], "a site profile must be a TOML table"),
])
def test_parse_site_profile_on_mappings(data, expected):
    with pytest.raises(SiteProfileError) as info:
        parse_site_profile(data, "memory")
    assert str(info.value).startswith(f"memory: {expected}")


def test_filters_table_must_hold_a_filter():
    data = tomllib.loads(FULL)
    data["filters"] = {}
    with pytest.raises(SiteProfileError, match=r"^m: \[filters\] must hold at least one filter"):
        parse_site_profile(data, "m")
    data["filters"] = {"V": 1}
    with pytest.raises(SiteProfileError, match=r"^m: \[filters.V\] must be a table \(got 1\)"):
        parse_site_profile(data, "m")


def test_file_missing_folder_and_not_utf8(write, tmp_path):
    write(FULL)
    assert str(error_of("site_profiles/none.toml")) == "site_profiles/none.toml: no such file"
    assert "is a folder" in str(error_of("site_profiles"))
    err = error_of(write(FULL.encode("utf-8").replace(b"Test CCD", b"Test \xff CCD")))
    line = _line_of('name = "Test CCD"')
    assert str(err).startswith(f"{SOURCE}: invalid TOML at line {line}: not UTF-8")


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0, reason="root can read any file")
def test_unreadable_file(write, tmp_path):
    write(FULL)
    (tmp_path / SOURCE).chmod(0)
    assert "cannot be read (Permission denied)" in str(error_of(SOURCE))


def test_a_byte_order_mark_is_accepted(write):
    assert load_site_profile(write("\ufeff" + FULL)).name == "Test Site (invented)"


# --------------------------------------------------------------------------
# resolve_site and site_from_coordinates
# --------------------------------------------------------------------------

def test_resolve_site_path_relative_and_absolute(write, tmp_path):
    write(FULL)
    assert resolve_site(SOURCE).location.latitude_deg == -24.5
    assert resolve_site(str(tmp_path / SOURCE)).source == str(tmp_path / SOURCE)
    # a .toml name that is not there is a missing file, not an unknown stem
    assert str(error_of("gone.toml")) == "gone.toml: no such file"
    with pytest.raises(SiteProfileError, match=r"^gone\.toml: no such file$"):
        resolve_site("gone.toml")


def test_resolve_site_bundled_stem():
    demo = resolve_site("demo")
    assert demo.source == "site_profiles/demo.toml"  # as users see it, wherever it is installed
    assert resolve_site("DEMO") == demo


@pytest.mark.parametrize("spec, lat, lon, elev", [
    ("-30.2,-70.8,2200", -30.2, -70.8, 2200.0),
    ("-30.2,-70.8", -30.2, -70.8, 0.0),
    (" -30.2 , 289.2 ", -30.2, -70.8, 0.0),  # east-positive 289.2 = 70.8 W
    ("\u221230.2,\u221270.8", -30.2, -70.8, 0.0),  # typeset minus signs, as pasted
])
def test_resolve_site_coordinates(spec, lat, lon, elev):
    site = resolve_site(spec)
    loc = site.location
    assert (loc.latitude_deg, loc.elevation_m) == (lat, elev)
    assert loc.longitude_deg == pytest.approx(lon)
    assert loc.timezone == "Etc/GMT+5"  # -70.8° / 15 = -4.7 h: UTC-5, nearest mean solar time
    assert loc.name == "site at -30.200°, -70.800°"
    generic = load_site_profile(site_profiles_dir() / "generic.toml")
    assert site.telescope == generic.telescope and site.camera == generic.camera
    assert site.sky == generic.sky and site.filters == generic.filters
    assert 0.8 <= site.telescope.aperture_m <= 1.5 and "CCD" in site.camera.name
    assert "generic" in site.notes


def test_coordinates_with_timezone():
    site = site_from_coordinates("19.8,-155.5,4200", timezone="Pacific/Honolulu")
    assert site.location.timezone == "Pacific/Honolulu"
    assert site.name == "site at 19.800°, -155.500°"
    assert resolve_site("demo", timezone="UTC").location.timezone == "UTC"


@pytest.mark.parametrize("spec, expected", [
    ("demp", 'unknown site "demp": not a profile file, a bundled profile or LAT,LON[,ELEV_M]; '
             "did you mean demo? (bundled: "),
    ("nowhere", 'unknown site "nowhere"'),
    ("", "empty site"),
    ("abc,def", 'site "abc,def": latitude "abc" is not a decimal number'),
    ("-30.2,west", 'site "-30.2,west": longitude "west" is not a decimal number'),
    ("nan,0", 'latitude "nan" is not a decimal number'),
    ("-95,10", 'site "-95,10": latitude must be between -90 and 90 (got "-95")'),
    ("10,400", "longitude must be between -180 and 360"),
    ("10,20,9000", "elevation must be between -500 and 6000"),
    ("1,2,3,4", 'site "1,2,3,4": expected LAT,LON or LAT,LON,ELEV_M'),
    ("-30,", 'longitude "" is not a decimal number'),
])
def test_resolve_site_garbage(spec, expected):
    with pytest.raises(SiteProfileError) as info:
        resolve_site(spec)
    assert expected in str(info.value)


def test_unknown_stem_lists_every_bundled_name():
    with pytest.raises(SiteProfileError) as info:
        resolve_site("templat_small_ccd")
    message = str(info.value)
    assert "did you mean template_small_ccd" in message
    assert all(name in message for name in bundled_site_names())


def test_the_fixed_offset_zone_suggested_for_utc_minus_4_is_utc_minus_4():
    # tzdata's Etc/GMT+4 is four hours *behind* UTC (POSIX sign convention)
    from datetime import datetime, timedelta
    from zoneinfo import ZoneInfo

    assert ZoneInfo("Etc/GMT+4").utcoffset(datetime(2027, 5, 12)) == timedelta(hours=-4)


def test_bad_timezone_argument():
    with pytest.raises(SiteProfileError, match='timezone must be an IANA .* \\(got "Mars/Olympus"\\)'):
        resolve_site("-30,-70", timezone="Mars/Olympus")
    with pytest.raises(SiteProfileError, match="did you mean \"Europe/Paris\""):
        resolve_site("demo", timezone="Europe/Pari")


# --------------------------------------------------------------------------
# Garbage never gives anything but SiteProfileError
# --------------------------------------------------------------------------

FULL_LINES = FULL.splitlines()


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=st.one_of(st.text(max_size=300), st.binary(max_size=300).map(lambda b: b.decode("latin-1"))))
def test_arbitrary_text_gives_only_site_profile_error(tmp_path_factory, text):
    path = tmp_path_factory.mktemp("garbage") / "x.toml"
    path.write_bytes(text.encode("utf-8", "surrogatepass"))
    try:
        load_site_profile(path)
    except SiteProfileError as err:
        assert str(err).startswith(f"{path}: ")
        assert str(err).isprintable(), "the CLI prints one line"


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(line=st.integers(0, len(FULL_LINES) - 1), value=st.text(max_size=40))
def test_one_garbled_line_gives_only_site_profile_error(tmp_path_factory, line, value):
    # Garbage after "=" on one line of a valid profile reaches the validator far more
    # often than random text does.
    lines = list(FULL_LINES)
    key = lines[line].split("=", 1)[0]
    lines[line] = f"{key}= {value}" if "=" in lines[line] else value
    path = tmp_path_factory.mktemp("garbled") / "x.toml"
    path.write_bytes("\n".join(lines).encode("utf-8", "surrogatepass"))
    try:
        load_site_profile(path)
    except SiteProfileError as err:
        assert str(err).isprintable()


TOML_VALUES = st.recursive(
    st.one_of(st.booleans(), st.integers(), st.floats(), st.text(max_size=20),
              st.datetimes(), st.dates()),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner, max_size=4),
    max_leaves=8,
)


def _paths(node, prefix=()):
    yield prefix
    if isinstance(node, dict):
        for key, value in node.items():
            yield from _paths(value, prefix + (key,))


ALL_PATHS = [p for p in _paths(tomllib.loads(FULL)) if p]


@settings(max_examples=300, deadline=None)
@given(path=st.sampled_from(ALL_PATHS), value=TOML_VALUES, delete=st.booleans())
def test_any_one_changed_value_gives_a_profile_or_site_profile_error(path, value, delete):
    data = tomllib.loads(FULL)
    node = data
    for key in path[:-1]:
        node = node[key]
    if delete:
        del node[path[-1]]
    else:
        node[path[-1]] = value
    try:
        profile = parse_site_profile(data, "mutated")
    except SiteProfileError as err:
        assert str(err).startswith("mutated: ") and str(err).isprintable()
    else:
        assert all(f.band in BANDS for f in profile.filters.values())
        assert -180 <= profile.location.longitude_deg <= 180


@settings(max_examples=150, deadline=None)
@given(spec=st.one_of(st.text(max_size=60), st.from_regex(r"-?\d{1,3}(\.\d*)?,-?\d{1,3}(\.\d*)?(,-?\d{1,5})?",
                                                          fullmatch=True)))
def test_any_site_spec_gives_a_profile_or_site_profile_error(spec):
    try:
        profile = resolve_site(spec)
    except SiteProfileError as err:
        assert str(err).isprintable()
    else:
        assert -90 <= profile.location.latitude_deg <= 90
        assert -180 <= profile.location.longitude_deg <= 180


def test_psf_is_a_sky_choice_with_a_moffat_default(write):
    # Moffat β = 4.765 by default: Trujillo et al. 2001 (tests/REFERENCES.md,
    # "Signal-to-noise and the point-spread function").
    default = load_site_profile(write(FULL))
    assert (default.sky.psf, default.sky.moffat_beta) == ("moffat", 4.765)
    own = load_site_profile(write(edited("typical_seeing_arcsec",
                                         'psf = "moffat"\nmoffat_beta = 3\ntypical_seeing_arcsec')))
    assert (own.sky.psf, own.sky.moffat_beta) == ("moffat", 3.0)
    gauss = load_site_profile(write(edited("typical_seeing_arcsec", 'psf = "gaussian"\ntypical_seeing_arcsec')))
    assert gauss.sky.psf == "gaussian"
    for text, message in (('psf = "moffit"', 'did you mean "moffat"'), ("moffat_beta = 1", "moffat_beta must be > 1"),
                          ('psf = "gaussian"\nmoffat_beta = 3', 'applies only to psf = "moffat"')):
        err = error_of(write(edited("typical_seeing_arcsec", text + "\ntypical_seeing_arcsec")))
        assert "[sky]" in str(err) and message in str(err), str(err)


@pytest.mark.parametrize("lon, zone", [(0.0, "UTC"), (7.4, "UTC"), (7.6, "Etc/GMT-1"), (-155.47, "Etc/GMT+10"),
                                       (139.7, "Etc/GMT-9"), (179.9, "Etc/GMT-12"), (-179.9, "Etc/GMT+12")])
def test_coordinate_site_clock_is_the_hour_nearest_mean_solar_time(lon, zone):
    # mean solar time runs longitude/15 h ahead of UTC; tzdata's Etc/GMT+N is N hours
    # behind UTC (zoneinfo, a reference library): local noon within 30 min of solar noon
    from datetime import datetime
    from zoneinfo import ZoneInfo

    site = site_from_coordinates(f"10,{lon}")
    assert site.location.timezone == zone
    offset_h = ZoneInfo(zone).utcoffset(datetime(2027, 1, 1)).total_seconds() / 3600
    assert abs(offset_h - lon / 15.0) <= 0.5


def test_a_folder_named_like_a_bundled_profile_does_not_hide_it(tmp_path, monkeypatch):
    """A copy of the demo's files in ./demo (as a new user makes one) leaves ``--site demo``
    the bundled profile: a folder is never a profile."""
    from planner.inputs.sites import resolve_site

    (tmp_path / "demo").mkdir()
    monkeypatch.chdir(tmp_path)
    assert "fictional" in resolve_site("demo").name
    with pytest.raises(SiteProfileError, match="is a folder"):
        resolve_site("demo/")
