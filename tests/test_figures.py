"""What the schedule, phase-coverage and exposure figures draw, read back from the figure
each command really saves (planner.reports.schedule_plot, phase_plot, exposure_plot).

Every figure is checked against the numbers the same command prints with ``--json``
(the figure and the table must tell the same story), and for the rules every figure
keeps: the short caution at its foot, axis units in parentheses ("(s)", "(°)"), and
no text drawn over a target's label.

Outside reference: Kasten & Young (1989), Applied Optics 28, 4735, eq. 3, written out
here, to read the schedule's airmass back from the altitude of each visit's bar
(tests/REFERENCES.md, "Airmass").
"""

from __future__ import annotations

import datetime as dt
import io
import itertools
import json
import re
from contextlib import redirect_stdout
from pathlib import Path

import numpy as np
import pytest

from figure_reading import all_text, axis_labels, figures_saved, renderer_of
from planner.cautions import SHORT_CAUTION
from planner.cli import main
from planner.inputs.resources import targets_dir

DATA = Path(__file__).parent / "data"
DEMO_CAMPAIGN = targets_dir() / "demo" / "campaign.toml"
DEMO_VARIABLES = targets_dir() / "demo" / "variables.ecsv"
# A unit in square brackets ("[s]") where the figures write "(s)".
BRACKET_UNIT = re.compile(r"\[[^\]]*\]")


def _run_and_capture(argv, path):
    """(JSON printed, the one figure saved) of ``gcplan ARGV --plot PATH --json``."""
    out = io.StringIO()
    with figures_saved() as saved, redirect_stdout(out):
        code = main([str(a) for a in argv] + ["--plot", str(path), "--json"])
    assert code == 0
    assert path.exists()
    assert len(saved) == 1, f"{len(saved)} figures saved"
    return json.loads(out.getvalue()), saved[0]


def _utc(iso: str) -> dt.datetime:
    return dt.datetime.fromisoformat(iso.replace("Z", "+00:00"))


def _kasten_young(alt_deg):
    """Kasten & Young 1989 eq. 3, independent of planner.sky.airmass."""
    h = np.asarray(alt_deg, dtype=float)
    return 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)


def _check_units_in_parentheses(fig):
    labels = axis_labels(fig)
    assert labels, "no axis labels"
    assert not [s for s in labels if BRACKET_UNIT.search(s)], labels


# --- the schedule figure (gcplan schedule --plot) ----------------------------------


@pytest.fixture(scope="module")
def schedule_drawn(tmp_path_factory):
    path = tmp_path_factory.mktemp("schedule") / "night.png"
    return _run_and_capture(["schedule", "--campaign", DEMO_CAMPAIGN, "--date", "2027-01-07"], path)


def _visit_bars(fig):
    return {ln.get_gid()[6:]: ln for ln in fig.axes[0].lines if (ln.get_gid() or "").startswith("visit:")}


def test_schedule_draws_each_visit_where_and_when_it_is_planned(schedule_drawn):
    from matplotlib import dates as mdates

    plan, fig = schedule_drawn
    bars = _visit_bars(fig)
    assert set(bars) == {v["id"] for v in plan["visits"]} and len(bars) > 5
    curves = {ln.get_gid()[7:]: ln for ln in fig.axes[0].lines if (ln.get_gid() or "").startswith("target:")}
    for v in plan["visits"]:
        x = np.asarray(bars[v["id"]].get_xdata(), dtype=float)
        y = np.asarray(bars[v["id"]].get_ydata(), dtype=float)
        # From its first to its last second (the JSON rounds to the second).
        for drawn, printed in ((x.min(), v["start"]), (x.max(), v["end"])):
            assert abs((mdates.num2date(drawn) - _utc(printed)).total_seconds()) <= 1.0, v["id"]
        # Over its target's altitude curve ...
        curve = curves[v["target"]]
        np.testing.assert_allclose(y, np.interp(x, curve.get_xdata(), curve.get_ydata()), atol=1e-6)
        # ... at the airmass the table prints, which is that of the science frames (from
        # science_start; 3 decimals, and a second of motion moves it by < 2e-4 here).
        science = mdates.date2num(_utc(v["science_start"]))
        at_science = np.interp([science, x.max()], x, y)
        assert _kasten_young(at_science) == pytest.approx([v["airmass_start"], v["airmass_end"]], abs=1e-3), v["id"]


def test_schedule_marks_the_gaps_and_sums_them_in_the_title(schedule_drawn):
    from matplotlib import dates as mdates

    plan, fig = schedule_drawn
    ax = fig.axes[0]
    gaps = [p for p in ax.patches if (p.get_gid() or "").startswith("gap:")]
    assert sorted(p.get_gid()[4:] for p in gaps) == sorted(g["reason"] for g in plan["gaps"])
    drawn = sorted(mdates.num2date(p.get_x()) for p in gaps)
    printed = sorted(_utc(g["start"]) for g in plan["gaps"])
    assert all(abs((a - b).total_seconds()) <= 1.0 for a, b in zip(drawn, printed))
    title = ax.get_title("left")
    assert f"{len(plan['visits'])} visits planned" in title
    # The JSON's efficiency is itself rounded (4 decimals), so the title's one decimal may
    # round the other way: compare the numbers.
    shown = re.search(r"efficiency ([0-9.]+) %", title)
    assert shown and abs(float(shown.group(1)) - plan["efficiency"] * 100) <= 0.05 + 1e-6
    assert f"idle {plan['idle_minutes']:.0f} min" in title


def test_schedule_labels_its_targets_and_keeps_the_caution(schedule_drawn):
    plan, fig = schedule_drawn
    ax = fig.axes[0]
    labelled = {t.get_text() for t in ax.texts if (t.get_gid() or "").startswith("label:")}
    planned = {v["target"] for v in plan["visits"]}
    assert planned <= labelled, planned - labelled
    assert SHORT_CAUTION in all_text(fig)
    assert ax.get_ylabel() == "altitude (°)" and ax.get_ylim() == (0.0, 90.0)
    _check_units_in_parentheses(fig)


def test_schedule_visit_numbers_stay_clear_of_target_labels(schedule_drawn):
    plan, fig = schedule_drawn
    renderer = renderer_of(fig)
    numbers = {v["id"].split("-")[-1] for v in plan["visits"]}
    texts = [t for ax in fig.axes for t in ax.texts]
    labels = [t for t in texts if (t.get_gid() or "").startswith("label:")]
    marks = [t for t in texts if t.get_text() in numbers and t not in labels]
    assert labels
    overlaps = [(m.get_text(), lab.get_text()) for m, lab in itertools.product(marks, labels)
                if m.get_window_extent(renderer).overlaps(lab.get_window_extent(renderer))]
    assert not overlaps


# --- the phase-coverage figure (gcplan phases --plot) ------------------------------


@pytest.fixture(scope="module")
def phases_drawn(tmp_path_factory):
    import planner.cli

    path = tmp_path_factory.mktemp("phases") / "phases.png"
    argv = ["phases", "--variables", DEMO_VARIABLES, "--times", DATA / "variables_times.csv"]
    with pytest.MonkeyPatch.context() as mp:  # as test_variables_commands registers it
        if "planner.commands.phases" not in planner.cli.COMMAND_MODULES:
            mp.setattr(planner.cli, "COMMAND_MODULES", (*planner.cli.COMMAND_MODULES, "planner.commands.phases"))
        return _run_and_capture(argv, path)


def _phase_rows(ax):
    """{star id: (row y, phases drawn)} from the tick labels and the '|' markers."""
    names = {int(round(y)): t.get_text().split()[0] for y, t in zip(ax.get_yticks(), ax.get_yticklabels())}
    rows = {}
    for ln in ax.lines:
        if ln.get_marker() == "|":
            y = np.asarray(ln.get_ydata(), dtype=float)
            rows[names[int(round(y[0]))]] = (y[0], np.sort(np.asarray(ln.get_xdata(), dtype=float)))
    return rows


def test_phase_rows_are_the_stars_sorted_by_period(phases_drawn):
    report, fig = phases_drawn
    ax = fig.axes[0]
    stars = report["stars"]
    labels = [t.get_text() for t in ax.get_yticklabels()]  # bottom to top
    assert len(labels) == len(stars) > 10
    periods = [float(s.split()[-2]) for s in labels]
    assert periods == sorted(periods, reverse=True)  # shortest period at the top
    by_id = {s["id"]: s for s in stars}
    for label in labels:
        star_id, period = label.split()[0], float(label.split()[-2])
        assert period == pytest.approx(by_id[star_id]["period_d"], abs=5e-5)
    assert ax.get_xlim() == (0.0, 1.0)
    assert "phase" in ax.get_xlabel() and "maximum light" in ax.get_xlabel()


def test_phase_ticks_are_the_phases_of_the_report(phases_drawn):
    report, fig = phases_drawn
    rows = _phase_rows(fig.axes[0])
    observed = [s for s in report["stars"] if s["phases"]]
    assert observed and set(rows) == {s["id"] for s in observed}
    for s in observed:
        # The JSON rounds phases to 6 decimals.
        np.testing.assert_allclose(rows[s["id"]][1], np.sort(s["phases"]), atol=1e-6, err_msg=s["id"])


def test_phase_shading_marks_rising_branch_only_for_rrab(phases_drawn):
    report, fig = phases_drawn
    ax = fig.axes[0]
    rows = _phase_rows(ax)
    # Shaded bands: (row, colour) pairs; red is the RRab rising branch.
    red_rows = set()
    for c in ax.collections:
        ys = np.concatenate([p.vertices[:, 1] for p in c.get_paths()]) if c.get_paths() else np.array([])
        rgba = np.atleast_2d(c.get_facecolor())
        if ys.size and rgba.size and rgba[0, 0] > 0.6 and rgba[0, 2] < 0.4:
            red_rows.add(int(round(float(np.mean([ys.min(), ys.max()])))))
    types = {s["id"]: s["type"] for s in report["stars"]}
    for star_id, (y, _) in rows.items():
        assert (int(round(y)) in red_rows) == (types[star_id] == "RRab"), star_id


def test_phase_figure_keeps_the_caution(phases_drawn):
    _, fig = phases_drawn
    assert SHORT_CAUTION in all_text(fig)


def test_phase_figure_units_in_parentheses(phases_drawn):
    _check_units_in_parentheses(phases_drawn[1])


# --- the exposure figure (gcplan expose --plot) ------------------------------------


@pytest.fixture(scope="module")
def exposure_drawn(tmp_path_factory):
    path = tmp_path_factory.mktemp("expose") / "snr.png"
    argv = ["expose", "--site", "demo", "--filter", "V", "--mag", "11", "--snr", "2000"]
    return _run_and_capture(argv, path)


def _line(ax, label_start):
    (line,) = [ln for ln in ax.lines if ln.get_label().startswith(label_start)]
    return np.asarray(line.get_xdata(), dtype=float), np.asarray(line.get_ydata(), dtype=float)


def test_exposure_curve_reaches_the_goal_at_the_printed_time(exposure_drawn):
    plan, fig = exposure_drawn
    ax = fig.axes[0]
    t, snr = _line(ax, "one frame")
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert np.all(np.diff(snr) > 0)  # longer frames, more S/N
    # One frame of the printed single-frame time reaches the goal (log-log interpolation
    # on a 200-point curve: 0.1 %).
    at_single = np.exp(np.interp(np.log(plan["single_frame_s"]), np.log(t), np.log(snr)))
    assert at_single == pytest.approx(plan["snr_goal"], rel=1e-3)
    # The stacked curve is √frames times one frame.
    t_n, snr_n = _line(ax, f"{plan['frames']} frames stacked")
    np.testing.assert_allclose(snr_n, np.sqrt(plan["frames"]) * snr, rtol=1e-12)
    goal_x, goal_y = _line(ax, "goal S/N")
    assert set(goal_y) == {plan["snr_goal"]}


def test_exposure_marks_the_choice_and_the_saturation(exposure_drawn):
    plan, fig = exposure_drawn
    ax = fig.axes[0]
    (x,), (y,) = _line(ax, "chosen:")
    assert x == pytest.approx(plan["frame_s"])
    assert y == pytest.approx(plan["snr_reached"], rel=1e-3) and y >= plan["snr_goal"] * (1 - 1e-3)
    sat_x, _ = _line(ax, "saturation")
    np.testing.assert_allclose(sat_x, plan["saturation_s"], rtol=1e-9)
    assert plan["frame_s"] <= plan["saturation_s"]  # the chosen frame is below saturation
    lo, hi = ax.get_xlim()
    assert lo < plan["frame_s"] < plan["saturation_s"] < hi
    assert f"{plan['frames']} × {plan['frame_s']:g} s" in all_text(fig)
    assert f"V = {plan['magnitude']:.2f}" in ax.get_title()


def test_exposure_figure_keeps_the_caution(exposure_drawn):
    assert SHORT_CAUTION in all_text(exposure_drawn[1])


def test_exposure_figure_units_in_parentheses(exposure_drawn):
    _, fig = exposure_drawn
    _check_units_in_parentheses(fig)
    assert "(s)" in fig.axes[0].get_xlabel()
