"""Bounded memory at scale: the windows computed in blocks, the fine grid's sparse margins,
and the observability JSON written piece by piece.

What each is checked against (common practice, no source): the blocked computation against
itself with other block sizes; the fine grid's verdict-then-margin kernel against the plain
one (every constraint's margin in degrees at every sample, then
:func:`~planner.sky.windows.integrate_margin`); the streamed JSON against the text of the
whole document encoded at once (the writer every other command uses); the working memory
against the size of the results, at two sizes.  Accuracy against
astropy is held by tests/test_windows.py and tests/test_visibility.py.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import io
import json

import numpy as np
import pytest

from planner.inputs.sites import resolve_site
from planner.model.constraints import constraints_for_site

FIRST_NIGHT = dt.date(2027, 4, 1)


def _nights(n):
    return [FIRST_NIGHT + dt.timedelta(days=i) for i in range(n)]


@pytest.fixture(scope="module")
def catalog_targets():
    from planner.inputs.catalog import load_catalog
    from planner.inputs.targets import catalog_targets as every

    return every(load_catalog())


def _random_targets(template, n, seed):
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))
    return [dataclasses.replace(template, name=f"random {i}", ra_deg=float(a), dec_deg=float(d))
            for i, (a, d) in enumerate(zip(ra, dec))]


# A mask higher than the altitude limit (so it bites), a large sun avoidance and an
# upper limit: every branch of the kernels.
def _all_constraints(site):
    return dataclasses.replace(
        constraints_for_site(site),
        horizon_az_deg=(0.0, 90.0, 180.0, 270.0),
        horizon_alt_deg=(40.0, 10.0, 30.0, 20.0),
        sun_avoidance_deg=60.0,
        max_altitude_deg=82.0,
    )


def test_windows_do_not_depend_on_the_block_size(catalog_targets, monkeypatch):
    import planner.sky.windows as windows
    from planner.sky.night_summary import run_of_nights

    site = resolve_site("demo")
    targets = _random_targets(catalog_targets[0], 60, seed=5)
    c = _all_constraints(site)
    nights = _nights(12)
    whole = run_of_nights(site, targets, nights, c).visibility
    monkeypatch.setattr(windows, "CHUNK_ELEMENTS", 700)  # a few targets, a few rows at a time
    small = run_of_nights(site, targets, nights, c).visibility
    for field in dataclasses.fields(whole):
        np.testing.assert_array_equal(getattr(small, field.name), getattr(whole, field.name), err_msg=field.name)


@pytest.mark.parametrize("twilight", ["astronomical", "civil"])
def test_fine_grid_kernel_is_the_plain_margin_integral(catalog_targets, twilight):
    from planner.sky.almanac import almanac_for_nights
    from planner.sky.ephemeris import build_ephemeris, site_geometry
    from planner.sky.nights import night_spans_jd
    from planner.sky.visibility import constraint_margin_deg, sky_at, time_track
    from planner.sky.windows import _FineGrid, integrate_margin

    site = resolve_site("demo")
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    c = dataclasses.replace(_all_constraints(site), twilight=twilight, max_altitude_deg=None)
    nights = _nights(8)  # a Moon from first quarter to full: it rises, sets and bites
    start, end = night_spans_jd(nights, loc.timezone)
    eph = build_ephemeris(float(start.min()), float(end.max()))
    s, e = almanac_for_nights(site, nights, eph).dark_window_jd(twilight)
    grid_jd = s[:, None] + (e - s)[:, None] * np.linspace(0.0, 1.0, 121)[None, :]
    track = time_track(eph, geo, grid_jd)
    kernel = _FineGrid(track, loc.latitude_deg, c)
    rng = np.random.default_rng(11)
    ra = rng.uniform(0.0, 360.0, 400)
    dec = rng.uniform(-90.0, 40.0, 400)
    crossings = 0
    for u in range(len(nights)):
        got = kernel.night(u, ra, dec)
        row = track.rows(np.full(len(ra), u))
        margin = constraint_margin_deg(sky_at(row, loc.latitude_deg, ra[:, None], dec[:, None]), c)
        want = integrate_margin(margin, row.jd_utc)
        for g, w in zip(got, want):
            np.testing.assert_allclose(g, w, rtol=0, atol=1e-12)
        crossings += int(np.sum(np.diff(margin >= 0, axis=1)))
    assert crossings > 1000  # the comparison covered many edges


def _run_and_summary(targets, n_nights):
    from planner.sky.night_summary import run_of_nights, seasons

    site = resolve_site("demo")
    run = run_of_nights(site, targets, _nights(n_nights), constraints_for_site(site))
    return run, seasons(run)


def _streamed(run, summary, monkeypatch):
    from planner.commands import common
    from planner.reports.observability_report import observability_json, observability_json_pieces

    out = io.StringIO()
    monkeypatch.setattr("sys.stdout", out)
    common.print_json_pieces(observability_json_pieces(run, summary, common.compact_json),
                             lambda: observability_json(run, summary))
    return out.getvalue()


def _at_once(run, summary):
    from planner.commands import common
    from planner.reports.observability_report import observability_json

    return common.json_text(observability_json(run, summary), common._INDENT_LIMIT_CHARS) + "\n"


@pytest.mark.parametrize("n_targets, n_nights, indented", [(3, 4, True), (157, 40, False)])
def test_streamed_json_is_the_same_text(catalog_targets, monkeypatch, n_targets, n_nights, indented):
    run, summary = _run_and_summary(catalog_targets[:n_targets], n_nights)
    text = _streamed(run, summary, monkeypatch)
    assert text == _at_once(run, summary)
    assert text.startswith('{\n  "site"') == indented
    assert json.loads(text)["targets"][-1]["name"] == catalog_targets[n_targets - 1].name


def test_streamed_json_writes_null_for_missing_hours(catalog_targets, monkeypatch):
    run, summary = _run_and_summary(catalog_targets[:157], 40)
    hours = run.visibility.observable_hours.copy()
    hours[3, 5] = np.nan
    hours[7, :] = np.inf
    run = dataclasses.replace(run, visibility=dataclasses.replace(run.visibility, observable_hours=hours))
    text = _streamed(run, summary, monkeypatch)
    assert text == _at_once(run, summary)
    assert json.loads(text)["targets"][3]["nights"][5]["observable_hours"] is None


def test_hours_text_is_what_the_encoder_writes_of_the_rounded_value():
    from planner.reports.observability_report import _hours_text

    rng = np.random.default_rng(3)
    thousandths = np.arange(0, 24001) / 1000.0
    halves = (np.arange(0, 24000) + 0.5) / 1000.0  # ties (as near as floats get)
    tricky = np.concatenate([
        thousandths, halves, np.nextafter(halves, 0.0), np.nextafter(halves, 30.0),
        rng.uniform(0.0, 24.0, 20000), rng.uniform(0.0, 0.002, 2000),
        [0.0, -0.0, -1e-17, -0.0004, 1e-300, 23.9996, 24.0, 24.0004, 24.0006, 30.0, 1e6,
         np.nan, np.inf, -np.inf],
    ])
    want = [json.dumps(round(float(h), 3)) if np.isfinite(h) else "null" for h in tricky]
    assert _hours_text(tricky) == want


def test_working_memory_does_not_grow_with_targets_x_nights(catalog_targets):
    """Peak traced memory of the windows beyond their results (numpy reports its
    buffers to tracemalloc): about the same for 1,000 and for 8,000 targets."""
    import tracemalloc

    from planner.sky.almanac import almanac_for_nights
    from planner.sky.ephemeris import build_ephemeris, site_geometry
    from planner.sky.nights import night_spans_jd
    from planner.sky.visibility import apparent_places
    from planner.sky.windows import CHUNK_ELEMENTS, visibility_for_nights

    site = resolve_site("demo")
    loc = site.location
    geo = site_geometry(loc.latitude_deg, loc.longitude_deg, loc.elevation_m)
    nights = _nights(40)
    start, end = night_spans_jd(nights, loc.timezone)
    jd0, jd1 = float(start.min()), float(end.max())
    eph = build_ephemeris(jd0, jd1)
    almanac = almanac_for_nights(site, nights, eph)
    c = constraints_for_site(site)
    excess = {}
    for n in (1000, 8000):
        targets = _random_targets(catalog_targets[0], n, seed=n)
        places = apparent_places([t.ra_deg for t in targets], [t.dec_deg for t in targets], jd0, jd1)
        tracemalloc.start()
        vis = visibility_for_nights(eph, geo, places, almanac, c)
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        results = sum(a.nbytes for a in vars(vis).values() if isinstance(a, np.ndarray))
        excess[n] = peak - results
    # The blocks' working arrays (a few dozen of CHUNK_ELEMENTS float64) and one byte
    # per target-night (which need the fine grid).  Without blocks the excess grows
    # from about 20 to 160 MB here (the hourly Moon samples of every target-night).
    assert excess[8000] < excess[1000] + 8 * 7000 * 40 + 4e6
    assert excess[8000] < 40 * CHUNK_ELEMENTS * 8
