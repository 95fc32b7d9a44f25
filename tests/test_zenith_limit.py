"""An upper altitude limit (zenith avoidance for an alt-az mount): site profiles carry it,
windows split around transit, plans never go above it."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from planner.cli import main
from planner.inputs.catalog import load_catalog
from planner.inputs.resources import site_profiles_dir
from planner.inputs.sites import resolve_site
from planner.inputs.targets import targets_from_names
from planner.model.constraints import constraints_for_site
from planner.sky.night_summary import run_of_nights

from helpers.validate import validate_plan

# NGC 6624 (δ = −30.36°) culminates at 89.4° over the demo site (φ = −30.95°), near
# midnight in early July (the Moon new, out of the way): a target that passes close to the zenith.
TARGET = "NGC 6624"
NIGHT = dt.date(2027, 7, 5)
MAX_ALT = 85.0


def _profile(tmp_path, line):
    text = (site_profiles_dir() / "demo.toml").read_text()
    path = tmp_path / "altaz.toml"
    path.write_text(text.replace("[limits]\n", f"[limits]\n{line}\n", 1))
    return path


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    return resolve_site(str(_profile(tmp_path_factory.mktemp("site"), f"max_altitude_deg = {MAX_ALT}")))


def _astropy_gap_minutes(site, target, around_jd):
    """Independent: minutes above MAX_ALT from astropy's full AltAz (geometric, no
    refraction, as the planner's altitudes), sampled every 5 s over ±1 h of transit."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    loc = site.location
    where = EarthLocation.from_geodetic(loc.longitude_deg * u.deg, loc.latitude_deg * u.deg, loc.elevation_m * u.m)
    t = Time(around_jd + np.arange(-3600, 3600, 5.0) / 86400.0, format="jd", scale="utc")
    alt = SkyCoord(target.ra_deg * u.deg, target.dec_deg * u.deg).transform_to(
        AltAz(obstime=t, location=where, pressure=0 * u.hPa)).alt.deg
    above = alt > MAX_ALT
    assert above.any() and not above[0] and not above[-1]
    return above.sum() * 5.0 / 60.0


def test_window_splits_around_transit_as_astropy_says(site):
    [target] = targets_from_names([TARGET], load_catalog())
    c = constraints_for_site(site)
    assert c.max_altitude_deg == MAX_ALT and "≤ 85.0°" in c.describe()
    vis = run_of_nights(site, [target], [NIGHT], c).visibility
    parts = vis.windows(0, 0)
    assert len(parts) == 2
    (a0, a1), (b0, b1) = parts
    transit = float(vis.transit_jd[0, 0])
    assert a1 < transit < b0
    gap_min = (b0 - a1) * 1440.0
    ref = _astropy_gap_minutes(site, target, transit)
    # 5-s sampling and the apparent-place interpolation (0.1″): agreement within 0.3 min
    assert gap_min == pytest.approx(ref, abs=0.3)
    # the hours leave the gap out, against the same night without the upper limit
    free = run_of_nights(site, [target], [NIGHT], constraints_for_site(resolve_site("demo"))).visibility
    assert free.windows(0, 0) == [(float(free.window_start_jd[0, 0]), float(free.window_end_jd[0, 0]))]
    lost_h = float(free.observable_hours[0, 0] - vis.observable_hours[0, 0])
    assert lost_h * 60.0 == pytest.approx(gap_min, abs=0.05)


def test_plans_never_go_above_the_limit(site, tmp_path, capsys):
    import json

    path = _profile(tmp_path, f"max_altitude_deg = {MAX_ALT}")
    args = ["schedule", "--site", str(path), "--target", TARGET, "--target", "NGC 6681", "--target", "NGC 6809",
            "--date", str(NIGHT), "--visit", "filter=V,frames=6,exposure=300", "--json"]
    assert main(args) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["visits"]
    from planner.scheduling.night_sky import night_sky, requests_for_targets
    from planner.scheduling.night import plan_night
    from planner.scheduling.visits import Exposure

    targets = targets_from_names([TARGET, "NGC 6681", "NGC 6809"], load_catalog())
    c = constraints_for_site(site)
    frame = night_sky(site, [NIGHT], c)
    requests = requests_for_targets(targets, (Exposure("V", 6, 300.0),))
    plan = plan_night(site, c, requests, NIGHT, float(frame.window_start_jd[0]), float(frame.window_end_jd[0]),
                      frame.ephemeris)
    assert plan.visits and validate_plan(site, plan, requests) == []  # astropy AltAz, the upper limit included
    # the slot table the planner works from: no slot above the limit is usable, and there are such slots
    from planner.scheduling.slot_table import build_slot_table
    from planner.sky.airmass import airmass_kasten_young

    jd = np.arange(float(frame.window_start_jd[0]), float(frame.window_end_jd[0]), 1 / 1440)
    tab = build_slot_table(site, c, requests, frame.ephemeris, jd, (), 0.0)
    above = tab.airmass < float(airmass_kasten_young(MAX_ALT))
    assert above[0].sum() > 30 and not tab.ok[above].any() and tab.ok[0][~above[0]].any()


@pytest.mark.parametrize("line", ["max_altitude_deg = 20", "max_altitude_deg = 95"])
def test_an_upper_limit_at_or_below_the_lower_is_a_one_line_error(tmp_path, capsys, line):
    path = _profile(tmp_path, line)
    code = main(["night", "--site", str(path), "--target", TARGET, "--date", str(NIGHT)])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and err.startswith("gcplan: error:") and err.count("\n") == 1
    assert "altaz.toml" in err and "max_altitude_deg" in err


def test_max_altitude_option_below_the_lower_limit_is_an_error(capsys):
    code = main(["night", "--site", "demo", "--target", TARGET, "--date", str(NIGHT), "--max-altitude", "10"])
    _, err = capsys.readouterr()
    assert code == 2 and err.count("\n") == 1 and "--max-altitude" in err


def test_night_text_and_json_show_the_gap(tmp_path, capsys):
    import json

    path = _profile(tmp_path, f"max_altitude_deg = {MAX_ALT}")
    assert main(["night", "--site", str(path), "--target", TARGET, "--date", str(NIGHT)]) == 0
    text = capsys.readouterr().out
    assert "≤ 85.0°" in text and "above 85° (not usable)" in text
    assert max(len(line) for line in text.splitlines()) <= 80
    assert main(["night", "--site", str(path), "--target", TARGET, "--date", str(NIGHT), "--json"]) == 0
    [row] = json.loads(capsys.readouterr().out)["targets"]
    assert len(row["windows"]) == 2 and row["windows"][0]["end"] < row["transit"] < row["windows"][1]["start"]
