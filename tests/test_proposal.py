"""``gcplan proposal``: a semester's time request (planner.scheduling.proposal and its writers).

Checks against what lies outside the request's own arithmetic:

* semesters by the common convention (A April–September, B October–March; common
  practice, no source);
* the frames reach the goal's S/N by the exposure core evaluated anew, and every visit
  costs at least its shutter time plus the acquisition and one readout per frame read
  from the demo site profile's file itself;
* the best months are those ``gcplan observability`` prints for the same site, targets,
  nights and limits (a separate command and writer);
* the totals are the sums of the rows; the weather factor is the site file's;
* a target the site never sees is listed with its reason; bad input gives one line;
* the PDF has the pages the request needs and every page draws something (poppler's
  ``pdftoppm``, when installed); every figure carries the caution.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import re
import shutil
import subprocess
import tomllib
from pathlib import Path

import numpy as np
import pytest

from figure_reading import all_text
from planner.cautions import SHORT_CAUTION
from planner.cli import main
from planner.inputs.resources import site_profiles_dir, targets_dir

DEMO_CAMPAIGN = targets_dir() / "demo" / "campaign.toml"
DEMO_SITE_FILE = site_profiles_dir() / "demo.toml"
SEMESTER = "2026B"  # holds the demo campaign's January nights


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def demo():
    """(campaign, proposal) of the demo campaign over semester 2026B."""
    from planner.config import configure_runtime
    from planner.inputs.campaign_file import read_campaign_file
    from planner.scheduling.proposal import make_proposal, semester_nights

    configure_runtime()
    campaign = read_campaign_file(DEMO_CAMPAIGN)
    first, last = semester_nights(SEMESTER, campaign.site.proposal)
    nights = [first + dt.timedelta(days=i) for i in range((last - first).days + 1)]
    return campaign, make_proposal(campaign, nights, SEMESTER)


# --- semesters -------------------------------------------------------------------------


def test_semesters_follow_the_common_convention_and_the_site_profile():
    """A: 1 April – 30 September; B: 1 October – 31 March of the next year (common practice, no source)."""
    import datetime as dt

    from planner.model.site import ProposalSettings
    from planner.scheduling.proposal import semester_label, semester_nights

    usual = ProposalSettings()
    assert semester_nights("2027A", usual) == (dt.date(2027, 4, 1), dt.date(2027, 9, 30))
    assert semester_nights("2027b", usual) == (dt.date(2027, 10, 1), dt.date(2028, 3, 31))
    other = ProposalSettings(semester_a_start_month=2, semester_b_start_month=8)
    assert semester_nights("2027A", other) == (dt.date(2027, 2, 1), dt.date(2027, 7, 31))
    assert semester_nights("2027B", other) == (dt.date(2027, 8, 1), dt.date(2028, 1, 31))
    # Every day of a few years falls in exactly the semester its label names.
    day = dt.date(2026, 1, 1)
    while day < dt.date(2029, 1, 1):
        label = semester_label(day, usual)
        first, last = semester_nights(label, usual)
        assert first <= day <= last
        assert label[-1] == ("A" if 4 <= day.month <= 9 else "B")
        day += dt.timedelta(days=17)


def test_the_site_profile_proposal_table_is_validated(tmp_path):
    from planner.errors import SiteProfileError
    from planner.inputs.sites import load_site_profile

    base = DEMO_SITE_FILE.read_text(encoding="utf-8")
    assert load_site_profile(DEMO_SITE_FILE).proposal.weather_loss_fraction == 0.25
    for replacement, words in (("weather_loss_fraction = 1.5", "weather_loss_fraction"),
                               ("semester_b_start_month = 4", "differ"),
                               ("semester_a_start_month = 4.5", "whole month"),
                               ("semesters = 2", "unknown key")):
        key = replacement.split(" = ")[0]
        text = re.sub(rf"^{key} = .*$", replacement, base, flags=re.M) if key in base else \
            base.replace("[proposal]\n", f"[proposal]\n{replacement}\n")
        path = tmp_path / "site.toml"
        path.write_text(text, encoding="utf-8")
        with pytest.raises(SiteProfileError, match=words) as info:
            load_site_profile(path)
        assert "[proposal]" in str(info.value) and "\n" not in str(info.value)


# --- the request's numbers ------------------------------------------------------------------


def test_requested_time_covers_the_shutter_and_the_frames_reach_the_goal(demo):
    from planner.light.exposure import snr_of_exposure

    campaign, p = demo
    site_file = tomllib.loads(DEMO_SITE_FILE.read_text(encoding="utf-8"))
    readout, acquisition = site_file["camera"]["readout_s"], site_file["telescope"]["acquisition_s"]
    rows = [(t, r) for t in p.targets for r in t.rows]
    assert len(rows) >= 10
    for t, r in rows:
        shutter = r.visits * r.frames * r.frame_s
        assert r.shutter_s == pytest.approx(shutter)
        assert r.hours * 3600 >= shutter + r.visits * (acquisition + r.frames * readout) - 1e-6
        if r.snr_goal is not None:  # the exposure core, evaluated anew, at the row's conditions
            snr = snr_of_exposure(campaign.site, r.filter, r.magnitude, r.frame_s, **r.conditions) * np.sqrt(r.frames)
            assert snr >= r.snr_goal * 0.999, (t.name, r.purpose, r.filter)
    for t in p.targets:
        assert t.requested_hours * 3600 >= sum(r.visits * r.frames * r.frame_s for r in t.rows)


def test_best_months_agree_with_gcplan_observability(demo, capsys):
    campaign, p = demo
    c = campaign.constraints
    first, last = p.run.nights[0], p.run.nights[-1]
    code, out, _ = run(capsys, "observability", "--site", "demo", "--targets", targets_dir() / "demo" / "clusters.ecsv",
                       "--start", first, "--end", last, "--max-airmass", c.max_airmass,
                       "--min-moon-separation", c.min_moon_separation_deg, "--twilight", c.twilight, "--json")
    assert code == 0
    seen = {t["name"]: t for t in json.loads(out)["targets"]}
    assert set(seen) == {t.name for t in p.targets}
    for t in p.targets:
        assert t.best_months == seen[t.name]["best_months"], t.name
        assert t.best_months  # every demo cluster has some
        # The nights that serve it are observable nights of the same computation.
        hours = {n["night"]: n["observable_hours"] for n in seen[t.name]["nights"]}
        for runs in t.serving_ranges.values():
            for a, b in runs:
                assert hours[a.isoformat()] >= t.need_hours_per_night - 1e-3
                assert hours[b.isoformat()] >= t.need_hours_per_night - 1e-3


def test_totals_are_the_sums_of_the_rows(demo):
    campaign, p = demo
    rows = [r for t in p.targets for r in t.rows]
    assert p.total_hours == pytest.approx(sum(r.hours for r in rows))
    assert p.total_hours == pytest.approx(sum(t.requested_hours for t in p.targets))
    assert sum(p.hours_by_moon.values()) == pytest.approx(p.total_hours)
    loss = tomllib.loads(DEMO_SITE_FILE.read_text(encoding="utf-8"))["proposal"]["weather_loss_fraction"]
    assert p.weather_loss_fraction == loss and p.weather_loss_source == "the site profile"
    assert p.total_hours_with_weather == pytest.approx(p.total_hours / (1 - loss))
    dark = p.run.almanac.dark_hours(campaign.constraints.twilight)
    assert p.total_nights == pytest.approx(p.total_hours / dark[dark > 0].mean())
    # The same in every written form.
    from planner.reports.proposal_tables import proposal_csv, proposal_json

    data = json.loads(json.dumps(proposal_json(p), default=str))
    assert data["total_hours"] == pytest.approx(sum(t["requested_hours"] for t in data["targets"]), abs=1e-3)
    table = list(csv.DictReader(io.StringIO(proposal_csv(p))))
    body = [r for r in table if r["target"] not in ("total", "source")]
    total = next(r for r in table if r["target"] == "total")
    assert float(total["total_h"]) == pytest.approx(sum(float(r["total_h"]) for r in body), abs=1e-3)


def test_moon_classes_and_the_cadence_forecast(demo):
    from planner.scheduling.proposal import DARK_MAX_ILLUMINATION, GREY_MAX_ILLUMINATION, moon_class
    from planner.scheduling.proposal_forecast import RECOVERY_GOAL

    campaign, p = demo
    assert list(moon_class([0.0, 0.349, 0.35, 0.7, 0.701, 1.0])) == ["dark", "dark", "grey", "grey", "bright",
                                                                     "bright"]
    lit = p.run.almanac.moon_illumination
    assert np.all(lit[p.classes == "dark"] < DARK_MAX_ILLUMINATION)
    assert np.all(lit[p.classes == "bright"] > GREY_MAX_ILLUMINATION)
    with_variables = [t for t in p.targets if any(r.purpose == "variables" for r in t.rows)]
    assert with_variables
    for t in with_variables:
        nights = [n for n, _, _ in t.recovery]
        fractions = {n: f for n, f, _ in t.recovery}
        assert nights == sorted(nights) and all(0 <= f <= 1 for f in fractions.values())
        cadence = next(r for r in t.rows if r.purpose == "variables")
        assert cadence.visits == t.nights_needed * campaign.cadence.visits_per_night or \
            t.nights_needed > cadence.visits // campaign.cadence.visits_per_night
        # the nights asked for are the fewest of the forecast reaching the goal
        enough = [n for n in nights if fractions[n] >= RECOVERY_GOAL]
        if enough:
            assert cadence.visits // campaign.cadence.visits_per_night == enough[0]
    # Dark-time goals are asked for in dark time only.
    for t in p.targets:
        for r in t.rows:
            if r.moon == "dark":
                assert r.hours_by_moon["dark"] == pytest.approx(r.hours)


def _write_campaign(tmp_path, names, site="demo", extra=""):
    (tmp_path / "targets.csv").write_text("name\n" + "\n".join(names) + "\n", encoding="utf-8")
    path = tmp_path / "campaign.toml"
    path.write_text(f'name = "test"\nsite = "{site}"\ntargets = "targets.csv"\nfirst_night = 2027-01-05\n'
                    f'nights = 3\n{extra}\n[constraints]\nmax_airmass = 2.0\n\n[[goals]]\nlevel = "hb"\n'
                    'filter = "V"\nsnr = 50\n', encoding="utf-8")
    return path


def test_a_target_never_up_is_listed_with_its_reason(tmp_path, capsys):
    # NGC 6341 (Dec +43°) culminates 16° up at latitude −31°: below airmass 2 (30°) all year.
    campaign = _write_campaign(tmp_path, ["NGC 104", "NGC 6341"])
    out_dir = tmp_path / "out"
    code, out, err = run(capsys, "proposal", "--campaign", campaign, "--semester", "2027A", "--json", "--out", out_dir)
    assert code == 0, err
    data = json.loads(out)
    by_name = {t["name"]: t for t in data["targets"]}
    assert set(by_name) == {"NGC 104", "NGC 6341"}
    never = by_name["NGC 6341"]
    assert never["requested_hours"] == 0 and never["rows"] == [] and "never observable" in never["reason"]
    assert by_name["NGC 104"]["requested_hours"] > 0 and by_name["NGC 104"]["reason"] is None
    for name in ("proposal.md", "proposal.csv", "proposal.tex"):
        assert "NGC 6341" in (out_dir / name).read_text(encoding="utf-8"), name
    assert "never observable" in (out_dir / "proposal.md").read_text(encoding="utf-8")


def test_a_range_too_short_for_the_forecast_asks_for_the_nights_it_has(capsys):
    code, out, err = run(capsys, "proposal", "--campaign", DEMO_CAMPAIGN, "--start", "2027-01-02",
                         "--end", "2027-01-03", "--json")
    assert code == 0, err
    data = json.loads(out)
    cadence = [(t, r) for t in data["targets"] for r in t["rows"] if r["work"] == "variables"]
    assert cadence
    for t, r in cadence:
        assert t["recovery"] == [] and 1 <= t["nights_needed"] <= 2
        assert r["visits"] == 12 * t["nights_needed"]  # the demo cadence: 12 visits a night
        assert any("no recovery forecast" in n for n in t["notes"])


@pytest.mark.parametrize("argv, words", [
    (["--semester", "2027C"], "--semester"),
    (["--semester", "27A"], "--semester"),
    (["--start", "2027-03-01", "--end", "2027-02-01"], "before"),
    (["--semester", "2027A", "--start", "2027-03-01", "--end", "2027-04-01"], "not both"),
    (["--start", "2027-03-01"], "--semester"),
    (["--semester", "2027A", "--pdf", "x.png"], "--pdf"),
])
def test_bad_options_give_one_line(argv, words, tmp_path, capsys):
    code, out, err = run(capsys, "proposal", "--campaign", DEMO_CAMPAIGN, *argv)
    lines = err.strip().splitlines()
    assert code == 2 and len(lines) == 1 and lines[0].startswith("gcplan: error: ") and words in lines[0]
    assert "Traceback" not in err


def test_no_target_ever_up_is_an_error_and_writes_nothing(tmp_path, capsys):
    campaign = _write_campaign(tmp_path, ["NGC 6341", "NGC 6205"])
    pdf = tmp_path / "p.pdf"
    code, out, err = run(capsys, "proposal", "--campaign", campaign, "--semester", "2027A", "--pdf", pdf)
    lines = err.strip().splitlines()
    assert code == 2 and len(lines) == 1 and "none of NGC 6341, NGC 6205" in lines[0]
    assert not pdf.exists() and out == ""


def test_a_range_without_darkness_is_an_error(tmp_path, capsys):
    # At latitude 80° N the Sun never gets 18° down in June: no astronomical darkness.
    text = re.sub(r"^latitude_deg = .*$", "latitude_deg = 80.0", DEMO_SITE_FILE.read_text(encoding="utf-8"),
                  flags=re.M)
    text = re.sub(r"^horizon = .*$", "", text, flags=re.M)
    (tmp_path / "arctic.toml").write_text(text, encoding="utf-8")
    campaign = _write_campaign(tmp_path, ["NGC 6341"], site="arctic.toml")
    code, out, err = run(capsys, "proposal", "--campaign", campaign, "--start", "2027-06-01", "--end", "2027-06-30")
    lines = err.strip().splitlines()
    assert code == 2 and len(lines) == 1 and "no astronomical darkness" in lines[0]


# --- what is written ---------------------------------------------------------------------


def test_json_has_the_fields_a_form_needs(demo):
    from planner.reports.proposal_tables import proposal_json

    _, p = demo
    data = json.loads(json.dumps(proposal_json(p), default=str))
    assert set(data["site"]) >= {"name", "latitude_deg", "longitude_deg", "elevation_m"}
    assert data["semester"]["start"] == "2026-10-01" and data["semester"]["end"] == "2027-03-31"
    for key in ("total_hours", "total_nights", "hours_by_moon", "weather_loss_fraction", "total_hours_with_weather",
                "sources"):
        assert key in data, key
    assert set(data["hours_by_moon"]) == {"dark", "grey", "bright"}
    for t in data["targets"]:
        for key in ("name", "requested_hours", "shutter_s", "overhead_s", "best_months", "dark_hours_available",
                    "grey_hours_available", "snr_tip", "snr_hb", "nights_needed", "recovery"):
            assert key in t, key
        assert all(set(r) >= {"nights", "recovered_fraction"} for r in t["recovery"])
    sources = " ".join(data["sources"])
    for name in ("Harris", "Baumgardt & Vasiliev 2021", "Cardelli, Clayton & Mathis 1989",
                 "Krisciunas & Schaefer 1991"):
        assert name in sources, name


def test_latex_escapes_and_balances(demo):
    from planner.reports.proposal_tables import proposal_latex, tex

    assert tex("a & b_c 50% #1 ≥ 2°") == r"a \& b\_c 50\% \#1 $\geq$ 2$^\circ$"
    _, p = demo
    text = proposal_latex(p)
    assert text.count(r"\begin{table}") == text.count(r"\end{table}") == 3
    for table in text.split(r"\begin{tabular}")[1:]:
        body = table.split(r"\end{tabular}")[0]
        columns = len(body.split("}", 1)[0].lstrip("{"))
        rows = [line for line in body.splitlines() if line.endswith(r"\\")]
        assert rows and all(len(re.findall(r"(?<!\\)&", line)) == columns - 1 for line in rows)
    body = "\n".join(line for line in text.splitlines() if not line.startswith("%"))
    assert not re.search(r"(?<!\\)[_#%]", body)


@pytest.mark.slow
def test_the_pdf_has_its_pages_and_every_page_draws(demo, tmp_path):
    from planner.reports.proposal_figures import figures, table_pages, write_pdf

    _, p = demo
    figs = figures(p)
    pages = table_pages(p)
    assert set(figs) == {"observability", "night", "snr", "recovery"}
    for fig in pages + list(figs.values()):
        assert SHORT_CAUTION in all_text(fig)
    path = write_pdf(p, tmp_path / "p.pdf", figs)
    raw = path.read_bytes()
    assert len(re.findall(rb"/Type\s*/Page\b(?!s)", raw)) == len(pages) + len(figs)
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (poppler) not installed: pages not rendered")
    from matplotlib.image import imread

    subprocess.run(["pdftoppm", "-png", "-r", "20", str(path), str(tmp_path / "page")], check=True)
    rendered = sorted(tmp_path.glob("page-*.png"))
    assert len(rendered) == len(pages) + len(figs)
    for png in rendered:
        pixels = imread(png)[..., :3]
        assert (pixels < 0.5).mean() > 0.003, png.name  # ink on the page, not a blank sheet
