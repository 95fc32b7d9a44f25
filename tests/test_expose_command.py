"""``gcplan expose`` as a user meets it: JSON fields, the observer's note, the plot, errors.

The command is driven through its own ``register``/``run`` on a fresh parser, with the
CLI's error handling (an InputError becomes one line and exit status 2) reproduced here.
"""

from __future__ import annotations

import json
import re

import pytest

from planner.inputs.sites import resolve_site
from planner.light.exposure import exposure_for_snr
from helpers.expose_runner import run_expose

REQUIRED_FIELDS = ("filter", "magnitude", "level", "target", "snr_goal", "exposure_s", "frames", "frame_s",
                "snr_reached", "saturation_s", "sky_mag_arcsec2", "source_e_per_s", "sky_e_per_s_per_pixel",
                "aperture_radius_arcsec", "aperture_pixels", "enclosed_fraction", "inputs", "warnings")
INPUT_FIELDS = ("airmass", "seeing_fwhm_arcsec", "moon_illumination", "moon_separation_deg", "moon_altitude_deg",
                "extinction_mag_per_airmass", "read_noise_e", "dark_e_per_s", "gain_e_per_adu",
                "pixel_scale_arcsec", "collecting_area_m2")


gcplan = run_expose


def test_json_has_the_required_fields(capsys):
    status, out, _ = gcplan(["expose", "--site", "demo", "--filter", "V", "--mag", "17.5", "--snr", "80", "--json"],
                            capsys)
    assert status == 0
    data = json.loads(out)
    for key in REQUIRED_FIELDS:
        assert key in data
    for key in INPUT_FIELDS:
        assert key in data["inputs"]
    assert "throughput" in data["inputs"] or "zero_point_mag" in data["inputs"]
    # the command reports what the core computes, with the site's defaults
    plan = exposure_for_snr(resolve_site("demo"), "V", 17.5, 80.0)
    assert data["frames"] == plan.frames and data["frame_s"] == pytest.approx(plan.frame_s)
    assert data["inputs"]["seeing_fwhm_arcsec"] == resolve_site("demo").sky.typical_seeing_arcsec
    assert data["inputs"]["airmass"] == 1.2 and data["inputs"]["moon_altitude_deg"] < 0
    assert data["level"] == "user" and data["target"] is None


def test_cluster_level_json_and_default_period(capsys):
    status, out, _ = gcplan(["expose", "--site", "demo", "--filter", "V", "--target", "NGC 6397", "--level", "hb",
                             "--snr", "100", "--json", "--moon-illumination", "0.5", "--moon-altitude", "40",
                             "--moon-separation", "60"], capsys)
    assert status == 0
    data = json.loads(out)
    assert data["target"] == "NGC 6397" and data["level"] == "hb"
    assert data["shortest_period_d"] == 0.2  # Catelan & Cortés 2008: RR Lyrae periods from 0.2 d
    assert data["saturation_magnitude"] < data["magnitude"]
    # the catalog's observed HB (Harris 2010 V_HB = 12.87, read) sets the level
    assert data["calibration"] == "observed V_HB = 12.87 (Harris 2010)" and data["level_from_observed_hb"]
    assert data["magnitude"] == pytest.approx(12.87)
    assert data["tip_saturation_s"] is not None and data["tip_saturation_s"] < data["saturation_s"]


def test_text_reads_like_an_observers_note(capsys):
    status, out, _ = gcplan(["expose", "--site", "demo", "--filter", "I", "--target", "47 Tuc", "--level", "tip",
                             "--snr", "300"], capsys)
    assert status == 0
    first = out.splitlines()[0]
    assert first.startswith("47 Tuc, RGB tip in I: I = ")
    assert "Take " in out and " x " in out and "S/N" in out
    assert "Sky: I = " in out and "mag/arcsec2" in out
    assert "Saturation:" in out and "linearity limit" in out
    assert "twilight" in out


def test_plot_is_written(tmp_path, capsys):
    from figure_reading import figures_saved

    path = tmp_path / "snr.png"
    with figures_saved() as saved:
        status, out, _ = gcplan(["expose", "--site", "demo", "--filter", "V", "--mag", "11", "--snr", "2000",
                                 "--plot", str(path)], capsys)
    assert status == 0 and "plot written" in out
    # The figure written shows the choice the note prints (what else it draws is
    # checked in tests/test_figures.py).
    assert path.exists() and len(saved) == 1
    take = re.search(r"Take (\d+) x ([\d.]+) s", out)
    assert take, out
    chosen = [ln for ln in saved[0].axes[0].lines if ln.get_label().startswith("chosen:")]
    assert len(chosen) == 1 and chosen[0].get_xdata()[0] == pytest.approx(float(take[2]))
    assert chosen[0].get_label() == f"chosen: {take[1]} × {float(take[2]):g} s"


@pytest.mark.parametrize("argv, words", [
    (["--filter", "Z", "--mag", "15", "--snr", "10"], "unknown filter"),
    (["--filter", "V", "--mag", "15", "--snr", "0"], "S/N goal"),
    (["--filter", "V", "--mag", "15", "--snr", "-3"], "S/N goal"),
    (["--filter", "V", "--mag", "15", "--snr", "10", "--moon-illumination", "1.4"], "illumination"),
    (["--filter", "V", "--snr", "10"], "--mag M, or --target"),
    (["--filter", "V", "--target", "NGC 6397", "--snr", "10"], "--level"),
    (["--filter", "V", "--mag", "15", "--level", "hb", "--snr", "10"], "not both"),
    (["--filter", "V", "--target", "NGC 0000", "--level", "hb", "--snr", "10"], "unknown cluster"),
    (["--filter", "V", "--mag", "15", "--snr", "10", "--plot", "x.gif"], "--plot"),
])
def test_bad_input_is_one_line_exit_2(argv, words, capsys):
    status, out, err = gcplan(["expose", "--site", "demo", *argv], capsys)
    assert status == 2 and out == ""
    assert err.startswith("gcplan: error: ") and words in err and err.count("\n") == 1


def test_level_needing_missing_distance(tmp_path, capsys):
    # A cluster in the bundled catalog always has a distance; build the missing case with the
    # core, which the command calls (the same LevelError, one line).
    from types import SimpleNamespace

    from planner.light.photometry import LevelError, science_level

    with pytest.raises(LevelError) as err:
        science_level(SimpleNamespace(name="Invented 2", distance_modulus_mag=14.0, ebv_mag=None, feh_dex=-1.2),
                      "tip", "I")
    assert "ebv_mag" in str(err.value) and "\n" not in str(err.value)


def test_unknown_level_rejected_by_argparse(capsys):
    with pytest.raises(SystemExit) as stop:
        gcplan(["expose", "--site", "demo", "--filter", "V", "--target", "NGC 6397", "--level", "bump",
                "--snr", "10"], capsys)
    assert stop.value.code == 2


def test_core_says_what_is_missing_and_the_command_names_its_option(capsys):
    # The core's message states what is missing, with no option name (the app shows it
    # too); the command adds its own option when it passes the error on.
    from types import SimpleNamespace

    from planner.light.photometry import LevelError, science_level

    target = SimpleNamespace(name="Invented 3", distance_modulus_mag=None, ebv_mag=0.1, feh_dex=-1.2)
    for level, band in (("hb", "V"), ("tip", "U")):
        if band == "U":
            target = SimpleNamespace(name="Invented 3", distance_modulus_mag=14.0, ebv_mag=0.1, feh_dex=-1.2)
        with pytest.raises(LevelError) as err:
            science_level(target, level, band)
        assert "magnitude" in str(err.value) and "--" not in str(err.value)
    status, out, err = gcplan(["expose", "--site", "demo", "--filter", "U", "--target", "47 Tuc", "--level", "tip",
                               "--snr", "10"], capsys)
    assert status == 2 and out == "" and err.count("\n") == 1
    assert "U - V" in err and "--mag" in err


def test_r_v_option_for_a_catalog_cluster(capsys):
    # A_V = (a + b/R_V) R_V E(B-V) (Cardelli et al. 1989): NGC 6121's E(B-V) = 0.35 (Harris
    # 2010) at R_V = 3.7 (from memory) gives A_V = 1.306 (computed from the band table).
    base = ["expose", "--site", "demo", "--filter", "V", "--target", "NGC 6121", "--level", "tip", "--snr", "100",
            "--json"]
    status, out, _ = gcplan(base + ["--r-v", "3.7"], capsys)
    data = json.loads(out)
    assert status == 0 and data["r_v"] == 3.7
    assert data["interstellar_extinction_mag"] == pytest.approx(0.35 * (1.0025 * 3.7 + 0.0215), abs=1e-4)
    status, _, err = gcplan(base + ["--r-v", "9"], capsys)
    assert status == 2 and "--r-v must be between 2 and 6" in err
