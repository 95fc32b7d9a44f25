"""Tests for planner.inputs.variable_files and the ``gcplan phases`` command."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.errors import InputError
from planner.inputs.variable_files import VariablesError, read_times, read_variables

DATA = Path(__file__).parent / "data"
ROOT = Path(__file__).resolve().parents[1]
HEADER = "id,period_d,epoch_hjd,ra_deg,dec_deg\n"


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# ---------------------------------------------------------------------------------
# Good input


def test_reads_csv_fixture_and_resolves_cluster():
    stars = read_variables(DATA / "variables_good.csv")
    assert [s.id for s in stars] == ["t-ab1", "t-c1", "t-ab2"]
    assert stars[1].type == "RRc"  # case of "rrc" normalised
    assert stars[1].mean_mag is None and stars[0].amplitude_mag == 1.05
    # t-ab2 has only its cluster: the position is the catalog centre of NGC 3201,
    # which galpy's named-object table (Baumgardt et al. compilation) puts at
    # ra 154.403, dec -46.412 (tolerance: the table's 0.001° rounding plus catalog differences).
    galpy_orbit = pytest.importorskip("galpy.orbit")
    table = json.loads((Path(galpy_orbit.__file__).parent / "named_objects.json").read_text())
    ref = table["NGC3201"]
    assert stars[2].ra_deg == pytest.approx(ref["ra"], abs=0.01)
    assert stars[2].dec_deg == pytest.approx(ref["dec"], abs=0.01)


def test_reads_demo_variables_labelled_invented():
    path = ROOT / "targets" / "demo" / "variables.ecsv"
    stars = read_variables(path)
    assert len(stars) >= 30
    assert {s.cluster for s in stars} == {"NGC 104", "NGC 362", "NGC 1851", "NGC 2808", "NGC 3201"}
    assert "INVENTED" in path.read_text()
    assert all("inv" in s.id for s in stars)
    assert all(0.2 <= s.period_d <= 1.0 for s in stars)


def test_reads_times_iso_and_jd():
    iso = read_times(DATA / "variables_times.csv")
    jd = read_times(DATA / "variables_times_jd.ecsv")
    assert iso.scale == "utc" and iso.size == 3
    assert iso[1].isot == "2027-06-10T04:30:00.000"
    # JD 2461566.625 is 2027-06-10 03:00 UTC (JD 2461566.5 = 0h; + 0.125 d = 3 h).
    assert jd[0].isot == "2027-06-10T03:00:00.000"
    np.testing.assert_allclose(iso.jd[:2], jd.jd[:2], atol=1e-9)


def test_case_insensitive_columns(tmp_path):
    path = _write(tmp_path, "v.csv", "ID, Period_D, EPOCH_HJD, RA_deg, Dec_Deg\nx, 0.5, 2461000.1, 10.0, -20.0\n")
    assert read_variables(path)[0].dec_deg == -20.0


# ---------------------------------------------------------------------------------
# Bad input: every path names the file, the row, the column and the value


def _error(func, path) -> str:
    with pytest.raises(VariablesError) as info:
        func(path)
    message = str(info.value)
    assert str(path) in message  # the file
    assert "\n" not in message  # one line
    return message


@pytest.mark.parametrize(
    "body, expected",
    [
        (HEADER + "a,0,2461000.1,10,20\n", ["row 1 (line 2)", "'period_d'", "'0'", "positive"]),
        (HEADER + "a,0.5,2461000.1,10,20\nb,-0.3,2461000.1,10,20\n", ["row 2 (line 3)", "'-0.3'"]),
        (HEADER + "a,half,2461000.1,10,20\n", ["row 1", "'period_d'", "'half'", "not a number"]),
        (HEADER + "a,0.5,61000.123,10,20\n", ["row 1", "'epoch_hjd'", "'61000.123'", "modified or reduced"]),
        (HEADER + "a,0.5,3100000.0,10,20\n", ["'epoch_hjd'", "not a plausible"]),
        (HEADER + "a,0.5,2461000.1,10,95\n", ["'dec_deg'", "'95'"]),
        (HEADER + "a,0.5,2461000.1,400,20\n", ["'ra_deg'", "'400'"]),
        (HEADER + "a,0.5,2461000.1,10,\n", ["row 1", "dec_deg", "both"]),
        (HEADER + "a,0.5,2461000.1,10,20\na,0.6,2461000.1,10,20\n", ["row 2", "'a'", "repeats row 1"]),
        (HEADER + ",0.5,2461000.1,10,20\n", ["row 1", "'id'", "empty"]),
        (HEADER + "a,0.5,2461000.1,10\n", ["row 1 (line 2)", "4 values for 5 columns"]),
        ("id,period_d,ra_deg,dec_deg\na,0.5,10,20\n", ["missing column", "epoch_hjd", "found id, period_d"]),
        ("id,period_d,epoch_hjd\na,0.5,2461000.1\n", ["missing column", "ra_deg", "cluster"]),
        ("id,period_d,epoch_hjd,cluster\na,0.5,2461000.1,NGC 70788\n", ["row 1", "'cluster'", "'NGC 70788'", "not in the catalog"]),
        ("id,period_d,epoch_hjd,cluster\na,0.5,2461000.1,\n", ["row 1", "no position"]),
        (HEADER.strip() + ",type\na,0.5,2461000.1,10,20,Cepheid\n", ["'type'", "'Cepheid'", "RRab, RRc, RRd"]),
        (HEADER.strip() + ",amplitude_mag\na,0.5,2461000.1,10,20,-0.2\n", ["'amplitude_mag'", "'-0.2'"]),
        (HEADER, ["no rows"]),
        ("", ["empty"]),
        ("# %ECSV 1.0\n# ---\n# datatype: [oops\nid period_d\n", ["not a readable ECSV"]),
    ],
)
def test_bad_variables(tmp_path, body, expected):
    message = _error(read_variables, _write(tmp_path, "bad_variables.csv", body))
    for piece in expected:
        assert piece in message, (piece, message)


def test_missing_file_is_an_input_error(tmp_path):
    message = _error(read_variables, tmp_path / "nowhere.csv")
    assert "no such" in message


@pytest.mark.parametrize(
    "body, expected",
    [
        ("time_utc\n2027-06-10T03:00:00\n2027-06-31T03:00:00\n", ["row 2 (line 3)", "'time_utc'", "'2027-06-31T03:00:00'", "ISO 8601"]),
        ("time_utc\nyesterday\n", ["row 1", "'yesterday'"]),
        ("time_utc\n2027-06-10T03:00:00\n\"\"\n", ["row 2", "empty"]),
        ("jd_utc\n61566.625\n", ["row 1", "'jd_utc'", "'61566.625'", "modified or reduced"]),
        ("jd_utc\n2461566.6\nsoon\n", ["row 2", "'soon'", "not a number"]),
        ("when\n2027-06-10T03:00:00\n", ["no time_utc or jd_utc column", "found when"]),
        ("time_utc\n", ["no rows"]),
    ],
)
def test_bad_times(tmp_path, body, expected):
    message = _error(read_times, _write(tmp_path, "bad_times.csv", body))
    for piece in expected:
        assert piece in message, (piece, message)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=200))
def test_garbage_never_gives_a_traceback(tmp_path, text):
    path = tmp_path / "garbage.csv"
    path.write_text(HEADER + text if text[:1].isalpha() else text, encoding="utf-8")
    for reader in (read_variables, read_times):
        try:
            reader(path)
        except InputError:
            pass
