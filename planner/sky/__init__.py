"""The sky and the night: time, Earth rotation, the Sun and Moon, almanac, visibility.

Pure computation (no files but the bundled IERS table read by
:mod:`~planner.sky.earth_rotation`, no printing, no clock, no global state).
May import :mod:`planner.model`, :mod:`planner.errors`, :mod:`planner.cautions`
and, at the astropy boundary, astropy; nothing from the inputs, the logbook or
the shells (commands, reports, tui).

* :mod:`~planner.sky.sidereal`, :mod:`~planner.sky.earth_rotation`, :mod:`~planner.sky.ephemeris`
  — sidereal time, UT1, the Sun and Moon sampled once per span;
* :mod:`~planner.sky.nights`, :mod:`~planner.sky.almanac` — nights by local evening date,
  twilights, moonrise;
* :mod:`~planner.sky.airmass`, :mod:`~planner.sky.visibility`, :mod:`~planner.sky.windows`,
  :mod:`~planner.sky.night_summary` — targets × times, observable windows, seasons.
"""
