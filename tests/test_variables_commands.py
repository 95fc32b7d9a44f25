"""Tests for the ``gcplan phases`` and ``gcplan recover`` commands (through planner.cli.main)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

DATA = Path(__file__).parent / "data"
ROOT = Path(__file__).resolve().parents[1]
HEADER = "id,period_d,epoch_hjd,ra_deg,dec_deg\n"


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _gcplan(argv, monkeypatch):
    """Run gcplan with these commands registered (until planner/cli.py lists them)."""
    import planner.cli

    modules = tuple(planner.cli.COMMAND_MODULES)
    for name in ("planner.commands.phases", "planner.commands.recover"):
        if name not in modules:
            modules += (name,)
    monkeypatch.setattr(planner.cli, "COMMAND_MODULES", modules)
    return planner.cli.main(argv)


# ---------------------------------------------------------------------------------
# gcplan phases


def test_phases_json_shape(monkeypatch, capsys):
    from astropy.time import Time

    from planner.variables.phases import heliocentric_jd, phases

    status = _gcplan(["phases", "--variables", str(DATA / "variables_good.csv"),
                      "--times", str(DATA / "variables_times.csv"), "--bins", "10", "--json"], monkeypatch)
    assert status == 0
    out = json.loads(capsys.readouterr().out)
    assert out["n_bins"] == 10 and isinstance(out["warnings"], list)
    star = out["stars"][0]
    for key in ("id", "period_d", "phases", "bins_covered", "largest_gap", "warnings"):
        assert key in star
    assert len(star["phases"]) == 3  # one per time, in input order
    times = Time(["2027-06-10T03:00:00", "2027-06-10T04:30:00", "2027-06-11T03:10:00.5"], scale="utc")
    expected = phases(heliocentric_jd(times, [322.4812], [12.1590]), [2461000.2310], [0.5731])[0]
    np.testing.assert_allclose(star["phases"], expected, atol=2e-6)
    assert out["stars"][1]["rising_branch_sampled"] is None  # RRc


def test_phases_half_day_nightly_warns(tmp_path, monkeypatch, capsys):
    variables = _write(tmp_path, "v.csv", HEADER + "halfday,0.5,2461000.1,322.49,12.17\nok,0.61,2461000.1,322.49,12.17\n")
    times = _write(tmp_path, "t.csv", "jd_utc\n" + "\n".join(f"{2461000.25 + n:.5f}" for n in range(20)) + "\n")
    assert _gcplan(["phases", "--variables", str(variables), "--times", str(times), "--json"], monkeypatch) == 0
    out = json.loads(capsys.readouterr().out)
    alias = [w for w in out["warnings"] if "close to 1/2 d" in w]
    assert len(alias) == 1 and alias[0].startswith("halfday:") and "drifts +0.0000" in alias[0]
    assert out["stars"][0]["bins_covered"] <= 2 and out["stars"][1]["bins_covered"] >= 12


def test_phases_plot_written(tmp_path, monkeypatch, capsys):
    from figure_reading import figures_saved

    plot = tmp_path / "phases.png"
    with figures_saved() as saved:
        status = _gcplan(["phases", "--variables", str(ROOT / "targets" / "demo" / "variables.ecsv"),
                          "--times", str(DATA / "variables_times.csv"), "--plot", str(plot)], monkeypatch)
    assert status == 0
    assert "NGC 1851" in capsys.readouterr().out
    # The figure written has a row per star of the file (what the rows show is checked
    # in tests/test_figures.py).
    assert plot.exists() and len(saved) == 1
    rows = [t.get_text().split()[0] for t in saved[0].axes[0].get_yticklabels()]
    from planner.inputs.variable_files import read_variables

    assert sorted(rows) == sorted(v.id for v in read_variables(ROOT / "targets" / "demo" / "variables.ecsv"))


@pytest.mark.parametrize(
    "extra, expected",
    [
        (["--bins", "0"], "--bins"),
        (["--alias-drift", "0.9"], "--alias-drift"),
        (["--plot", "out.gif"], "--plot"),
    ],
)
def test_phases_bad_options(monkeypatch, capsys, extra, expected):
    argv = ["phases", "--variables", str(DATA / "variables_good.csv"), "--times", str(DATA / "variables_times.csv")]
    assert _gcplan(argv + extra, monkeypatch) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("gcplan: error:") and expected in err[0]


def test_phases_bad_file_exit_2(tmp_path, monkeypatch, capsys):
    bad = _write(tmp_path, "v.csv", HEADER + "a,0.5,60000.5,10,20\n")
    status = _gcplan(["phases", "--variables", str(bad), "--times", str(DATA / "variables_times.csv")], monkeypatch)
    err = capsys.readouterr().err.strip().splitlines()
    assert status == 2 and len(err) == 1
    assert str(bad) in err[0] and "row 1" in err[0] and "epoch_hjd" in err[0] and "60000.5" in err[0]


# ---------------------------------------------------------------------------------
# gcplan recover


def test_recover_command_json(monkeypatch, capsys):
    status = _gcplan(["recover", "--site", "demo", "--population", "oosterhoff-1", "--stars", "40",
                      "--nights", "4", "--visits-per-night", "6", "--date", "2027-06-10",
                      "--cluster", "M 15", "--json"], monkeypatch)
    assert status == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("recovered_fraction", "alias_fraction", "stars", "failures"):
        assert key in out
    assert out["stars"] == 40
    assert 0.0 <= out["recovered_fraction"] <= 1.0
    assert len(out["failures"]) == round(40 * (1 - out["recovered_fraction"]))
    assert out["n_epochs"] == 24 and out["noise_mag"] > 0


def test_recover_command_bad_population(monkeypatch, capsys):
    status = _gcplan(["recover", "--site", "demo", "--population", "oosterhoff-3", "--nights", "2",
                      "--visits-per-night", "4", "--date", "2027-06-10"], monkeypatch)
    err = capsys.readouterr().err.strip().splitlines()
    assert status == 2 and len(err) == 1 and "oosterhoff-3" in err[0]


def test_phases_with_bjd_tdb_epochs(tmp_path, monkeypatch, capsys):
    # The same star with its epoch given as BJD(TDB): the phases use barycentric TDB dates
    # (Eastman et al. 2010), and the output names the time system.
    from astropy.time import Time

    from planner.variables.phases import barycentric_jd_tdb, phases

    variables = _write(tmp_path, "v.csv",
                       "id,period_d,epoch_bjd_tdb,ra_deg,dec_deg\nv1,0.5731,2461000.2310,322.4812,12.159\n")
    times = _write(tmp_path, "t.csv", "time_utc\n2027-06-10T03:00:00\n2027-06-10T04:30:00\n")
    assert _gcplan(["phases", "--variables", str(variables), "--times", str(times), "--json"], monkeypatch) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["time_system"].startswith("BJD (TDB scale)")
    star = out["stars"][0]
    assert star["time_system"] == "BJD_TDB" and star["epoch_bjd_tdb"] == 2461000.2310 and star["epoch_hjd"] is None
    t = Time(["2027-06-10T03:00:00", "2027-06-10T04:30:00"], scale="utc")
    expected = phases(barycentric_jd_tdb(t, [322.4812], [12.159]), [2461000.2310], [0.5731])[0]
    np.testing.assert_allclose(star["phases"], expected, atol=2e-6)
    both = _write(tmp_path, "w.csv",
                  "id,period_d,epoch_hjd,epoch_bjd_tdb,ra_deg,dec_deg\nv1,0.5,2461000.2,2461000.2,1,2\n")
    assert _gcplan(["phases", "--variables", str(both), "--times", str(times)], monkeypatch) == 2
    assert "one time system" in capsys.readouterr().err
