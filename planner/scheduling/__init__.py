"""Scheduling: visits, night plans, campaigns and re-planning.

Pure computation over the sky and light cores.  May import :mod:`planner.model`,
:mod:`planner.sky`, :mod:`planner.light`, :mod:`planner.variables`,
:mod:`planner.errors` and :mod:`planner.cautions`; never the inputs, the logbook
or the shells.

* :mod:`~planner.scheduling.visits` — what a visit is and how long it takes.
* :mod:`~planner.scheduling.night_sky` — the Sun and Moon once per run of nights,
  each night's usable window.
* :mod:`~planner.scheduling.night` — one night's timed plan (dispatch with
  look-ahead, then a gap-filling local search), made of
  :mod:`~planner.scheduling.slot_table` (the constraints on the night's slots),
  :mod:`~planner.scheduling.dispatch` (the search),
  :mod:`~planner.scheduling.polish` (the places given out again) and
  :mod:`~planner.scheduling.night_plan` (the plan's data classes).
* :mod:`~planner.scheduling.campaign` — a campaign over its nights, and the forecast;
  :mod:`~planner.scheduling.plan_cache` — its nights kept for re-use (the cache is passed in).
* :mod:`~planner.scheduling.replan` — the rest of a night planned again from a moment.
"""
