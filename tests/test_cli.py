"""The command line as a user meets it: help, version, JSON contracts, one-line errors.

Runs ``planner.cli.main`` in-process (the console script calls the same function).
"""

from __future__ import annotations

import json
import re

import pytest

from planner import __version__
from planner.cli import join_dash_values, main

ISO_Z = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$")


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_version_and_help(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["--version"])
    assert exc.value.code == 0
    assert __version__ in capsys.readouterr().out
    code, out, _ = run(capsys)
    assert code == 0 and "night" in out and "observability" in out


def test_site_value_with_a_leading_minus_and_a_space():
    assert join_dash_values(["night", "--site", "-30.2,-70.8,2200", "--date", "x"]) == [
        "night",
        "--site=-30.2,-70.8,2200",
        "--date",
        "x",
    ]


def test_night_json_contract(capsys):
    code, out, err = run(
        capsys, "night", "--site", "-30.2,-70.8,2200", "--timezone", "America/Santiago",
        "--target", "47 Tuc", "--target", "ngc 3201", "--date", "2027-01-10", "--json",
    )
    assert code == 0
    doc = json.loads(out)
    assert doc["site"]["latitude_deg"] == -30.2 and doc["site"]["timezone"] == "America/Santiago"
    assert doc["night"] == "2027-01-10"
    for key in ("set", "rise"):
        assert ISO_Z.match(doc["sun"][key])
    for kind in ("civil", "nautical", "astronomical"):
        assert set(doc["twilight"][kind]) == {"evening", "morning"}
    assert 0 < doc["dark_hours"] < 12
    assert set(doc["moon"]) >= {"illumination", "phase_angle_deg", "rise", "set"}
    assert set(doc["constraints"]) >= {"min_altitude_deg", "max_airmass", "twilight", "min_moon_separation_deg"}
    names = [t["name"] for t in doc["targets"]]
    assert names == ["47 Tuc", "NGC 3201"]
    for t in doc["targets"]:
        assert set(t) >= {
            "name", "ra_deg", "dec_deg", "transit", "max_altitude_deg", "min_airmass",
            "observable_hours", "window", "moon_separation_deg",
        }
        assert t["observable_hours"] > 0 and ISO_Z.match(t["window"]["start"])
        # The window lies inside the usable (dark) window of the night.
        assert doc["usable_window"]["start"] <= t["window"]["start"] <= t["window"]["end"] <= doc["usable_window"]["end"]


def test_night_text_is_a_table_in_local_time_and_utc(capsys):
    code, out, _ = run(capsys, "night", "--site", "demo", "--target", "NGC 1851", "--date", "2027-01-10")
    assert code == 0
    assert "local" in out and "UTC" in out and "NGC 1851" in out
    assert "limits and rules" in out  # the caution is always printed
    assert max(len(line) for line in out.splitlines()) <= 80


def test_midnight_sun_is_a_normal_answer(capsys):
    code, out, _ = run(
        capsys, "night", "--site", "69.6,18.9,100", "--timezone", "Europe/Oslo",
        "--target", "M 13", "--date", "2027-06-20", "--json",
    )
    assert code == 0
    doc = json.loads(out)
    assert doc["sun"] == {"set": None, "rise": None}
    assert doc["dark_hours"] == 0
    assert doc["targets"][0]["observable_hours"] == 0 and doc["targets"][0]["window"]["start"] is None


def test_observability_json_contract(capsys):
    code, out, _ = run(
        capsys, "observability", "--site", "demo", "--target", "NGC 104", "--target", "NGC 2808",
        "--start", "2027-01-01", "--end", "2027-01-10", "--json",
    )
    assert code == 0
    doc = json.loads(out)
    assert [t["name"] for t in doc["targets"]] == ["NGC 104", "NGC 2808"]
    for t in doc["targets"]:
        assert len(t["nights"]) == 10 and t["nights"][0]["night"] == "2027-01-01"
        assert t["total_hours"] == pytest.approx(sum(n["observable_hours"] for n in t["nights"]), abs=0.01)
        assert t["best_night"] in {n["night"] for n in t["nights"]}


@pytest.mark.parametrize(
    "argv, fragment",
    [
        (["night", "--site", "demo", "--target", "M 13", "--date", "2027-13-01"], "--date"),
        # astropy's built-in Sun and Moon (ERFA epv00/moon98) cover 1900-2100 only.
        (["night", "--site", "demo", "--target", "M 13", "--date", "1850-06-01"], "1900"),
        (["night", "--site", "demo", "--target", "NGC 99999", "--date", "2027-01-01"], "NGC 99999"),
        (["night", "--site", "nosuchsite", "--target", "M 13", "--date", "2027-01-01"], "nosuchsite"),
        (["night", "--site", "91,0", "--target", "M 13", "--date", "2027-01-01"], "91"),
        (["night", "--site", "demo", "--date", "2027-01-01"], "target"),
        (["night", "--site", "demo", "--target", "M 13", "--date", "2027-01-01", "--max-airmass", "0.5"], "--max-airmass"),
        (["night", "--site", "demo", "--target", "M 13", "--date", "2027-01-01", "--plot", "x.gif"], "--plot"),
        (["observability", "--site", "demo", "--target", "M 13", "--start", "2027-02-01", "--end", "2027-01-01"], "before"),
        (["night", "--site", "demo", "--targets", "nosuchfile.csv", "--date", "2027-01-01"], "nosuchfile.csv"),
        (["night", "--site", "demo", "--target", "M 13", "--date", "2027-01-01", "--nosuchoption"], "nosuchoption"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(capsys, argv, fragment):
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse usage errors exit directly
        code = exc.code
    out, err = capsys.readouterr()
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("gcplan: error: ") and fragment in lines[0]
    assert "Traceback" not in err


@pytest.mark.slow
def test_demo_writes_its_folder(tmp_path, capsys):
    out_dir = tmp_path / "demo-out"
    code, out, _ = run(capsys, "demo", "--out", str(out_dir), "--date", "2027-01-05")
    assert code == 0
    for name in ("night.txt", "night.json", "night.png", "semester.txt", "semester.png",
                 "exposures.txt", "phases.txt", "README.txt", "proposal/proposal.pdf", "proposal/proposal.md",
                 "proposal/proposal.csv", "proposal/proposal.tex", "proposal/proposal.json"):
        assert (out_dir / name).stat().st_size > 0, name
    assert "INVENTED" in (out_dir / "README.txt").read_text()
    # the exposures say which PSF, extinction law and HB level they use (README conventions)
    header = " ".join((out_dir / "exposures.txt").read_text().split("cluster   level")[0].split())
    for words in ("Moffat, beta = 4.765", "Cardelli, Clayton & Mathis 1989", "R_V = 3.1", "observed V_HB",
                  "crowding"):
        assert words in header, words
    night = json.loads((out_dir / "night.json").read_text())
    assert night["night"] == "2027-01-05" and len(night["targets"]) == 5
    assert not any("5904" in t["name"] for t in night["targets"])
    # The exposure table: units in the columns (ECSV unit fields), whole frames.
    from astropy.table import Table

    table = Table.read(out_dir / "exposures.ecsv", format="ascii.ecsv")
    assert str(table["frame_time"].unit) == "s" and str(table["exposure_time"].unit) == "s"
    assert str(table["saturation_time"].unit) == "s" and str(table["magnitude"].unit) == "mag"
    assert table["frames"].dtype.kind == "i" and min(table["frames"]) >= 1
    assert "unit: s" in (out_dir / "exposures.ecsv").read_text()
    done = ~table["frames"].mask if hasattr(table["frames"], "mask") else slice(None)
    assert all(abs(e - n * t) < 1e-6 * e for e, n, t in zip(table["exposure_time"][done], table["frames"][done],
                                                            table["frame_time"][done]))


def test_top_level_help_names_every_kind_of_work(capsys):
    with pytest.raises(SystemExit):
        main(["--help"])
    out = capsys.readouterr().out
    description = " ".join(out.split("positional arguments")[0].lower().split())
    for words in ("almanac", "semester", "exposure", "phase coverage", "period recovery", "night plans",
                  "campaigns", "observing log", "demo", "terminal app"):
        assert words in description, words


def test_help_lists_every_command_with_its_one_line_help(capsys):
    """Only the chosen sub-command's parser is built for a run; ``--help`` still builds them all."""
    import argparse

    from planner.cli import COMMAND_NAMES, build_parser

    with pytest.raises(SystemExit) as exc:
        main(["--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    choices = next(a for a in build_parser()._actions if isinstance(a, argparse._SubParsersAction))
    helps = {c.dest: c.help for c in choices._choices_actions}
    assert sorted(helps) == sorted(COMMAND_NAMES)
    for name, text in helps.items():
        assert text and " ".join(text.split())[:40] in " ".join(out.split()), name


@pytest.mark.parametrize("name", ["night", "observability", "expose", "phases", "recover", "demo", "log",
                                  "schedule", "campaign", "proposal", "replan", "app"])
def test_each_command_help_is_its_own_parser_whole(capsys, name):
    from planner.cli import build_parser

    with pytest.raises(SystemExit) as exc:
        main([name, "--help"])
    assert exc.value.code == 0
    alone = capsys.readouterr().out
    assert alone.startswith(f"usage: gcplan {name} ")
    with pytest.raises(SystemExit):
        build_parser().parse_args([name, "--help"])  # from the parser of every command
    assert capsys.readouterr().out == alone


def test_unknown_command_is_one_line_and_status_2(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["nigth", "--site", "demo"])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("gcplan: error: ") and "'night'" in err and "'app'" in err
