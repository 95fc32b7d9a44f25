"""The schedule figure: every visit is numbered, and no number covers a target's label.

The densest plan the demo offers (every catalog cluster, one short visit each, on
a long January night at the invented demo site) crowds numbers and labels together;
overlap is judged on the drawn text extents.
"""

from __future__ import annotations

import datetime as dt

import pytest

from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.inputs.targets import catalog_targets
from planner.model.constraints import constraints_for_site
from planner.reports.schedule_plot import schedule_chart
from planner.scheduling.night import plan_night
from planner.scheduling.night_sky import night_sky, requests_for_targets
from planner.scheduling.visits import parse_visit_spec

SITE = resolve_site("demo")


def _texts(ax, kind):
    return [t for t in ax.texts if str(t.get_gid() or "").startswith(kind + ":")]


@pytest.mark.parametrize("night", [dt.date(2027, 1, 10), dt.date(2027, 5, 12)])
def test_visit_numbers_are_clear_of_the_target_labels(night):
    c = constraints_for_site(SITE)
    sky = night_sky(SITE, [night], c)
    requests = requests_for_targets(catalog_targets(load_catalog()), parse_visit_spec("filter=V,frames=2,exposure=300", SITE))
    plan = plan_night(SITE, c, requests, night, float(sky.window_start_jd[0]), float(sky.window_end_jd[0]),
                      sky.ephemeris)
    assert len(plan.visits) > 20  # crowded enough to test anything
    ax = schedule_chart(SITE, plan).axes[0]
    renderer = ax.figure.canvas.get_renderer()
    labels = [t.get_window_extent(renderer) for t in _texts(ax, "label")]
    numbers = _texts(ax, "number")
    assert labels
    assert sorted(t.get_gid() for t in numbers) == sorted(f"number:{v.id}" for v in plan.visits)
    frame = ax.get_window_extent(renderer)
    for t in numbers:
        box = t.get_window_extent(renderer)
        assert not any(box.overlaps(b) for b in labels), f"visit {t.get_text()} covers a target label"
        assert frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1


def test_spare_time_visits_are_thin_and_unnumbered_on_a_campaign_night():
    """On a full campaign night the goals' visits keep their numbers; spare-time work (the
    ``fill`` visits) is drawn as thin bars without numbers, and the title counts it."""
    from planner.inputs.campaign_file import read_campaign_file
    from planner.inputs.resources import targets_dir
    from planner.scheduling.campaign import is_fill, plan_campaign_night

    campaign = read_campaign_file(targets_dir() / "demo" / "campaign.toml")
    plan, _ = plan_campaign_night(campaign, campaign.nights[0])
    spare = [v for v in plan.visits if is_fill(v)]
    assert spare and len(spare) < len(plan.visits)
    ax = schedule_chart(campaign.site, plan).axes[0]
    numbered = {t.get_gid()[len("number:"):] for t in _texts(ax, "number")}
    assert numbered == {v.id for v in plan.visits if not is_fill(v)}
    bars = {ln.get_gid()[len("visit:"):]: ln for ln in ax.lines if (ln.get_gid() or "").startswith("visit:")}
    assert set(bars) == {v.id for v in plan.visits}
    assert all(bars[v.id].get_linewidth() < 4 for v in spare)
    assert f"({len(spare)} extra" in ax.get_title(loc="left")
