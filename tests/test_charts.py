"""Tests for planner.reports.altitude_chart and hours_chart: the night's altitude chart and the observability heat map.

Outside references:

* the shaded twilight edges are read back from the figure's artists and held to
  skyfield's ``almanac.dark_twilight_day`` with the DE421 ephemeris from
  skyfield-data (the Sun's centre at −0.8333°, −6°, −12°, −18°), besides the
  project's own almanac;
* the clock labels are held to the standard library's zoneinfo (tzdata) reading
  matplotlib's own ``num2date`` of each tick;
* the altitude curves, read back at their drawn times, are held to skyfield's
  apparent altitude (no refraction) of the catalog position;
* the airmass scale is held to Kasten & Young (1989), Applied Optics 28, 4735,
  eq. 3, written out here, and its check value 1.9943 at 30° (tests/REFERENCES.md,
  "Airmass").
"""

from __future__ import annotations

import datetime as dt
import itertools
import sys
import warnings
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from figure_reading import all_text
from planner.config import configure_runtime
from planner.errors import InputError
from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.inputs.targets import targets_from_names
from planner.model.constraints import constraints_for_site
from planner.cautions import SHORT_CAUTION as CAUTION
from planner.reports.altitude_chart import night_chart, save_night_chart
from planner.reports.hours_chart import observability_chart, save_observability_chart
from planner.sky.night_summary import night_curves, run_of_nights

FIVE = ["M 13", "47 Tuc", "omega Cen", "M22", "NGC6752"]
FIFTEEN = FIVE + ["NGC 362", "NGC 1851", "NGC 2808", "M 4", "M 80", "NGC 6397", "M 55", "M 15", "M 2", "NGC 288"]
TROMSO_LIKE = ("69.6,18.9,100", "Europe/Oslo")  # a site north of the Arctic Circle
CASES = {
    "normal": ("demo", None, dt.date(2026, 12, 2), FIVE),
    "polar_night": (*TROMSO_LIKE, dt.date(2026, 12, 20), ["M 13", "M 92", "M 15", "47 Tuc"]),
    "midnight_sun": (*TROMSO_LIKE, dt.date(2026, 6, 20), ["M 13", "M 92", "M 15"]),
    # America/Santiago leaves daylight saving in the night of 3-4 April 2027 (tzdata).
    "dst": ("demo", None, dt.date(2027, 4, 3), FIFTEEN),
}


@pytest.fixture(scope="module")
def catalog():
    configure_runtime()
    return load_catalog()


def build_run(catalog, site_spec, zone, nights, names):
    site = resolve_site(site_spec, zone)
    return run_of_nights(site, targets_from_names(names, catalog), list(nights), constraints_for_site(site))


@pytest.fixture(scope="module")
def nights_drawn(catalog):
    """Each case's run and chart, built once for the module."""
    out = {}
    for name, (spec, zone, night, names) in CASES.items():
        run = build_run(catalog, spec, zone, [night], names)
        curves = night_curves(run)
        out[name] = (run, curves, night_chart(run, curves))
    return out


@pytest.fixture(scope="module")
def season(catalog):
    """Twenty-two clusters over 75 nights at the demo site (two lunations and a half)."""
    names = FIFTEEN + ["M 10", "M 30", "M 69", "M 70", "NGC 6541", "M 62", "M 9"]
    nights = [dt.date(2026, 4, 20) + dt.timedelta(days=k) for k in range(75)]
    run = build_run(catalog, "demo", None, nights, names)
    return run, observability_chart(run)


def skyfield_tools():
    from skyfield.api import Loader
    from skyfield_data import get_skyfield_data_path

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # skyfield-data's note that its Earth-orientation file is old
        load = Loader(get_skyfield_data_path())
    return load.timescale(builtin=True), load("de421.bsp")


def skyfield_twilight_edges(site, start, end):
    """(UTC datetime, state after) of each change in skyfield's dark/twilight/day state."""
    from skyfield import almanac
    from skyfield.api import wgs84

    ts, eph = skyfield_tools()
    loc = site.location
    f = almanac.dark_twilight_day(eph, wgs84.latlon(loc.latitude_deg, loc.longitude_deg, elevation_m=loc.elevation_m))
    t, state = almanac.find_discrete(ts.from_datetime(start), ts.from_datetime(end), f)
    return [(ti.utc_datetime(), int(s)) for ti, s in zip(t, state)], int(f(ts.from_datetime(start)))


def to_second(moment: dt.datetime) -> dt.datetime:
    """Rounded to the second: a float64 JD near 2.46e6 holds time to about 40 µs."""
    return (moment + dt.timedelta(microseconds=500_000)).replace(microsecond=0)


def main_axes(fig):
    return fig.axes[0]


def sky_spans(fig):
    """{level: (start, end) as UTC datetimes} of the shaded spans, read from the artists."""
    from matplotlib import dates as mdates

    out = {}
    for patch in main_axes(fig).patches:
        gid = patch.get_gid() or ""
        if gid.startswith("sky:"):
            x0, x1 = patch.get_x(), patch.get_x() + patch.get_width()
            out[gid[4:]] = (mdates.num2date(x0), mdates.num2date(x1))
    return out


# --- figures build and save ----------------------------------------------------


@pytest.mark.parametrize("case", list(CASES))
def test_night_chart_saves_png_and_pdf(case, nights_drawn, tmp_path):
    from matplotlib import image

    run, curves, _ = nights_drawn[case]
    png = save_night_chart(run, curves, tmp_path / "night.png")
    pdf = save_night_chart(run, curves, tmp_path / "night.PDF")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert pdf.read_bytes()[:5] == b"%PDF-"
    height, width = image.imread(png).shape[:2]
    assert width / height == pytest.approx(297 / 210, rel=0.01)  # A4 landscape, ISO 216


@pytest.mark.parametrize("case", list(CASES))
def test_night_chart_carries_title_limit_and_caution(case, nights_drawn):
    run, _, fig = nights_drawn[case]
    text = all_text(fig)
    assert CAUTION in text
    assert run.site.location.name in text
    assert f"{run.almanac.nights[0]:%B %Y}" in text
    assert f"{run.constraints.altitude_limit_deg:.1f}°" in text
    moon = f"Moon, {run.almanac.moon_illumination[0] * 100:.0f}% illuminated"
    assert moon in text
    if run.constraints.horizon_az_deg:  # the demo site has one: a note, not a line
        assert "horizon mask depends on azimuth" in text
    ax = main_axes(fig)
    assert ax.get_ylim() == (0.0, 90.0)
    limit_lines = [ln for ln in ax.lines if np.allclose(ln.get_ydata(), run.constraints.altitude_limit_deg)]
    assert len(limit_lines) == 1


def test_midnight_sun_chart_says_there_is_no_darkness(nights_drawn):
    run, _, fig = nights_drawn["midnight_sun"]
    text = all_text(fig)
    assert "midnight sun" in text and "no astronomical darkness tonight" in text
    assert set(sky_spans(fig)) == {"day"}
    assert not any((ln.get_gid() or "").startswith("window:") for ln in main_axes(fig).lines)


# --- the shaded sky against the almanac and skyfield --------------------------------

LEVEL_OF_STATE = {3: "sunset", 2: "civil", 1: "nautical", 0: "astronomical"}  # below which the Sun is


@pytest.mark.parametrize("case", ["normal", "polar_night", "dst", "midnight_sun"])
def test_sky_shading_edges_are_the_twilight_times(case, nights_drawn):
    from planner.sky.nights import jd_to_datetime

    run, curves, fig = nights_drawn[case]
    spans = sky_spans(fig)
    start, end = jd_to_datetime(curves.start_jd), jd_to_datetime(curves.end_jd)
    # The project's almanac, to the second.
    alm = run.almanac
    for level, evening, morning in [("sunset", alm.sunset_jd, alm.sunrise_jd)] + [
        (name, alm.evening_jd[name], alm.morning_jd[name]) for name in ("civil", "nautical", "astronomical")
    ]:
        for jd, side in ((evening[0], 0), (morning[0], 1)):
            if np.isfinite(jd) and curves.start_jd < jd < curves.end_jd:
                edge = spans[level][side]
                assert abs((edge - jd_to_datetime(jd)).total_seconds()) < 1.0, (level, side)
    # skyfield (DE421): each change of state inside the plotted time is an edge
    # of the matching span.  Tolerance 60 s: skyfield's Sun is apparent
    # (aberration, ~20″), the almanac's geometric, and the almanac is held to
    # astroplan within a minute (tests/test_almanac.py).
    changes, state0 = skyfield_twilight_edges(run.site, start, end)
    darkest = min([state0] + [state for _, state in changes])
    assert set(spans) == {"day"} | {LEVEL_OF_STATE[s] for s in range(darkest, 4)}
    edges = [e for level, pair in spans.items() if level != "day" for e in pair]
    for when, _ in changes:
        assert min(abs((e - when).total_seconds()) for e in edges) < 60.0, when


def test_polar_night_has_no_daylight(nights_drawn):
    """At 69.6° N on 20 December the Sun stays below the horizon: the horizon span fills the chart."""
    from planner.sky.nights import jd_to_datetime

    run, curves, fig = nights_drawn["polar_night"]
    start, end = jd_to_datetime(curves.start_jd), jd_to_datetime(curves.end_jd)
    changes, state0 = skyfield_twilight_edges(run.site, start, end)
    assert state0 < 4 and all(state < 4 for _, state in changes)  # skyfield: never day
    s, e = sky_spans(fig)["sunset"]
    assert s == sky_spans(fig)["day"][0] and e == sky_spans(fig)["day"][1]
    assert "polar night" in all_text(fig)


# --- clocks ------------------------------------------------------------------------


@pytest.mark.parametrize("case", ["normal", "dst", "polar_night"])
def test_clock_labels_read_as_zoneinfo_says(case, nights_drawn):
    from matplotlib import dates as mdates

    run, _, fig = nights_drawn[case]
    fig.canvas.draw()
    ax = main_axes(fig)
    zone = ZoneInfo(run.site.location.timezone)
    ticks = [(t.get_loc(), t.label1.get_text()) for t in ax.xaxis.get_major_ticks() if t.label1.get_text()]
    assert len(ticks) >= 8
    for x, label in ticks:
        assert label == f"{to_second(mdates.num2date(x)).astimezone(zone):%H:%M}"
        assert to_second(mdates.num2date(x)).astimezone(zone).minute == 0
    top = [a for a in fig.axes[0].child_axes if a.get_xlabel() == "UTC"][0]
    for t in top.xaxis.get_major_ticks():
        if t.label1.get_text():
            assert t.label1.get_text() == f"{to_second(mdates.num2date(t.get_loc())):%H:%M}"


def test_dst_night_shows_the_clock_change(nights_drawn):
    from matplotlib import dates as mdates

    run, curves, fig = nights_drawn["dst"]
    zone = ZoneInfo("America/Santiago")
    ax = main_axes(fig)
    start, end = (mdates.num2date(x) for x in ax.get_xlim())
    before, after = start.astimezone(zone).utcoffset(), end.astimezone(zone).utcoffset()
    assert after - before == dt.timedelta(hours=-1)  # zoneinfo: the clocks go back in this night
    labels = [t.get_text() for t in ax.get_xticklabels()]
    repeated = [lab for lab in set(labels) if labels.count(lab) == 2]
    assert repeated == ["23:00"]  # the hour that happens twice
    assert "clocks go back 1 h" in all_text(fig)
    assert "UTC−03:00 → UTC−04:00" in ax.get_xlabel()


# --- curves, windows, airmass ---------------------------------------------------------


def test_curves_are_the_altitudes_at_their_drawn_times(nights_drawn):
    """Altitude of 47 Tuc read off the chart vs skyfield at the same instants (no refraction)."""
    from matplotlib import dates as mdates
    from skyfield.api import Star, wgs84

    run, _, fig = nights_drawn["normal"]
    (line,) = [ln for ln in main_axes(fig).lines if ln.get_gid() == "target:47 Tuc"]
    x, y = line.get_xdata(), line.get_ydata()
    ts, eph = skyfield_tools()
    target = [t for t in run.targets if t.name == "47 Tuc"][0]
    loc = run.site.location
    observer = eph["earth"] + wgs84.latlon(loc.latitude_deg, loc.longitude_deg, elevation_m=loc.elevation_m)
    star = Star(ra_hours=target.ra_deg / 15.0, dec_degrees=target.dec_deg)
    pick = np.linspace(0, len(x) - 1, 7).astype(int)
    t = ts.from_datetimes([mdates.num2date(x[k]) for k in pick])
    alt, _, _ = observer.at(t).observe(star).apparent().altaz()
    # 0.02°: a second of time is 0.004° here; the rest is the models' agreement.
    np.testing.assert_allclose(y[pick], alt.degrees, atol=0.02)


@pytest.mark.parametrize("case", ["normal", "dst", "polar_night"])
def test_windows_are_drawn_over_their_curves(case, nights_drawn):
    from matplotlib import dates as mdates

    from planner.sky.nights import jd_to_datetime

    run, _, fig = nights_drawn[case]
    vis = run.visibility
    windows = {ln.get_gid()[7:]: ln for ln in main_axes(fig).lines if (ln.get_gid() or "").startswith("window:")}
    observable = {t.name for k, t in enumerate(run.targets) if vis.observable_hours[k, 0] > 0}
    assert set(windows) == observable and observable
    for k, t in enumerate(run.targets):
        if t.name in windows:
            xs = windows[t.name].get_xdata()
            for x, jd in ((xs[0], vis.window_start_jd[k, 0]), (xs[-1], vis.window_end_jd[k, 0])):
                assert abs((mdates.num2date(x) - jd_to_datetime(jd)).total_seconds()) < 1.0


def test_airmass_scale_is_kasten_young(nights_drawn):
    _, _, fig = nights_drawn["normal"]
    fig.canvas.draw()
    right = [a for a in main_axes(fig).child_axes if "airmass" in a.get_ylabel()][0]
    ticks = [(t.get_loc(), float(t.label2.get_text())) for t in right.yaxis.get_major_ticks()]
    assert [x for _, x in ticks] == [1.0, 1.2, 1.5, 2.0, 3.0]

    def kasten_young(h_deg):  # Kasten & Young 1989, eq. 3
        return 1.0 / (np.sin(np.radians(h_deg)) + 0.50572 * (h_deg + 6.07995) ** -1.6364)

    assert kasten_young(30.0) == pytest.approx(1.9943, abs=1e-4)  # the paper's check value
    for alt, x in ticks:
        assert kasten_young(alt) == pytest.approx(x, abs=1e-6)


def test_many_targets_get_distinct_styles_and_labels_do_not_overlap(nights_drawn):
    run, _, fig = nights_drawn["dst"]
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    ax = main_axes(fig)
    curves = [ln for ln in ax.lines if (ln.get_gid() or "").startswith("target:")]
    assert len(curves) == len(run.targets) == 15
    styles = {(ln.get_color(), ln.get_linestyle()) for ln in curves}
    assert len(styles) == 15
    labels = [t for t in ax.texts if (t.get_gid() or "").startswith("label:")]
    assert len(labels) >= 8
    boxes = [t.get_window_extent(renderer) for t in labels]
    frame = ax.get_window_extent(renderer)
    for a, b in itertools.combinations(boxes, 2):
        assert not a.overlaps(b)
    for box in boxes:
        assert frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1


def test_figure_passed_in_is_used(nights_drawn):
    from matplotlib.figure import Figure

    run, curves, _ = nights_drawn["normal"]
    fig = Figure(figsize=(10, 7))
    assert night_chart(run, curves, fig=fig) is fig and fig.axes


# --- the observability chart --------------------------------------------------------


def heat_rows(fig):
    """{target name: row of hours} from the heat map's mesh and its row labels."""
    heat = [ax for ax in fig.axes if any(c.get_gid() == "observable_hours" for c in ax.collections)][0]
    mesh = [c for c in heat.collections if c.get_gid() == "observable_hours"][0]
    names = [t.get_text() for t in heat.get_yticklabels()]
    data = np.ma.filled(mesh.get_array(), np.nan).reshape(len(names), -1)
    return dict(zip(names, data)), heat


def test_observability_data_is_the_observable_hours(season):
    run, fig = season
    rows, _ = heat_rows(fig)
    assert len(rows) == len(run.targets) == 22
    for k, t in enumerate(run.targets):
        np.testing.assert_array_equal(rows[t.name], run.visibility.observable_hours[k])
    moon = [c for ax in fig.axes for c in ax.collections if c.get_gid() == "moon"][0]
    np.testing.assert_array_equal(np.ma.filled(moon.get_array(), np.nan).ravel(), run.almanac.moon_illumination)


def test_observability_rows_go_by_best_night(season):
    from planner.sky.night_summary import seasons

    run, fig = season
    rows, _ = heat_rows(fig)
    best = {s.name: s.best_night for s in seasons(run)}
    order = [best[name] or dt.date.max for name in rows]
    assert order == sorted(order)


def test_observability_axis_has_month_ticks_and_caution(catalog, tmp_path):
    from matplotlib import dates as mdates

    nights = [dt.date(2026, 1, 1) + dt.timedelta(days=k) for k in range(120)]
    run = build_run(catalog, "demo", None, nights, FIVE)
    fig = observability_chart(run)
    _, heat = heat_rows(fig)
    days = [mdates.num2date(x).date() for x in heat.get_xticks()]
    assert days == [dt.date(2026, m, 1) for m in range(1, 6)]
    assert CAUTION in all_text(fig)
    png = save_observability_chart(run, tmp_path / "season.png")
    pdf = save_observability_chart(run, tmp_path / "season.pdf")
    assert png.read_bytes()[:4] == b"\x89PNG" and pdf.read_bytes()[:5] == b"%PDF-"


def test_observability_with_gaps_and_polar_nights(catalog, tmp_path):
    """Nights not in the run stay empty; a run across the midnight-sun season draws all the same."""
    nights = [dt.date(2026, 5, 1) + dt.timedelta(days=k) for k in (0, 1, 5, 30, 60, 61)]
    run = build_run(catalog, *TROMSO_LIKE, nights, ["M 13", "M 92"])
    fig = observability_chart(run)
    rows, _ = heat_rows(fig)
    assert rows["M 13"].shape == (62,)
    present = np.array([(n - nights[0]).days for n in nights])
    np.testing.assert_array_equal(rows["M 13"][present], run.visibility.observable_hours[0])
    assert np.isnan(np.delete(rows["M 13"], present)).all()
    assert (run.visibility.observable_hours[:, -2:] == 0).all()  # late June/July: no darkness at 69.6° N
    save_observability_chart(run, tmp_path / "polar.png")


# --- rules ------------------------------------------------------------------------------


def test_no_global_matplotlib_state(nights_drawn, season):
    import matplotlib

    before = dict(matplotlib.rcParams)
    had_pyplot = "matplotlib.pyplot" in sys.modules
    run, curves, _ = nights_drawn["normal"]
    night_chart(run, curves)
    observability_chart(season[0])
    assert dict(matplotlib.rcParams) == before
    assert had_pyplot or "matplotlib.pyplot" not in sys.modules


def test_bad_suffix_is_an_input_error(nights_drawn, tmp_path):
    run, curves, _ = nights_drawn["normal"]
    with pytest.raises(InputError, match=r"\.png or \.pdf"):
        save_night_chart(run, curves, tmp_path / "night.svg")
