"""``gcplan expose --batch``: every row answered exactly as ``gcplan expose --json`` answers it alone.

Reference: the single command itself (each row's JSON compared with the single
command's JSON for the same inputs); the ECSV written is read back with
astropy's table reader.  Driven through ``register``/``run`` on a fresh parser,
with the CLI's error handling reproduced (as tests/test_expose_command.py does).
"""

from __future__ import annotations

import json

import pytest

from helpers.expose_runner import run_expose

# Several filters, a magnitude row, level rows, Moon, seeing, field radius, R_V, a period.
BATCH_CSV = """target,mag,level,filter,snr,airmass,moon_illumination,moon_separation_deg,moon_altitude_deg,seeing_arcsec,field_radius_arcmin,r_v,shortest_period_d
NGC 6397,,hb,V,50,,,,,,,,
NGC 6397,,tip,I,300,1.5,,,,,,,
,17.5,,V,80,,,,,,,,
47 Tuc,,turnoff,B,20,1.3,0.5,60,40,1.4,,,
NGC 6752,,hb,R,100,,,,,,3,3.4,0.3
,12,,I,200,2.0,,,,0.9,,,
M 3,,hb,V,150,1.1,0.9,30,50,,,,
"""
OPTION = {"target": "--target", "mag": "--mag", "level": "--level", "filter": "--filter", "snr": "--snr",
          "airmass": "--airmass", "moon_illumination": "--moon-illumination",
          "moon_separation_deg": "--moon-separation", "moon_altitude_deg": "--moon-altitude",
          "seeing_arcsec": "--seeing", "field_radius_arcmin": "--field-radius", "r_v": "--r-v",
          "shortest_period_d": "--shortest-period"}


gcplan = run_expose


def _single_argv(header, cells):
    argv = ["expose", "--site", "demo", "--json"]
    for name, cell in zip(header, cells):
        if cell:
            argv += [OPTION[name], cell]
    return argv


def test_each_row_equals_the_single_command(tmp_path, capsys):
    path = tmp_path / "questions.csv"
    path.write_text(BATCH_CSV)
    status, out, err = gcplan(["expose", "--site", "demo", "--batch", str(path), "--json"], capsys)
    assert status == 0, err
    rows = json.loads(out)
    lines = BATCH_CSV.strip().splitlines()
    header = lines[0].split(",")
    assert len(rows) == len(lines) - 1
    for line, row in zip(lines[1:], rows):
        status, single, err = gcplan(_single_argv(header, line.split(",")), capsys)
        assert status == 0, err
        assert row == json.loads(single), line
    # the rows asked for what they got: filters, levels, a magnitude
    assert [r["filter"] for r in rows] == ["V", "I", "V", "B", "R", "I", "V"]
    assert [r["level"] for r in rows] == ["hb", "tip", "user", "turnoff", "hb", "user", "hb"]
    assert rows[4]["cluster_surface_brightness_mag_arcsec2"] is not None and rows[4]["r_v"] == 3.4


def test_options_fill_empty_cells_and_ecsv_in_and_out(tmp_path, capsys):
    from astropy.table import Table

    csv_path = tmp_path / "q.csv"
    csv_path.write_text("target,mag,level,snr\nNGC 6397,,hb,\n,16,,40\n")
    status, out, err = gcplan(["expose", "--site", "demo", "--batch", str(csv_path), "--json", "--filter", "I",
                               "--snr", "70", "--airmass", "1.4"], capsys)
    assert status == 0, err
    rows = json.loads(out)
    for argv, row in zip([["--target", "NGC 6397", "--level", "hb", "--snr", "70"], ["--mag", "16", "--snr", "40"]],
                         rows):
        _, single, _ = gcplan(["expose", "--site", "demo", "--json", "--filter", "I", "--airmass", "1.4", *argv], capsys)
        assert row == json.loads(single)
    # the same questions as ECSV give the same answers; the table written reads back
    ecsv_in = tmp_path / "q.ecsv"
    Table.read(csv_path, format="ascii.csv").write(ecsv_in, format="ascii.ecsv")
    out_path = tmp_path / "answers.ecsv"
    status, out, err = gcplan(["expose", "--site", "demo", "--batch", str(ecsv_in), "--json", "--filter", "I",
                               "--snr", "70", "--airmass", "1.4", "--out", str(out_path)], capsys)
    assert status == 0, err
    assert json.loads(out) == rows
    table = Table.read(out_path, format="ascii.ecsv")
    assert list(table["frames"]) == [r["frames"] for r in rows]
    assert list(table["frame_s"]) == [r["frame_s"] for r in rows]
    assert list(table["inputs.airmass"]) == [1.4, 1.4]
    assert table["target"][0] == "NGC 6397" and table["target"].mask[1]
    csv_out = tmp_path / "answers.csv"
    status, out, _ = gcplan(["expose", "--site", "demo", "--batch", str(ecsv_in), "--filter", "I", "--snr", "70",
                             "--airmass", "1.4", "--out", str(csv_out)], capsys)
    assert status == 0 and "written:" in out and "NGC 6397, hb" in out
    back = Table.read(csv_out, format="ascii.csv")
    assert list(back["exposure_s"]) == [r["exposure_s"] for r in rows]


@pytest.mark.parametrize("content, words", [
    ("mag,filter,snr\n17,V,lots\n", "row 1, column snr must be a number (got 'lots')"),
    ("mag,filter,snr,airmass\n17,V,50,1.2\n17,V,50,0.5\n", "row 2: airmass must be at least 1"),
    ("mag,filter,snr\n17,V,50\n17,Z,50\n", "row 2: unknown filter 'Z'"),
    ("mag,filter,snr\n17,V,-5\n", "row 1: S/N goal must be a positive number (got -5)"),
    ("mag,filter\n17,V\n", "row 1: no snr"),
    ("target,level,filter,snr\nNGC 0000,hb,V,50\n", "row 1: unknown cluster"),
    ("mag,filter,snr\n17,V,50\n26,V,10000\n", "row 2: S/N 10000 on V = 26.00 is out of reach"),
    ("mag,filter,snr,shortest_period_d\n17,V,50,\n17,V,50,0\n", "row 2: shortest period (d) must be a positive"),
    ("mag,filtre,snr\n17,V,50\n", "column 'filtre' is not one the batch reads"),
    ("mag,filter,snr\n17,V\n", "row 1 has 2 cells for 3 columns"),
])
def test_bad_row_is_one_line_naming_file_row_and_column(tmp_path, capsys, content, words):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    out_path = tmp_path / "answers.csv"
    status, out, err = gcplan(["expose", "--site", "demo", "--batch", str(path), "--out", str(out_path)], capsys)
    assert status == 2 and out == ""
    assert err.startswith(f"gcplan: error: {path}: ") and words in err and err.count("\n") == 1, err
    assert not out_path.exists()
