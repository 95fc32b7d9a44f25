"""Scheduling: visits, night plans, campaigns and re-planning (issue 5).

* :mod:`~planner.scheduling.visits` — what a visit is and how long it takes.
* :mod:`~planner.scheduling.frame` — the Sun and Moon once per run of nights,
  each night's usable window.
* :mod:`~planner.scheduling.night` — one night's timed plan (dispatch with
  look-ahead, then a gap-filling local search).
* :mod:`~planner.scheduling.campaign` — a campaign over its nights, and the forecast;
  :mod:`~planner.scheduling.campaign_file` reads the TOML (shell side);
  :mod:`~planner.scheduling.plan_io` reads a written plan back (shell side).
* :mod:`~planner.scheduling.replan` — the rest of a night planned again from a moment.
* :mod:`~planner.scheduling.validate` — an independent check of a plan with astropy.
"""
