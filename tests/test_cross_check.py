"""``gcplan night --cross-check``: the night's almanac beside astroplan's.

The reference is astroplan's ``Observer`` (planner/reports/cross_check.py
states the conventions passed to it).  gcplan's almanac is held to astroplan
within a minute in test_almanac.py; here the command's output is checked:
the differences it prints are small and are the differences of the times it
prints, the JSON object keeps its contract, and an event that does not
happen is null on both sides.
"""

from __future__ import annotations

import datetime as dt
import json
import socket

import pytest

from planner.cli import main
from planner.reports.cross_check import EVENTS

EVENT_KEYS = [key for key, _ in EVENTS]


@pytest.fixture(autouse=True)
def _no_network(monkeypatch):
    """astroplan must not download anything (IERS tables included): any connection fails the test."""
    def refuse(*args, **kwargs):
        raise AssertionError(f"network access attempted: {args!r}")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)


def night_json(capsys, *argv):
    code = main(["night", *argv, "--cross-check", "--json"])
    out, err = capsys.readouterr()
    assert code == 0, err
    return json.loads(out)


def _jd_s(iso):
    return dt.datetime.fromisoformat(iso.replace("Z", "+00:00")).timestamp()


def test_demo_night_agrees_with_astroplan_within_a_minute(capsys):
    data = night_json(capsys, "--site", "demo", "--target", "47 Tuc", "--date", "2027-01-10")
    check = data["cross_check"]
    assert list(check["events"]) == EVENT_KEYS
    assert set(check) >= {"events", "moon_illumination", "max_abs_difference_s", "found_by_one_only", "reference"}
    # gcplan's side is exactly what the rest of the JSON says
    assert check["events"]["sunset"]["gcplan"] == data["sun"]["set"]
    assert check["events"]["sunrise"]["gcplan"] == data["sun"]["rise"]
    assert check["events"]["moonrise"]["gcplan"] == data["moon"]["rise"]
    for name in ("civil", "nautical", "astronomical"):
        assert check["events"][f"{name}_evening"]["gcplan"] == data["twilight"][name]["evening"]
        assert check["events"][f"{name}_morning"]["gcplan"] == data["twilight"][name]["morning"]
    diffs = []
    for key, event in check["events"].items():
        assert event["gcplan"] and event["astroplan"], key  # every event happens on this night
        # the difference is that of the two times (to the second they are printed to)
        assert abs(event["difference_s"] - (_jd_s(event["gcplan"]) - _jd_s(event["astroplan"]))) <= 1.0, key
        assert abs(event["difference_s"]) < 60.0, key
        diffs.append(abs(event["difference_s"]))
    assert check["max_abs_difference_s"] == pytest.approx(max(diffs))
    assert check["found_by_one_only"] == []
    lit = check["moon_illumination"]
    assert lit["gcplan"] == pytest.approx(data["moon"]["illumination"], abs=1e-4)
    assert abs(lit["difference"]) < 2e-4  # as test_almanac's bound on the same quantity


def test_events_that_do_not_happen_are_null_on_both_sides(capsys):
    # 64.1° N at midsummer: the Sun sets, but neither nautical nor astronomical
    # twilight ever ends (the Sun stays above −12°).
    data = night_json(capsys, "--site", "64.1,-21.9,50", "--timezone", "Atlantic/Reykjavik",
                      "--target", "NGC 6205", "--date", "2027-06-21")
    events = data["cross_check"]["events"]
    for key in ("nautical_evening", "nautical_morning", "astronomical_evening", "astronomical_morning"):
        assert events[key] == {"gcplan": None, "astroplan": None, "difference_s": None}, key
    assert events["sunset"]["gcplan"] and events["sunset"]["astroplan"]
    assert abs(events["sunset"]["difference_s"]) < 60.0
    assert data["cross_check"]["max_abs_difference_s"] is not None


def test_text_table_shows_both_times_and_the_difference(capsys):
    code = main(["night", "--site", "demo", "--target", "47 Tuc", "--date", "2027-01-10", "--cross-check"])
    out, _ = capsys.readouterr()
    assert code == 0
    table = out[out.index("Cross-check with astroplan"):]
    rows = [line for line in table.splitlines() if line.strip().startswith(("sunset", "sunrise", "moonrise"))]
    assert len(rows) == 3
    for row in rows:
        *_, ours, theirs, diff = row.split()
        assert len(ours) == len(theirs) == 8 and abs(float(diff)) < 60.0
    assert "largest difference" in table
    # without the option, no astroplan table
    main(["night", "--site", "demo", "--target", "47 Tuc", "--date", "2027-01-10"])
    assert "astroplan" not in capsys.readouterr().out
